"""``synth --yield N`` and ``--min-yield``: the yield of the shown designs over many builds
(supplydesign.synth.buildyield). The brief is the invented test brief of report_support."""

from __future__ import annotations

import contextlib
import copy
import csv
import io
import json
from pathlib import Path

import numpy as np
import pytest
from report_support import BRIEF, small_run

from supplydesign.cli import main
from supplydesign.evaluation.spread import build_yields, run_spread, summarise
from supplydesign.parts import load_catalog
from supplydesign.synth.buildyield import YIELD_COLUMNS, add_yields, keep_min_yield, shown

LADDER = Path(__file__).parent / "test_evaluation_spread.py"


@pytest.fixture(scope="module")
def measured():
    result, _ = small_run()
    result = copy.deepcopy(result)  # the session's run stays as it was for other tests
    idx = add_yields(result, load_catalog(), builds=24, seed=5, limit=3)
    return result, idx


def test_the_shown_designs_get_a_yield_and_an_interval(measured):
    result, idx = measured
    picks = {i for i, _ in result.picks.values()}
    assert idx == sorted({0, 1, 2} | picks)  # the console's list: first three and the picks
    for k, c in enumerate(result.designs):
        if k in idx:
            lo, y, hi = (c.columns[n] for n in ("yield_low", "yield", "yield_high"))
            assert 0.0 <= lo <= y <= hi <= 1.0
            assert round(y * 24) == pytest.approx(y * 24)  # a count of the 24 builds
        else:
            assert not set(YIELD_COLUMNS) & set(c.columns)
    assert result.extra["yield"] == {"builds": 24, "seed": 5, "measured": len(idx)}


def test_synthesis_marks_decide_the_shown_set_once_they_exist(measured):
    result, _ = measured
    marked = copy.deepcopy(result)
    for k, c in enumerate(marked.designs):
        c.shown = k in (1, 4)  # as the synthesis will mark its representative set
    assert shown(marked) == [1, 4]


def test_min_yield_keeps_the_designs_that_reach_it_and_picks_again(measured):
    result, idx = measured
    ys = sorted({result.designs[i].columns["yield"] for i in idx})
    least = ys[len(ys) // 2] if len(ys) > 1 else ys[0]
    kept = keep_min_yield(copy.deepcopy(result), least)
    assert kept.designs and all(c.columns["yield"] >= least for c in kept.designs)
    assert len(kept.designs) == sum(result.designs[i].columns["yield"] >= least for i in idx)
    assert all(0 <= i < len(kept.designs) for i, _ in kept.picks.values())
    assert kept.extra["below_min_yield"] == len(result.designs) - len(kept.designs)
    cheapest = min(range(len(kept.designs)), key=lambda k: kept.designs[k].cost)
    assert kept.picks["cheapest"][0] == cheapest


def test_a_yield_no_design_reaches_is_explained(measured):
    result, idx = measured
    best = max(result.designs[i].columns["yield"] for i in idx)
    assert best < 1.0  # the test brief's band cuts through the builds
    none = keep_min_yield(copy.deepcopy(result), 1.0)
    assert none.designs == [] and none.picks == {}
    assert f"the highest is {100 * best:.1f} %" in none.explanation[0]


def test_build_yields_are_the_spread_yields_of_the_same_builds(tmp_path):
    # the same builds as `spread` with the same seed, so the same yield (both at 512 steps)
    import test_evaluation_spread as ladder_test

    from supplydesign.io import load_design

    path = tmp_path / "ladder.toml"
    path.write_text(ladder_test.LADDER + 'voltage = "205 V"\ntolerance = "2 %"\n',
                    encoding="utf-8")
    design = load_design(path)
    (y,) = build_yields([design], builds=40, seed=2)
    s = summarise(run_spread(design, builds=40, seed=2))
    assert (y.passed, y.builds, y.ci) == (s.passed, s.builds, s.yield_ci)
    assert 0 < y.passed < 40  # the band cuts through the builds: the test can tell


def test_cli_synth_yield_writes_columns_console_and_page(tmp_path):
    out = tmp_path / "run"
    buf = io.StringIO()
    with contextlib.redirect_stdout(buf):
        code = main(["synth", str(BRIEF), "--out", str(out), "--population", "12",
                     "--generations", "3", "--seed", "2", "--yield", "16", "--show", "2",
                     "--min-yield", "1%"])
    text = buf.getvalue()
    doc = json.loads((out / "pareto.json").read_text())
    assert code == 0 and doc["designs"]
    assert "Yield over 16 builds of each shown design" in text and "--min-yield 1 %" in text
    assert all(d["yield"] >= 0.01 and d["yield_low"] <= d["yield"] <= d["yield_high"]
               for d in doc["designs"])
    rows = list(csv.DictReader(io.StringIO((out / "pareto.csv").read_text())))
    assert [float(r["yield"]) for r in rows] == pytest.approx([d["yield"] for d in
                                                               doc["designs"]])
    # the yields come after the Pareto table and before the closing cautions
    assert text.index("Pareto set") < text.index("Yield over") < text.rindex("Caution")
    page = (out / "report.html").read_text(encoding="utf-8")
    assert 'id="yield"' in page and "Yield over 16 builds" in page
    assert np.isfinite([d["yield"] for d in doc["designs"]]).all()


@pytest.mark.parametrize("value", ["95", "0 %", "150 %"])
def test_min_yield_takes_a_percentage(value, capsys):
    assert main(["synth", str(BRIEF), "--out", "unused", "--min-yield", value]) == 2
    err = capsys.readouterr().err
    assert "--min-yield" in err and err.count("\n") == 1
