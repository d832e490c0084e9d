"""The compiled step (circuit/kernels.py): its junction laws, its monodromy matrix, and
the cases that start from a neighbouring case's steady state."""

from __future__ import annotations

import numpy as np
import pytest

from supplydesign.circuit import kernels
from supplydesign.circuit.devices import child_langmuir, shockley, with_constants
from supplydesign.circuit.netlist import build
from supplydesign.circuit.statespace import build_state_space, discretize
from supplydesign.circuit.steady import _Stepper, periodic_steady_state
from supplydesign.design import Capacitor, Design, Link, Mains, Rail, Rectifier, Transformer
from supplydesign.evaluation.cases import (
    HIGH_MAINS_FULL_LOAD,
    IDLE,
    LOW_MAINS_FULL_LOAD,
    NOMINAL,
    solve_case,
    solve_cases,
)


def _design(kind: str, arrangement: str) -> Design:
    """Invented: a capacitor input, a choke section with a signal-dependent stage, and an
    RC section."""
    rect = (Rectifier(kind="valve", arrangement=arrangement, drop_v=25.0, drop_current_a=0.15)
            if kind == "valve" else Rectifier(arrangement=arrangement))
    winding = "single" if arrangement == "bridge" else "center-tapped"
    return Design(
        f"{kind} {arrangement}", Mains(50.0, low=0.1, high=0.1),
        Transformer(winding, open_circuit_v=320.0, resistance_ohm=45.0, leakage_h=2e-3),
        rect,
        (Rail("a", None, Link("wire"), Capacitor(47e-6, esr_ohm=0.8), current_a=0.09,
              idle_current_a=0.07),
         Rail("b", "a", Link("choke", resistance_ohm=180.0, inductance_h=6.0),
              Capacitor(33e-6, esr_ohm=0.5), current_a=0.02),
         Rail("c", "b", Link("resistor", resistance_ohm=4700.0), Capacitor(22e-6),
              current_a=0.004)))


@pytest.mark.parametrize("law,v", [
    ("valve", np.array([-3.0, 0.0, 1e-6, 2.5, 40.0])),
    ("silicon", np.array([-30.0, -0.2, 0.0, 0.45, 0.7, 2.0]))])
def test_junction_laws_are_those_of_devices(law, v):
    """The compiled laws give the currents and slopes of circuit/devices.py (the same
    formulas; round-off only)."""
    if law == "valve":
        k = np.full_like(v, 2e-4)
        want_i, want_g = child_langmuir(v, k)
        got = [kernels._law(kernels.VALVE, vi, 2e-4, 0.0, 0.0) for vi in v]
    else:
        p = with_constants("silicon", {"isat": np.full_like(v, 1e-12),
                                       "nvt": np.full_like(v, 0.0517)})
        want_i, want_g = shockley(v, p["isat"], p["nvt"], p["v_lin"])
        got = [kernels._law(kernels.SILICON, vi, 1e-12, 0.0517, p["v_lin"][0]) for vi in v]
    np.testing.assert_allclose([i for i, _ in got], want_i, rtol=1e-13, atol=1e-300)
    np.testing.assert_allclose([g for _, g in got], want_g, rtol=1e-13, atol=1e-300)


@pytest.mark.parametrize("kind,arrangement", [("valve", "full-wave"), ("silicon", "bridge"),
                                              ("silicon", "half-wave")])
def test_monodromy_is_the_derivative_of_the_period_map(kind, arrangement):
    """[derived] The sensitivity the kernel carries through a period (chain rule through
    the conducting steps, powers of Phi over the off stretches) times a direction equals
    the central difference of the period map it steps along that direction, near the
    steady state (random directions, each state moved by up to 1e-6 of the largest of its
    kind: truncation and round-off then leave under 1e-6 of the difference)."""
    ss = build_state_space(build([_design(kind, arrangement)]))
    steps = 256
    st = periodic_steady_state(ss, steps=steps)
    assert st.converged.all()
    stepper = _Stepper.of(ss, discretize(ss, 1.0 / (50.0 * steps) * np.ones(1)), steps)
    x0 = st.x[0]
    _, _, _, S = stepper.run(x0, np.arange(1), sens=True, record=False)
    nodes = ss.n_dynamic_nodes
    scale = np.where(np.arange(ss.nx) < nodes, np.max(np.abs(x0[0, :nodes])),
                     np.max(np.abs(x0[0, nodes:]), initial=1e-3))
    w = ss.weights[0]
    rng = np.random.default_rng(7)
    for _ in range(4):
        v = 1e-6 * scale * rng.uniform(-1.0, 1.0, ss.nx)
        ends = [stepper.run(x0 + sgn * v, np.arange(1), sens=False, record=False)[0][-1, 0]
                for sgn in (1.0, -1.0)]
        fd = (ends[0] - ends[1]) / 2.0
        assert np.linalg.norm(w * (S[0] @ v - fd)) < 1e-5 * np.linalg.norm(w * fd)


def test_cases_started_from_the_first_agree_with_cases_solved_alone():
    """The cases after the first start from its steady state and monodromy matrix (chord
    steps); they end at the fixed point each case reaches from its own starting guess
    (both shootings stop at a residual of 1e-9: the figures agree to 1e-7)."""
    designs = [_design("valve", "full-wave"), _design("silicon", "bridge")]
    cases = (NOMINAL, IDLE, HIGH_MAINS_FULL_LOAD, LOW_MAINS_FULL_LOAD)
    shared = solve_cases(designs, cases)
    for case in cases:
        alone = solve_case(designs, case)
        assert alone.arrays.converged.all() and shared[case.name].arrays.converged.all()
        for name in ("dc_v", "ripple_rms_v", "rect_peak_a", "winding_rms_a"):
            np.testing.assert_allclose(getattr(shared[case.name].arrays, name),
                                       getattr(alone.arrays, name), rtol=1e-7, atol=1e-9,
                                       err_msg=f"{case.name} {name}")


@pytest.mark.parametrize("load", ["full", "idle", "none"])
def test_a_circuit_with_another_load_is_the_circuit_built_for_it(load):
    """solve_cases builds each topology's netlist once and derives the other cases'
    loads from it: every value equals that of a netlist built for the load."""
    from supplydesign.circuit.netlist import OperatingCase, with_load

    # constant-current stages on rails a and b, a resistive one on rail c
    base = _design("valve", "full-wave")
    rail_c = Rail("c", "b", Link("resistor", resistance_ohm=3300.0), Capacitor(22e-6),
                  load_resistance_ohm=68e3)
    designs = [Design(base.title, base.mains, base.transformer, base.rectifier,
                      (*base.rails[:2], rail_c))]
    derived = with_load(build(designs), load)
    direct = build(designs, OperatingCase("x", 1.0, load))
    assert derived.values.keys() == direct.values.keys()
    for name, params in direct.values.items():
        for p, v in params.items():
            np.testing.assert_array_equal(derived.values[name][p], v, err_msg=f"{name} {p}")
