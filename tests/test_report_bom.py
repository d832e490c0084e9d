"""Bill of materials: every part with its quantity, prices that add up, the CSV and the command."""

from __future__ import annotations

import csv
import io
from dataclasses import replace
from pathlib import Path

import pytest
from report_support import small_run

from supplydesign.cli import main
from supplydesign.io.designfile import load_design
from supplydesign.report.bom import COLUMNS, BomFuses, bom_csv, bom_lines, bom_totals

ROOT = Path(__file__).resolve().parents[1]
EXAMPLE = ROOT / "examples" / "pushpull-choke.toml"


def _rows(text: str) -> list[dict]:
    return list(csv.DictReader(io.StringIO(text)))


@pytest.mark.parametrize("kind, arrangement, pieces", [
    ("silicon", "full-wave", 2), ("silicon", "bridge", 4), ("silicon", "half-wave", 1),
    ("valve", "full-wave", 1)])
def test_rectifier_pieces_follow_the_arrangement(kind, arrangement, pieces):
    d = load_design(EXAMPLE)
    rect = replace(d.rectifier, kind=kind, arrangement=arrangement, drop_v=20.0,
                   drop_current_a=0.2, price=0.5, currency="EUR")
    line = next(b for b in bom_lines(replace(d, rectifier=rect)) if b.kind in ("diode", "valve"))
    assert line.quantity == pieces
    assert line.total_price == pytest.approx(0.5 * pieces)


def test_every_rail_part_is_listed_once():
    d = load_design(EXAMPLE)
    lines = bom_lines(d)
    caps = [b for b in lines if b.kind == "capacitor"]
    assert [b.rail for b in caps] == [r.name for r in d.rails if r.capacitor is not None]
    links = [b for b in lines if b.kind in ("resistor", "choke")]
    assert [(b.rail, b.kind) for b in links] == [(r.name, r.link.kind) for r in d.rails
                                                 if r.link.kind != "wire"]
    choke = next(b for b in links if b.kind == "choke")
    assert choke.value == "5 H; 120 ohm DCR" and choke.rating == "100 mA DC"
    assert caps[0].value.startswith("100 uF")
    assert caps[0].rating == "550 V; ripple 1.3 A; 3000 h at 105 degC"


def test_fuses_close_the_list_unpriced():
    d = load_design(EXAMPLE)
    checked = BomFuses(ht_a=0.63, mains_a=1.25, ht_position="in the centre-tap lead",
                       primary_v=230.0, surge_checked=True)
    lines = bom_lines(d, checked)
    f1, f2 = lines[-2:]
    assert (f1.ref, f1.kind, f1.value, f1.rating) == ("F1", "fuse", "1.25 A T", "time-lag (T)")
    assert (f2.ref, f2.value) == ("F2", "630 mA T") and "centre-tap" in f2.description
    assert f1.unit_price is None and f2.unit_price is None
    assert lines[:-2] == bom_lines(d)
    rough = bom_lines(d, replace(checked, surge_checked=False))[-1]
    assert "at least" in rough.rating and "not checked" in rough.rating


def test_unpriced_parts_are_counted_not_priced_as_zero():
    text = bom_csv([("a.toml", load_design(EXAMPLE))])
    rows = _rows(text)
    total = [r for r in rows if r["kind"] == "total"]
    assert len(total) == 1 and total[0]["total price"] == ""
    n = sum(1 for r in rows if r["kind"] != "total")
    assert f"{n} lines without a price" in total[0]["description"]


def test_synthesis_designs_cost_what_the_search_says():
    result, _ = small_run()
    labelled = [(f"{k}.toml", c.design) for k, c in enumerate(result.designs)]
    rows = _rows(bom_csv(labelled))
    assert tuple(rows[0]) == COLUMNS
    for (label, _), c in zip(labelled, result.designs, strict=True):
        parts = [r for r in rows if r["design"] == label and r["kind"] != "total"]
        total = [r for r in rows if r["design"] == label and r["kind"] == "total"]
        priced = [r for r in parts if r["unit price"]]
        # the brief gives the transformer and rectifier without a price; the search
        # prices every part it chooses
        assert {r["kind"] for r in parts if not r["unit price"]} <= {"transformer", "diode"}
        assert {r["kind"] for r in priced} >= {"capacitor"}
        for r in priced:
            assert float(r["total price"]) == pytest.approx(
                float(r["unit price"]) * int(r["quantity"]), abs=0.006)
            assert r["currency"] == result.currency
        assert len(total) == 1
        # the CSV's total against the search's own cost of the design
        assert float(total[0]["total price"]) == pytest.approx(c.cost, abs=0.005)
        assert sum(bom_totals(bom_lines(c.design)).values()) == pytest.approx(c.cost)


def test_bom_command_writes_csv_and_keeps_an_existing_file(tmp_path, capsys):
    out = tmp_path / "bom.csv"
    assert main(["bom", str(EXAMPLE), "--out", str(out)]) == 0
    rows = _rows(out.read_text())
    assert rows and all(r["design"] == EXAMPLE.name for r in rows)
    fuses = {r["ref"]: r for r in rows if r["kind"] == "fuse"}
    assert set(fuses) == {"F1", "F2"} and fuses["F2"]["value"].endswith(" T")
    assert main(["bom", str(EXAMPLE), "--out", str(out)]) == 2
    assert "--force" in capsys.readouterr().err
    assert main(["bom", str(EXAMPLE), "--no-fuses"]) == 0
    bare = _rows(capsys.readouterr().out)
    assert [r for r in bare if r["kind"] != "total"] == [r for r in rows
                                                         if r["kind"] not in ("fuse", "total")]


def test_bom_of_a_brief_is_a_user_error(tmp_path, capsys):
    brief = ROOT / "tests" / "data" / "briefs" / "small-crc.toml"
    assert main(["bom", str(brief)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "small-crc.toml" in err[0]
