"""The shooting solver: its result is the long-run steady state, batch or alone."""

from __future__ import annotations

import numpy as np
import pytest

from supplydesign.circuit.netlist import build
from supplydesign.circuit.statespace import build_state_space, discretize
from supplydesign.circuit.steady import _Stepper, initial_guess, periodic_steady_state
from supplydesign.design import Capacitor, Design, Link, Mains, Rail, Rectifier, Transformer
from supplydesign.evaluation.analysis import evaluate


def _design(kind="silicon", leakage=0.0, c1=47e-6, first="wire", load=0.1):
    rect = Rectifier(kind=kind, drop_v=20.0, drop_current_a=0.2) if kind == "valve" \
        else Rectifier()
    link = Link("wire") if first == "wire" else Link("choke", resistance_ohm=150.0,
                                                     inductance_h=8.0)
    return Design(
        "test", Mains(50.0),
        Transformer(open_circuit_v=300.0, resistance_ohm=60.0, leakage_h=leakage), rect,
        (Rail("a", None, link, Capacitor(c1, esr_ohm=0.5), current_a=load),
         Rail("b", "a", Link("resistor", resistance_ohm=2200.0), Capacitor(22e-6),
              current_a=0.005)))


@pytest.mark.parametrize("kind,leakage,first", [
    ("silicon", 0.0, "wire"), ("valve", 3e-3, "wire"), ("silicon", 2e-3, "choke")])
def test_shooting_equals_long_transient(kind, leakage, first):
    """Stepping the same discrete map from the DC estimate for many periods lands on
    the shooting solution."""
    ss = build_state_space(build([_design(kind, leakage, first=first)]))
    st = periodic_steady_state(ss, steps=256)
    assert st.converged.all()
    stepper = _Stepper.of(ss, discretize(ss, 1.0 / (50.0 * 256) * np.ones(1)), 256)
    x = initial_guess(ss)
    for _ in range(150):  # 3 s of circuit time; the slowest section settles in ~0.2 s
        xs, _, _, _ = stepper.run(x, np.arange(1), sens=False)
        x = xs[-1]
    scale = np.max(np.abs(st.x[:, 0, :]), axis=0) + 1e-3
    assert np.max(np.abs(xs[:, 0, :] - st.x[:, 0, :]) / scale) < 1e-5


def test_batch_gives_the_same_figures_as_one_at_a_time():
    designs = [_design(c1=c) for c in (22e-6, 47e-6, 100e-6)]
    together = evaluate(designs)
    for d, f in zip(designs, together, strict=True):
        alone = evaluate([d])[0]
        for a, b in zip(f.rails, alone.rails, strict=True):
            assert a.dc_v == pytest.approx(b.dc_v, rel=1e-9)
            assert a.ripple_rms_v == pytest.approx(b.ripple_rms_v, rel=1e-6)
        assert f.rectifier.peak_a == pytest.approx(alone.rectifier.peak_a, rel=1e-6)


def test_mixed_topologies_keep_their_order():
    a, b = _design("silicon"), _design("valve", 3e-3)
    figs = evaluate([a, b, a])
    assert figs[0].rails[0].dc_v == pytest.approx(figs[2].rails[0].dc_v, rel=1e-12)
    assert figs[1].rails[0].dc_v != pytest.approx(figs[0].rails[0].dc_v, rel=1e-3)


def test_average_anode_currents_carry_the_load():
    """Charge balance: over a period the rectifier delivers the DC load.

    The junctions also pass the 1 nS conductance across them in reverse (a few
    hundred volts: under a microampere each), which the anode current makes up;
    hence 2e-5 rather than round-off."""
    f = evaluate([_design()])[0]
    total = sum(r.load_a for r in f.rails)
    assert 2 * f.rectifier.avg_a == pytest.approx(total, rel=2e-5)


def test_newton_steps_stay_inside_the_trust_region():
    """A step is shortened so that no state moves by more than its limit and no
    junction ends beyond its forward limit; a step inside both is left alone."""
    from supplydesign.circuit.steady import _limit_step

    x = np.array([[0.0, 100.0]] * 3)
    limit = np.full((3, 2), 500.0)
    cy = np.array([[[1.0, 0.0]]] * 3)  # the junction voltage is state 0
    y_max = np.full((3, 1), 1.1)
    step = np.array([[-3.0, 20.0],       # reverse-biases the junction: kept
                     [2.2, -40.0],       # 2.2 V forward: halved, to the 1.1 V limit
                     [0.1, -4000.0]])    # 4 kV: cut to the 500 V box, 1/8
    out = _limit_step(step, x, limit, cy, y_max)
    np.testing.assert_allclose(out[0], step[0])
    np.testing.assert_allclose(out[1], step[1] / 2.0)
    np.testing.assert_allclose(out[2], step[2] / 8.0)


def test_light_choke_input_below_critical_settles():
    """A choke input at a few milliamperes, far below its critical inductance (the
    choke current stops every half cycle): a periodic steady state is found, and it
    is the one a long run of the same discrete map reaches (invented values)."""
    design = Design(
        "light choke input", Mains(50.0),
        Transformer("center-tapped", open_circuit_v=400.0, resistance_ohm=5.0),
        Rectifier(),
        (Rail("a", None, Link("choke", resistance_ohm=22.0, inductance_h=3.0),
              Capacitor(270e-6, esr_ohm=0.05), current_a=0.004),))
    ss = build_state_space(build([design]))
    st = periodic_steady_state(ss, steps=256)
    assert st.converged.all()
    stepper = _Stepper.of(ss, discretize(ss, 1.0 / (50.0 * 256) * np.ones(1)), 256)
    x = st.x[0]
    for _ in range(50):
        x = stepper.run(x, np.arange(1), sens=False)[0][-1]
    v0 = st.x[0, 0, ss.n_dynamic_nodes - 1]
    assert x[0, ss.n_dynamic_nodes - 1] == pytest.approx(v0, rel=1e-6)


def _small_reservoir_half_wave() -> Design:
    """Invented: half-wave silicon, a 1.5 µF reservoir and a 27 H choke that ring together
    (f0 25 Hz, Q 4.8), then an RC section (tests/data/spice/si_hw_small_reservoir_choke)."""
    return Design(
        "small reservoir", Mains(50.0),
        Transformer("single", open_circuit_v=120.0, resistance_ohm=5.2),
        Rectifier(arrangement="half-wave"),
        (Rail("a", None, Link("wire"), Capacitor(1.5e-6, esr_ohm=0.4), current_a=0.002),
         Rail("b", "a", Link("choke", resistance_ohm=900.0, inductance_h=27.0),
              Capacitor(5.2e-6, esr_ohm=0.03), current_a=0.010),
         Rail("c", "b", Link("resistor", resistance_ohm=2600.0),
              Capacitor(71e-6, esr_ohm=7.4), current_a=0.003)))


def _ringing_reservoir_full_wave() -> Design:
    """Invented: full-wave silicon, a 1.45 µF reservoir ringing with a 1.08 H choke
    (f0 127 Hz, Q 13, near the 120 Hz ripple) into 607 µF."""
    return Design(
        "ringing reservoir", Mains(60.0),
        Transformer("center-tapped", open_circuit_v=180.0, resistance_ohm=31.0,
                    leakage_h=2.3e-3),
        Rectifier(arrangement="full-wave"),
        (Rail("a", None, Link("wire"), Capacitor(1.45e-6, esr_ohm=0.02), current_a=0.0017),
         Rail("b", "a", Link("choke", resistance_ohm=65.0, inductance_h=1.08),
              Capacitor(607e-6, esr_ohm=9.8), current_a=0.0079)))


def test_a_slowly_settling_design_is_reached_by_extrapolating_its_decay(monkeypatch):
    """Newton alone does not settle it from the DC estimate and the plain periods
    decay by a few per cent a period; extrapolating that decay (Aitken) lands close
    enough for Newton. Without the extrapolation the same budget does not settle."""
    from supplydesign.circuit import steady

    ss = build_state_space(build([_ringing_reservoir_full_wave()]))
    assert periodic_steady_state(ss).converged.all()
    monkeypatch.setattr(steady, "MAX_DECAY_RATIO", 0.0)
    assert not periodic_steady_state(ss).converged.any()


def test_a_rail_below_zero_is_no_working_steady_state():
    """A half-wave valve supply with a 1.6 µF reservoir cannot give 35 mA: its periodic
    solution has the rails below 0 V, where a stage drawing a constant current has no
    working point; the figures say so (invented values)."""
    design = Design(
        "too small a reservoir", Mains(60.0),
        Transformer("single", open_circuit_v=116.0, resistance_ohm=6.6, leakage_h=0.56e-3),
        Rectifier(kind="valve", arrangement="half-wave", drop_v=50.0, drop_current_a=0.06),
        (Rail("first", None, Link("wire"), Capacitor(1.6e-6, esr_ohm=0.5), current_a=0.025),
         Rail("second", "first", Link("choke", resistance_ohm=180.0, inductance_h=10.0),
              Capacitor(980e-6, esr_ohm=0.03), current_a=0.010)))
    fig = evaluate([design])[0]
    assert not fig.converged
    assert min(r.dc_v for r in fig.rails) <= 0.0
    assert fig.note.startswith("the supply cannot carry the stage currents: rail 'second' "
                               "falls to -")


def test_a_fast_charging_loop_gets_more_steps():
    """One step at most one charging time constant (R_w + R_diode + ESR)·C: 1.5 µF
    behind 5.65 Ω is 8.5 µs, and 50 Hz needs 4096 steps (4.9 µs) for that; a choke
    input's pulse is smoothed by its choke and keeps the minimum (RC time constant of
    circuit theory [practice]; values [derived])."""
    from supplydesign.circuit.netlist import charging_time_constant_s, steps_needed

    small = _small_reservoir_half_wave()
    assert charging_time_constant_s(small) == pytest.approx(1.5e-6 * (5.2 + 0.05 + 0.4))
    assert steps_needed(small, 512) == 4096
    assert steps_needed(small, 8192) == 8192
    assert steps_needed(_design(), 512) == 512  # 47 µF behind 60 Ω: 2.8 ms
    assert steps_needed(_design(first="choke"), 512) == 512
    # a valve's slope resistance on the 3/2-power law, (2/3)·V/I = (2/3)·20/0.2 = 67 Ω
    assert charging_time_constant_s(_design("valve")) == pytest.approx(
        47e-6 * (60.0 + 2.0 / 3.0 * 20.0 / 0.2 + 0.5))


def test_the_peak_current_of_a_fast_loop_is_that_of_a_fine_step():
    """With the steps chosen for it, the peak charging current of the small reservoir
    is within 0.1 % of a run at 8192 steps; at a fixed 512 it was 17 % high. (ngspice
    [source: independent simulator] checks the same circuit in test_ngspice_crosscheck,
    si_hw_small_reservoir_choke.)"""
    from supplydesign.circuit.netlist import MAX_STEPS_PER_PERIOD

    design = _small_reservoir_half_wave()
    chosen = evaluate([design])[0]
    fine = evaluate([design], steps=MAX_STEPS_PER_PERIOD)[0]
    assert chosen.converged and fine.converged
    assert chosen.rectifier.peak_a == pytest.approx(fine.rectifier.peak_a, rel=1e-3)
