"""Many builds of one design (supplydesign.evaluation.spread) against the law of
propagation of uncertainty, known distributions and its own sampling error.

The Monte Carlo procedure of the builds is that of JCGM 101:2008 (propagation of
distributions: draw every input from its distribution, evaluate the model for
each draw, read the output's distribution from the sorted values). JCGM 101
§7.2 (from memory) asks for about 10^6 trials, and at least 10^4/(1 - p), for a
coverage interval of probability p stable to one or two significant digits; the
tests here use a few hundred builds and the spread command 2000 by default, far
fewer, and instead state the sampling error of every percentile they report (an
order-statistic interval) and check against it, as JCGM 101's adaptive procedure
(§7.9) checks its results against a stated numerical tolerance.

Designs here are invented for the tests.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from scipy import stats

from supplydesign.circuit.netlist import OperatingCase
from supplydesign.evaluation.analysis import evaluate, evaluate_arrays
from supplydesign.evaluation.spread import run_spread, summarise
from supplydesign.evaluation.tolerances import build_designs
from supplydesign.io import load_design

EXAMPLES = Path(__file__).parent.parent / "examples"

R_OHM, T, I_A = 10e3, 0.05, 0.010

LADDER = """\
title = "RC ladder with known tolerances (invented)"
[mains]
frequency = "50 Hz"
tolerance = "0 %"
[transformer]
winding = "center-tapped"
open_circuit = "300 V"
resistance = "50 ohm"
tolerance = "0 %"
resistance_tolerance = "0 %"
[rectifier]
kind = "silicon"
arrangement = "full-wave"
[[rail]]
name = "a"
link = "wire"
capacitor = { capacitance = "220 uF", esr = "0.5 ohm", tolerance = "0 %" }
[[rail]]
name = "b"
link = { kind = "resistor", resistance = "10 kohm", tolerance = "5 %" }
capacitor = { capacitance = "47 uF", tolerance = "0 %" }
[[rail]]
name = "c"
link = { kind = "resistor", resistance = "10 kohm", tolerance = "5 %" }
capacitor = { capacitance = "47 uF", tolerance = "0 %" }
current = "10 mA"
"""


@pytest.fixture(scope="module")
def ladder(tmp_path_factory):
    """The ladder with a target on rail c: the nominal DC ± R·I·t, and its spread."""
    folder = tmp_path_factory.mktemp("ladder")
    plain = folder / "plain.toml"
    plain.write_text(LADDER, encoding="utf-8")
    (nominal,) = evaluate([load_design(plain)])
    v_c = nominal.rails[2].dc_v
    path = folder / "ladder.toml"
    path.write_text(LADDER + f'voltage = "{v_c:.6f} V"\ntolerance = '
                             f'"{100 * R_OHM * I_A * T / v_c:.9f} %"\nhum = "1 V"\n',
                    encoding="utf-8")
    design = load_design(path)
    return design, run_spread(design, builds=400, seed=3)


def test_linear_case_agrees_with_the_law_of_propagation_of_uncertainty(ladder):
    # The drop over the two resistors is I·(R1 + R2), linear in the resistors. JCGM
    # 100:2008 (the GUM) §5.1.2 eq. (10), law of propagation of uncertainty, with §4.3.7,
    # u = a/√3 for a rectangular distribution of half-width a [source; section numbers
    # from memory]: u(drop) = I·√(u(R1)² + u(R2)²) = I·R·t·√(2/3).
    _, sp = ladder
    drop = sp.full.dc_v[:, 0] - sp.full.dc_v[:, 2]
    u_gum = I_A * R_OHM * T * np.sqrt(2.0 / 3.0)
    n = drop.size
    # sampling error of a standard deviation from n draws, kurtosis 2.4 of the
    # triangular distribution [derived: √((κ - 1)/(4n)) relative]; 3 of them allowed
    rel = 3 * np.sqrt((2.4 - 1) / (4 * n))
    assert np.std(drop, ddof=1) == pytest.approx(u_gum, rel=rel)
    assert np.mean(drop) == pytest.approx(2 * R_OHM * I_A, abs=3 * u_gum / np.sqrt(n))


def test_two_uniform_tolerances_add_to_a_triangular_distribution(ladder):
    # The sum of two independent uniform variables of equal width has the triangular
    # distribution [source: any probability text; derived by convolution]; the drop
    # over R1 + R2 must pass a Kolmogorov-Smirnov test against it.
    _, sp = ladder
    drop = sp.full.dc_v[:, 0] - sp.full.dc_v[:, 2]
    lo, width = 2 * R_OHM * I_A * (1 - T), 4 * R_OHM * I_A * T
    assert stats.kstest(drop, stats.triang(c=0.5, loc=lo, scale=width).cdf).pvalue > 0.01
    # ... and not against a uniform of the same range (the test can tell them apart)
    assert stats.kstest(drop, stats.uniform(lo, width).cdf).pvalue < 0.01


def test_yield_of_a_band_half_as_wide_as_the_spread(ladder):
    # Rail c's DC is V_a - I(R1 + R2): triangular with half-width 2·R·I·t about its
    # nominal value; a band of ±R·I·t holds 1 - (1/2)² = 3/4 of the builds [derived].
    # The reservoir's own spread (the diode law only) is under 1 % of the band.
    design, sp = ladder
    s = summarise(sp)
    c = s.rails[2]
    assert c.yield_ci[0] <= 0.75 <= c.yield_ci[1]
    assert c.yield_ == pytest.approx(0.75, abs=0.05)
    assert s.rails[0].passed == s.builds  # a rail without targets always meets them
    assert s.passed == c.passed and s.yield_ci == c.yield_ci
    assert sp.meets[:, 2].sum() == c.passed
    # the drivers of rail c's DC: the two resistors, half each; hum allowance always met
    top = {d.part: d.share for d in c.dc_drivers[:2]}
    assert set(top) == {"b resistor", "c resistor"}
    assert all(v == pytest.approx(0.5, abs=0.05) for v in top.values())


def test_same_seed_same_figures(ladder):
    design, _ = ladder
    a, b = (run_spread(design, builds=6, seed=9) for _ in range(2))
    for name in ("multipliers", "idle_dc_v", "cap_no_load_v", "surge_a", "converged"):
        assert np.array_equal(getattr(a, name), getattr(b, name)), name
    assert np.array_equal(a.full.dc_v, b.full.dc_v)
    assert np.array_equal(a.full.ripple_rms_v, b.full.ripple_rms_v)
    c = run_spread(design, builds=6, seed=10)
    assert not np.array_equal(a.full.dc_v, c.full.dc_v)


def test_no_load_crest_bounds_the_solved_steady_state(ladder):
    # Nothing draws without load, so every capacitor charges to the crest at high mains:
    # the spread takes the crest, within 0.2 % above the solved no-load steady state.
    design, sp = ladder
    assert sp.no_load_method.startswith("crest")
    high = build_designs(design, sp.factors, sp.multipliers[:8], mains_factor=1.0)
    solved = evaluate_arrays(high, OperatingCase("high_mains_no_load", 1.0, "none"))
    assert solved.converged.all()
    assert np.all(sp.cap_no_load_v[:8] >= solved.peak_v)
    assert sp.cap_no_load_v[:8] == pytest.approx(solved.peak_v, rel=2e-3)


@pytest.fixture(scope="module")
def two_seeds():
    design = load_design(EXAMPLES / "single-ended-valve.toml")
    return [summarise(run_spread(design, builds=200, seed=s)) for s in (1, 2)]


def test_two_seeds_agree_within_their_sampling_error(two_seeds):
    a, b = two_seeds
    pairs = 0
    for ra, rb in zip(a.rails, b.rails, strict=True):
        for pa, pb in zip(ra.dc_v + ra.hum_v, rb.dc_v + rb.hum_v, strict=True):
            # each estimate's 95 % interval holds the other estimate's interval in part
            assert pa.low <= pb.high and pb.low <= pa.high, (ra.name, pa, pb)
            assert pa.low < pa.high  # a stated, nonzero sampling error
            pairs += 1
    assert pairs == 5 * len(a.rails)
    # yields likewise, within their Clopper-Pearson intervals
    assert a.yield_ci[0] <= b.yield_ci[1] and b.yield_ci[0] <= a.yield_ci[1]


def test_a_valve_design_spreads_its_drop_and_reports_every_stress(two_seeds):
    a, _ = two_seeds
    parts = [f.part for f in a.factors]
    assert "rectifier drop" in parts and "diode law" not in parts
    what = {(s.part, s.what) for s in a.stresses}
    assert ("reservoir capacitor", "no-load voltage") in what
    assert ("output choke", "DC current") in what and ("driver resistor", "dissipation") in what
    assert ("rectifier", "peak current per anode") in what
    assert ("rectifier", "switch-on surge") in what
    assert a.converged == a.builds


def test_with_a_bleeder_the_no_load_state_is_solved(ladder):
    # a bleeder draws with the valves cold: the no-load state is solved, below the crest
    from dataclasses import replace

    design, _ = ladder
    bled = design.with_rails([replace(design.rails[0], bleeder_ohm=47e3), *design.rails[1:]])
    sp = run_spread(bled, builds=4, seed=1)
    assert sp.no_load_method.startswith("no-load steady state")
    crest = np.sqrt(2) * 300.0
    assert np.all(sp.cap_no_load_v < crest) and np.all(sp.cap_no_load_v > 0.9 * crest)


def test_a_choke_input_follows_its_surge_past_the_first_half_period(ladder):
    # the input choke's current peaks near a quarter of its resonance period 2π√(LC)
    # after switch-on [derived: circuit theory], so the run lasts half that period more
    from dataclasses import replace

    from supplydesign.design import Link
    from supplydesign.evaluation.spread import surge_window_s

    design, _ = ladder
    first = replace(design.rails[0], link=Link("choke", resistance_ohm=100.0, inductance_h=10.0))
    choked = design.with_rails([first, *design.rails[1:]])
    assert surge_window_s(design) == pytest.approx(0.01)
    assert surge_window_s(choked) == pytest.approx(0.01 + np.pi * np.sqrt(10.0 * 220e-6))
