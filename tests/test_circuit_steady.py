"""The shooting solver: its result is the long-run steady state, batch or alone."""

from __future__ import annotations

import numpy as np
import pytest

from supplydesign.analysis import evaluate
from supplydesign.circuit.netlist import build
from supplydesign.circuit.statespace import build_state_space, discretize
from supplydesign.circuit.steady import _Stepper, initial_guess, periodic_steady_state
from supplydesign.design import Capacitor, Design, Link, Mains, Rail, Rectifier, Transformer


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
    stepper = _Stepper(ss, discretize(ss, 1.0 / (50.0 * 256) * np.ones(1)), 256)
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
