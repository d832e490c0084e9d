"""Commands ``parts`` (list, filter, check a user catalog) and ``rate`` (write rated designs)."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pytest
from rating_support import ONE_RAIL, PREAMP_RAIL

from supplydesign.cli import main
from supplydesign.io.designfile import load_design
from supplydesign.parts import load_catalog

ROOT = Path(__file__).resolve().parents[1]
EXAMPLE_USER = ROOT / "catalogs" / "example-user"
CATALOG = load_catalog()


def run(*argv: str) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "supplydesign", *argv], capture_output=True,
                          text=True, cwd=ROOT)


def listed(out: str, family: str) -> set[str]:
    """The ids of ``family`` that appear in the output."""
    return {i for i in CATALOG.ids(family) if f" {i} " in out}


# --------------------------------------------------------------------- parts


def test_parts_lists_every_family_with_every_id(capsys):
    assert main(["parts"]) == 0
    out = capsys.readouterr().out
    for family in CATALOG.families:
        assert f"{family}s (" in out
        assert listed(out, family) == set(CATALOG.ids(family)), family
    assert "demo data" in out.lower()


def test_parts_family_filter(capsys):
    assert main(["parts", "--family", "chokes"]) == 0
    out = capsys.readouterr().out
    assert listed(out, "choke") == set(CATALOG.ids("choke"))
    assert not listed(out, "capacitor") and "capacitors (" not in out


def test_parts_kind_filter_implies_rectifiers(capsys):
    assert main(["parts", "--kind", "valve"]) == 0
    out = capsys.readouterr().out
    valves = {i for i in CATALOG.ids("rectifier") if CATALOG.row("rectifier", i)["kind"] == "valve"}
    assert valves and listed(out, "rectifier") == valves
    assert "saturation current" not in out  # columns of silicon parts are left out


def test_parts_value_filter(capsys):
    assert main(["parts", "--value", "47 uF"]) == 0
    out = capsys.readouterr().out
    want = {i for i in CATALOG.ids("capacitor")
            if CATALOG.row("capacitor", i)["capacitance_f"] == 47e-6}
    assert want and listed(out, "capacitor") == want
    assert not listed(out, "choke")


def test_parts_with_a_user_catalog_shows_its_rows(capsys):
    assert main(["parts", "--catalog", str(EXAMPLE_USER), "--family", "capacitors"]) == 0
    out = capsys.readouterr().out
    assert "CAP-82U-475" in out and str(EXAMPLE_USER) in out


def test_parts_check_a_good_catalog_is_one_ok_line():
    proc = run("parts", "--check", str(EXAMPLE_USER))
    assert proc.returncode == 0, proc.stderr
    lines = proc.stdout.strip().splitlines()
    assert len(lines) == 1 and "OK" in lines[0] and "capacitors.csv 2 rows" in lines[0]
    assert "1 replacing built-in parts, 1 new" in lines[0]


def test_parts_check_a_bad_catalog_exits_2_with_file_line_column(tmp_path):
    bad = tmp_path / "mine"
    bad.mkdir()
    (bad / "chokes.csv").write_text(
        "id,description,inductance [H],dcr [ohm],current [mA],price,currency\n"
        "MY-CHK-1,mine,10,150,100,12.00,EUR\n"
        "MY-CHK-2,mine,10 H,150,100,12.00,EUR\n", encoding="utf-8")
    proc = run("parts", "--check", str(bad))
    assert proc.returncode == 2
    lines = proc.stderr.strip().splitlines()
    assert len(lines) == 1 and "Traceback" not in proc.stderr
    assert f"{bad / 'chokes.csv'}:3" in lines[0] and "inductance [H]" in lines[0]


def test_parts_check_a_second_currency_exits_2(tmp_path):
    bad = tmp_path / "usd"
    bad.mkdir()
    (bad / "chokes.csv").write_text(
        "id,description,inductance [H],dcr [ohm],current [mA],price,currency\n"
        "MY-CHK-1,mine,10,150,100,12.00,USD\n", encoding="utf-8")
    assert main(["parts", "--check", str(bad)]) == 2


@pytest.mark.parametrize("argv, key", [
    (["parts", "--family", "valves"], "--family"),
    (["parts", "--family", "chokes", "--kind", "valve"], "--kind"),
    (["parts", "--value", "3 kg"], "--value"),
    (["parts", "--value", "47"], "--value"),
])
def test_parts_option_mistakes_exit_2(argv, key, capsys):
    assert main(argv) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and key in err[0]


# --------------------------------------------------------------------- rate

DESIGN = ONE_RAIL.replace('esr = "1 ohm"', 'esr = "1 ohm", voltage = "450 V"') + PREAMP_RAIL


def test_rate_writes_the_rated_design_with_reasons(tmp_path, capsys):
    src, out = tmp_path / "d.toml", tmp_path / "rated.toml"
    src.write_text(DESIGN, encoding="utf-8")
    assert main(["rate", str(src), "--out", str(out), "--steps", "256"]) == 0
    text = out.read_text(encoding="utf-8")
    assert "# capacitor rating: " in text and "# link rating: " in text
    assert "high mains, no load" in text and "CAUTION" in text
    rated = load_design(out, catalog=CATALOG)
    original = load_design(src)
    for new, old in zip(rated.rails, original.rails, strict=True):
        assert new.capacitor.capacitance_f == old.capacitor.capacitance_f
        assert new.capacitor.voltage_rating_v is not None and new.capacitor.price is not None
    assert rated.rails[1].link.resistance_ohm == 10e3 and rated.rails[1].link.power_w
    assert "Chosen ratings" in capsys.readouterr().out


def test_rate_does_not_overwrite_without_force(tmp_path, capsys):
    src, out = tmp_path / "d.toml", tmp_path / "rated.toml"
    src.write_text(DESIGN, encoding="utf-8")
    out.write_text("keep me")
    assert main(["rate", str(src), "--out", str(out), "--quiet"]) == 2
    assert out.read_text() == "keep me" and "--force" in capsys.readouterr().err
    assert main(["rate", str(src), "--out", str(out), "--quiet", "--force",
                 "--steps", "256"]) == 0
    assert "[[rail]]" in out.read_text()


def test_rate_margin_option(tmp_path):
    src = tmp_path / "d.toml"
    src.write_text(DESIGN, encoding="utf-8")
    assert main(["rate", str(src), "--out", str(tmp_path / "a.toml"), "--quiet",
                 "--margin", "150 %"]) == 2
    assert main(["rate", str(src), "--out", str(tmp_path / "b.toml"), "--quiet",
                 "--margin", "25 %", "--steps", "256"]) == 0
    assert "+25 % margin" in (tmp_path / "b.toml").read_text(encoding="utf-8")


def test_rate_without_an_adequate_part_exits_1_and_says_so(tmp_path):
    src, out = tmp_path / "d.toml", tmp_path / "rated.toml"
    src.write_text(DESIGN.replace('{ kind = "resistor", resistance = "10 kohm" }',
                                  '{ kind = "choke", inductance = "333 H", resistance = "1 ohm" }'),
                   encoding="utf-8")
    proc = run("rate", str(src), "--out", str(out), "--quiet", "--steps", "256")
    assert proc.returncode == 1
    assert "NO ADEQUATE PART" in proc.stderr and "preamp" in proc.stderr
    assert "NO ADEQUATE PART" in out.read_text(encoding="utf-8")
