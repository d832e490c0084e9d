"""The command line: contract JSON keys, exit status 2 for user mistakes, README example."""

from __future__ import annotations

import json
import re
import subprocess
import sys
from pathlib import Path

import pytest

from supplydesign.cli import main

ROOT = Path(__file__).resolve().parents[1]
EXAMPLES = sorted((ROOT / "examples").glob("*.toml"))


def test_evaluate_json_has_the_contract_keys(tmp_path):
    out = tmp_path / "figs.json"
    assert main(["evaluate", str(EXAMPLES[0]), "--json", str(out), "--quiet"]) == 0
    data = json.loads(out.read_text())
    assert isinstance(data, dict)
    for rail in data["rails"]:
        for key in ("name", "dc_v", "ripple_rms_v", "ripple_pp_v", "regulation_pct"):
            assert key in rail
        assert rail["dc_v"] > 0
    assert {"peak_a", "rms_a"} <= set(data["rectifier"])
    assert "rms_a" in data["transformer"]


def test_evaluate_several_files_writes_an_array_in_order(tmp_path):
    out = tmp_path / "figs.json"
    assert main(["evaluate", *map(str, EXAMPLES), "--json", str(out), "--quiet"]) == 0
    data = json.loads(out.read_text())
    assert isinstance(data, list) and len(data) == len(EXAMPLES)
    from supplydesign.io.designfile import load_design
    from supplydesign.parts.fuses import RATINGS_A

    for obj, path in zip(data, EXAMPLES, strict=True):
        assert [r["name"] for r in obj["rails"]] == [r.name for r in load_design(path).rails]
        # heat, life and fuses (shared/FORMAT.md, "evaluate --json: heat, life, fuses")
        for rail in obj["rails"]:
            cap = rail["capacitor"]
            assert cap["ripple_rms_a"] == rail["capacitor_ripple_rms_a"]
            assert cap["temperature_rise_k"] >= 0 and cap["life_h"] > 0  # the examples give both
        assert obj["fuses"]["ht_a"] in RATINGS_A and obj["fuses"]["mains_a"] in RATINGS_A
        assert obj["fuses"]["surge_checked"] and "local" in obj["fuses"]["caution"]


def test_evaluate_console_shows_heat_life_and_fuses_at_80_columns(capsys, monkeypatch):
    monkeypatch.setenv("COLUMNS", "80")
    assert main(["evaluate", *map(str, EXAMPLES), "--nominal-only"]) == 0
    out = capsys.readouterr().out
    assert max(len(line) for line in out.splitlines()) <= 80
    assert out.count("Capacitors at full signal") == len(EXAMPLES)
    assert out.count("HT fuse: at least") == len(EXAMPLES)  # no switch-on run: rms only
    assert out.count("Mains fuse:") == len(EXAMPLES)
    assert out.count("fuse maker's data") == len(EXAMPLES)
    assert re.search(r"\d[\d ]* h, (>15|\d+\.\d) y", out)  # a life in hours and years


def test_many_designs_get_a_summary_and_their_tables_with_details(capsys, monkeypatch):
    """Past three designs one row each (at 80 columns), every table with --details."""
    monkeypatch.setenv("COLUMNS", "80")
    files = [*map(str, EXAMPLES), str(EXAMPLES[0])]
    assert len(files) > 3
    assert main(["evaluate", *files, "--nominal-only"]) == 0
    out = capsys.readouterr().out
    assert max(len(line) for line in out.splitlines()) <= 80
    assert f"{len(files)} designs" in out and "Part stresses" not in out
    assert out.count(EXAMPLES[0].name) >= 2 and "--details" in out
    assert out.count("lethal") == 1  # the cautions once, after the summary
    assert main(["evaluate", *files, "--nominal-only", "--details"]) == 0
    out = capsys.readouterr().out
    assert out.count("Part stresses") == len(files)


def test_existing_output_is_not_overwritten_without_force(tmp_path, capsys):
    out = tmp_path / "figs.json"
    out.write_text("keep me")
    assert main(["evaluate", str(EXAMPLES[0]), "--json", str(out), "--quiet"]) == 2
    assert out.read_text() == "keep me"
    assert "--force" in capsys.readouterr().err
    assert main(["evaluate", str(EXAMPLES[0]), "--json", str(out), "--quiet", "--force"]) == 0
    assert json.loads(out.read_text())["rails"]


def test_user_mistake_is_one_line_exit_2_without_traceback(tmp_path):
    bad = tmp_path / "bad.toml"
    bad.write_text(EXAMPLES[0].read_text().replace('"100 uF"', '"100 uH"', 1))
    proc = subprocess.run([sys.executable, "-m", "supplydesign", "evaluate", str(bad)],
                          capture_output=True, text=True)
    assert proc.returncode == 2
    lines = proc.stderr.strip().splitlines()
    assert len(lines) == 1 and "Traceback" not in proc.stderr
    assert str(bad) in lines[0] and "capacitance" in lines[0]


def test_readme_example_design_evaluates(tmp_path):
    text = (ROOT / "README.md").read_text()
    block = re.search(r"```toml\n(.*?)```", text, re.S).group(1)
    f = tmp_path / "readme.toml"
    f.write_text(block)
    out = tmp_path / "readme.json"
    assert main(["evaluate", str(f), "--json", str(out), "--quiet"]) == 0
    data = json.loads(out.read_text())
    assert [r["name"] for r in data["rails"]] == ["output stage", "preamp"]


@pytest.mark.parametrize("path", EXAMPLES, ids=[p.stem for p in EXAMPLES])
def test_examples_meet_their_own_targets(path, tmp_path):
    """The shipped examples are designs a builder could start from: in tolerance, hum met."""
    from supplydesign.evaluation.analysis import evaluate
    from supplydesign.io.designfile import load_design

    design = load_design(path)
    fig = evaluate([design])[0]
    assert fig.converged
    for rail, r in zip(design.rails, fig.rails, strict=True):
        if rail.voltage_v is not None:
            assert abs(r.dc_v - rail.voltage_v) <= rail.tolerance * rail.voltage_v, rail.name
        if rail.hum_v is not None:
            assert r.ripple_rms_v <= rail.hum_v, rail.name


def test_output_files_get_the_usual_permissions(tmp_path):
    import os

    out = tmp_path / "figs.json"
    assert main(["evaluate", str(EXAMPLES[0]), "--json", str(out), "--quiet",
                 "--nominal-only"]) == 0
    umask = os.umask(0)
    os.umask(umask)
    assert (out.stat().st_mode & 0o777) == (0o666 & ~umask)


def test_json_says_why_a_design_has_no_working_steady_state(tmp_path):
    """A design whose reservoir cannot carry its stages (invented: 1.6 µF behind a
    half-wave valve for 35 mA) is flagged in the JSON's solver object, with the rail;
    evaluate still writes its figures and exits 1, as for any unsettled design."""
    from supplydesign.design import Capacitor, Design, Link, Mains, Rail, Rectifier, Transformer
    from supplydesign.io.tomlwrite import save_design

    design = tmp_path / "weak.toml"
    save_design(Design(
        "too small a reservoir (invented)", Mains(60.0),
        Transformer("single", open_circuit_v=116.0, resistance_ohm=6.6),
        Rectifier(kind="valve", arrangement="half-wave", drop_v=50.0, drop_current_a=0.06),
        (Rail("first", None, Link("wire"), Capacitor(1.6e-6, esr_ohm=0.5), current_a=0.025),
         Rail("second", "first", Link("choke", resistance_ohm=180.0, inductance_h=10.0),
              Capacitor(980e-6), current_a=0.010))), design)
    out = tmp_path / "weak.json"
    assert main(["evaluate", str(design), "--json", str(out), "--quiet",
                 "--nominal-only"]) == 1
    solver = json.loads(out.read_text())["solver"]
    assert solver["converged"] is False
    assert solver["note"].startswith("the supply cannot carry the stage currents: rail ")
