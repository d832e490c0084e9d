"""The picture and report options of evaluate and synth, and the worst-case pictures."""

from __future__ import annotations

import csv
import io
import json
from pathlib import Path

import numpy as np
import pytest
from rating_support import ONE_RAIL, PREAMP_RAIL

from supplydesign.cli import main
from supplydesign.io.designfile import load_design
from supplydesign.report.runfiles import unique_labels

ROOT = Path(__file__).resolve().parents[1]
EXAMPLE = ROOT / "examples" / "pushpull-choke.toml"
BRIEF = ROOT / "tests" / "data" / "briefs" / "small-crc.toml"


@pytest.fixture(scope="module")
def two_rails(tmp_path_factory):
    path = tmp_path_factory.mktemp("design") / "two-rails.toml"
    path.write_text(ONE_RAIL + PREAMP_RAIL)
    return path


def test_evaluate_plots_nominal_only(tmp_path):
    plots = tmp_path / "pics"
    assert main(["evaluate", str(EXAMPLE), "--nominal-only", "--quiet", "--plots",
                 str(plots)]) == 0
    assert sorted(p.name for p in plots.iterdir()) == [
        "pushpull-choke-rectifier.png", "pushpull-choke-ripple.png"]


def test_evaluate_plots_with_the_worst_cases(two_rails, tmp_path):
    plots = tmp_path / "pics"
    assert main(["evaluate", str(two_rails), "--quiet", "--plots", str(plots),
                 "--plot-format", "svg"]) == 0
    names = sorted(p.name for p in plots.iterdir())
    assert names == [f"two-rails-{w}.svg" for w in ("impedance", "rectifier", "ripple",
                                                     "switch-on")]


def test_switch_on_trace_is_the_analysed_run(two_rails):
    from supplydesign.evaluation.worstcase import analyse
    from supplydesign.report.pictures import impedance_curves, switch_on_traces

    design = load_design(two_rails)
    wc = analyse([design])
    trace, = switch_on_traces(wc)
    curves, = impedance_curves(wc)
    sw = wc.switch_on
    assert trace.t_s[-1] == pytest.approx(sw.end_s[0])
    assert np.all(np.diff(trace.t_s) > 0)
    # the same run: its surge, and 90 % of the final DC at the analysis's t90
    # (within 1 %: the analysis refines between recorded steps)
    assert np.nanmax(trace.junction_a) == pytest.approx(sw.surge_a[0], rel=0.01)
    for i, rail in enumerate(design.rails):
        v = np.interp(sw.t90_s[0, i], trace.t_s, trace.rail_v[rail.name])
        assert v == pytest.approx(0.9 * sw.final_v[0, i], rel=0.01)
        assert np.max(trace.rail_v[rail.name]) <= sw.peak_v[0, i] * (1 + 1e-9)
        np.testing.assert_array_equal(curves.z_ohm[rail.name], wc.impedance_ohm[0, i])


def test_synth_writes_report_bom_and_pictures(tmp_path):
    out, plots = tmp_path / "run", tmp_path / "pics"
    assert main(["synth", str(BRIEF), "--out", str(out), "--seed", "3", "--population", "24",
                 "--generations", "8", "--plots", str(plots), "--plot-format", "svg"]) == 0
    doc = json.loads((out / "pareto.json").read_text())
    picked = sorted({p["design"] for p in doc["picks"].values()})
    width = len(doc["designs"][0]["file"]) - len("designs/.toml")
    balanced = doc["picks"]["balanced"]["design"]
    expected = {"pareto.svg"} | {f"design-{k:0{width}d}-{w}.svg" for k in picked
                                 for w in ("ripple", "rectifier")}
    # the balanced pick also gets its worst-case pictures by default
    expected |= {f"design-{balanced:0{width}d}-{w}.svg" for w in ("switch-on", "impedance")}
    assert {p.name for p in plots.iterdir()} == expected
    page = (out / "report.html").read_text(encoding="utf-8")
    assert page.count("<svg") == len(expected)
    rows = list(csv.DictReader(io.StringIO((out / "bom.csv").read_text(encoding="utf-8"))))
    assert {r["design"] for r in rows} == {d["file"] for d in doc["designs"]}


def test_synth_no_report(tmp_path):
    out = tmp_path / "run"
    assert main(["synth", str(BRIEF), "--out", str(out), "--seed", "3", "--population", "16",
                 "--generations", "3", "--no-report"]) == 0
    assert not (out / "report.html").exists() and (out / "bom.csv").exists()


def test_labels_of_files_with_the_same_name():
    assert unique_labels(["a/x.toml", "b/x.toml", "c/y.toml"]) == ["1-x", "2-x", "y"]
