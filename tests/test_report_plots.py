"""Pictures: what each one draws is the data it was given, with units, and nothing is solved."""

from __future__ import annotations

import xml.etree.ElementTree as ET
from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest
from report_support import small_run

from supplydesign.report import pareto_plot, pictures, plots


@pytest.fixture(scope="module")
def run():
    return small_run()


def _first_picked(run):
    result, waves = run
    i = min(waves)
    return result.designs[i].design, waves[i]


def test_tile_period_repeats_one_period_end_to_end():
    t = np.linspace(0.0, 0.02, 9)
    y = np.sin(2 * np.pi * 50 * t) + 0.1 * np.arange(9) / 8  # a drift: last != first
    t2, y2 = plots.tile_period(t, y, cycles=3)
    assert len(t2) == len(y2) == 3 * 8 + 1
    assert t2[0] == 0.0 and t2[-1] == pytest.approx(0.06)
    assert np.all(np.diff(t2) > 0)
    np.testing.assert_array_equal(y2[:8], y2[8:16])
    np.testing.assert_array_equal(y2[8:16], y2[16:24])


@pytest.mark.parametrize("values, unit, factor, shown", [
    ([0.002, -0.004], "V", 1e3, "mV"), ([12e-6], "V", 1e6, "µV"), ([3.0], "A", 1.0, "A"),
    ([4700.0], "Ω", 1e-3, "kΩ"), ([0.0], "V", 1.0, "V")])
def test_si_scale_picks_a_prefix_for_the_largest_value(values, unit, factor, shown):
    k, u = plots.si_scale(values, unit)
    assert u == shown and k == pytest.approx(factor)


def test_ripple_figure_shows_each_rail_ripple_about_its_dc_over_two_cycles(run):
    design, fig_data = _first_picked(run)
    wf = fig_data.waveforms
    fig = plots.ripple_figure(wf, hum_allowed_v={r.name: r.hum_v for r in design.rails})
    axes = [ax for ax in fig.axes if ax.get_visible()]
    assert len(axes) == len(design.rails)
    period_ms = 1e3 / design.mains.frequency_hz
    for ax, rail, rf in zip(axes, design.rails, fig_data.rails, strict=True):
        line = ax.get_lines()[0]
        x, y = line.get_xdata(), line.get_ydata()
        assert x[0] == 0.0 and x[-1] == pytest.approx(2 * period_ms)
        assert ax.get_ylabel().startswith("ripple [") and ax.get_ylabel().endswith("V]")
        # the plotted ripple has the rms of the evaluated figure, about a zero mean
        scale = {"V": 1.0, "mV": 1e-3, "µV": 1e-6, "nV": 1e-9}[ax.get_ylabel()[8:-1]]
        volts = np.asarray(y[:-1]) * scale
        assert np.mean(volts) == pytest.approx(0.0, abs=1e-9 + 1e-6 * rf.ripple_rms_v)
        assert np.std(volts) == pytest.approx(rf.ripple_rms_v, rel=1e-6)
        assert ax.get_title(loc="left").startswith(f"{rail.name}: ")
    assert fig.axes[-1].get_xlabel() == "time [ms]"


def test_rectifier_figure_draws_every_anode_and_names_the_peak(run):
    design, fig_data = _first_picked(run)
    fig = plots.rectifier_figure(fig_data.waveforms, peak_rating_a=None, element="diode")
    ax = fig.axes[0]
    lines = [ln for ln in ax.get_lines() if ln.get_label().startswith("diode")]
    assert len(lines) == len(fig_data.waveforms.anode_a) == 2  # full-wave silicon
    top = max(float(np.max(ln.get_ydata())) for ln in lines)
    # sampled maximum against the parabola-refined figure: within a sample's worth
    assert top == pytest.approx(fig_data.rectifier.peak_a, rel=0.02)
    assert ax.get_ylabel() == "current [A]" and ax.get_xlabel() == "time [ms]"
    note = [t.get_text() for t in ax.texts if t.get_text().startswith("peak")]
    assert note and "per diode" in note[0]


def test_rectifier_rating_line_only_when_near_the_pulses(run):
    _, fig_data = _first_picked(run)
    peak = fig_data.rectifier.peak_a
    near = plots.rectifier_figure(fig_data.waveforms, peak_rating_a=1.2 * peak)
    far = plots.rectifier_figure(fig_data.waveforms, peak_rating_a=20 * peak)
    assert any(ln.get_label() == "peak rating" for ln in near.axes[0].get_lines())
    assert not any(ln.get_label() == "peak rating" for ln in far.axes[0].get_lines())
    assert any("rating" in t.get_text() for t in far.axes[0].texts)


def test_pareto_figure_labels_every_pick_and_pairs_the_varying_objectives(run):
    result, _ = run
    fig = pareto_plot.pareto_figure(result)
    axes = [ax for ax in fig.axes if ax.get_visible()]
    texts = {t.get_text() for ax in axes for t in ax.texts}
    for _name, (i, _) in result.picks.items():
        assert f"#{i + 1}" in texts
    legend = [t.get_text() for t in fig.legends[0].get_texts()]
    for name in result.picks:
        assert any(name in label for label in legend)
    # one design chosen by two picks is labelled once with both names
    marks = pareto_plot.pick_marks(result.picks)
    for i, names in marks.items():
        assert any(label == f"#{i + 1} {' & '.join(names)}" for label in legend)
    for ax in axes:
        assert "[" in ax.get_xlabel() and "[" in ax.get_ylabel()
    # the plotted cost of each design is its cost
    cost_ax = next(ax for ax in axes if ax.get_ylabel().startswith("parts cost"))
    ys = np.asarray(cost_ax.collections[0].get_offsets())[:, 1]
    np.testing.assert_allclose(np.sort(ys), np.sort([c.cost for c in result.designs]))


@pytest.mark.parametrize("flatten", [False, True])
def test_pareto_leaves_out_an_objective_that_is_the_same_for_every_design(run, flatten):
    result, _ = run
    if flatten:  # every design at the same rectifier peak
        result = replace(result, designs=[replace(c, objectives={**c.objectives, "peak": 0.5})
                                          for c in result.designs])
    peak = np.array([c.objectives["peak"] for c in result.designs])
    same = np.ptp(peak) <= pareto_plot.SAME_PEAK_REL * np.max(np.abs(peak))
    fig = pareto_plot.pareto_figure(result, objectives=("hum_db", "regulation_pct", "peak",
                                                        "cost"))
    shown = {ax.get_xlabel() for ax in fig.axes if ax.get_visible()} | {
        ax.get_ylabel() for ax in fig.axes if ax.get_visible()}
    assert any(s.startswith("rectifier peak") for s in shown) != same
    title = fig.legends[0].get_title().get_text()
    assert ("rectifier peak" in title and "for every design" in title) == same


def test_switch_on_figure_from_plain_arrays():
    t = np.linspace(0.0, 2.0, 20001)
    v = {"a": 400 * (1 - np.exp(-t / 0.2)), "b": 380 * (1 - np.exp(-t / 0.5))}
    i_a = 5.0 * np.exp(-t / 0.05) * np.abs(np.sin(2 * np.pi * 50 * t))
    fig = plots.switch_on_figure(t, v, junction_a=i_a, final_v={"a": 400.0, "b": 380.0})
    volts, amps = fig.axes
    assert volts.get_ylabel() == "voltage [V]" and volts.get_xlabel().endswith("[s]")
    assert amps.get_ylabel() == "current [A]" and amps.get_xlabel().endswith("[ms]")
    assert [ln.get_label() for ln in volts.get_lines() if not ln.get_label().startswith("_")] \
        == ["a", "b"]
    drawn = volts.get_lines()[0].get_ydata()
    assert len(drawn) < len(t) / 5  # the envelope, not every step
    assert np.max(drawn) == pytest.approx(np.max(v["a"]))
    note = [x.get_text() for x in amps.texts][0]
    assert note.startswith(f"surge {plots._si(float(np.max(i_a)), 'A')}")


def test_envelope_keeps_the_extremes_of_a_fast_signal():
    t = np.linspace(0.0, 10.0, 500001)
    y = np.sin(2 * np.pi * 100 * t) * (1 + t)
    te, ye = plots.envelope(t, y, buckets=500)
    assert len(te) <= 1002 and np.all(np.diff(te) > 0)
    assert np.max(ye) == np.max(y) and np.min(ye) == np.min(y)


def test_impedance_figure_is_log_log_per_rail():
    f = np.logspace(0, 4, 50)
    z = {"plates": 1 / (2j * np.pi * f * 100e-6), "preamp": 1e3 / (1 + 1j * f / 10)}
    fig = plots.impedance_figure(f, z, ripple_hz=100.0)
    ax = fig.axes[0]
    assert ax.get_xscale() == "log" and ax.get_yscale() == "log"
    assert ax.get_xlabel() == "frequency [Hz]" and "[Ω]" in ax.get_ylabel()
    np.testing.assert_allclose(ax.get_lines()[0].get_ydata(), np.abs(z["plates"]))


def test_files_are_png_and_svg_and_inline_svg_ids_are_unique(run, tmp_path):
    design, fig_data = _first_picked(run)
    figs = pictures.design_figures(design, fig_data, title="test")
    png = pictures.save_all(figs, str(tmp_path / "p"), "png")
    svg = pictures.save_all(figs, str(tmp_path / "s"), "svg")
    for path in png:
        assert Path(path).read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    for path in svg:
        assert ET.parse(path).getroot().tag.endswith("svg")
    marks = [plots.svg_markup(f, f"f{k}") for k, f in enumerate(figs.values())]
    ids = [el.get("id") for m in marks for el in ET.fromstring(m).iter() if el.get("id")]
    assert ids and len(ids) == len(set(ids))


def test_existing_picture_is_kept_without_force(run, tmp_path):
    from supplydesign.errors import UserError

    design, fig_data = _first_picked(run)
    figs = pictures.design_figures(design, fig_data)
    pictures.save_all(figs, str(tmp_path), "png")
    with pytest.raises(UserError, match="--force"):
        pictures.save_all(figs, str(tmp_path), "png")
    assert pictures.save_all(figs, str(tmp_path), "png", force=True)


def test_drawing_solves_nothing(run, monkeypatch):
    import supplydesign.evaluation.analysis as analysis
    import supplydesign.evaluation.cases as cases

    def refuse(*a, **k):
        raise AssertionError("a picture tried to solve a circuit")

    monkeypatch.setattr(analysis, "periodic_steady_states", refuse)
    monkeypatch.setattr(cases, "periodic_steady_states", refuse)
    result, waves = run
    figs = pictures.synth_figures(result, waves)
    assert "pareto" in figs and len(figs) == 1 + 2 * len(waves)


def test_switch_on_after_a_warm_up_shows_the_surge_from_conduction():
    t = np.concatenate([[0.0], np.linspace(5.0, 7.0, 40001)])
    on = t >= 5.0
    i_a = np.where(on, 3.0 * np.exp(-(t - 5.0) / 0.05) * np.abs(np.sin(2 * np.pi * 50 * t)),
                   np.nan)
    v = {"a": np.where(on, 400 * (1 - np.exp(-(t - 5.0) / 0.2)), 0.0),
         "b": np.where(on, 420 * (1 - np.exp(-(t - 5.0) / 0.1)) * (1 + 0.2 * np.exp(
             -(t - 5.0) / 0.3) * np.sin(np.clip(t - 5.0, 0, None) * 6)), 0.0)}
    fig = plots.switch_on_figure(t, v, junction_a=i_a, surge_rating_a=3.5, element="anode")
    volts, amps = fig.axes
    assert volts.get_xlim()[0] == 0.0  # the warm-up is shown as it is
    lo, hi = amps.get_xlim()
    assert 4.99 <= lo <= 5.0 and hi == pytest.approx(5.1)
    assert amps.get_title(loc="left").startswith("current in one anode, from conduction")
    assert "after conduction starts" in amps.texts[0].get_text()
    assert any(ln.get_linestyle() == "--" for ln in amps.get_lines())  # rating near the surge
    # only the rail that overshoots and comes back gets the overshoot mark
    marks = [ln for ln in volts.get_lines() if ln.get_marker() == "v"]
    assert len(marks) == 1 and marks[0].get_color() == plots.rail_colour(1)
