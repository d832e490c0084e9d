"""What keeps a supply from settling: the choke input's damping and the reasons given."""

from __future__ import annotations

import numpy as np
import pytest

from supplydesign.circuit.netlist import CHOKE_DAMPING, JUNCTION_CAPACITANCE, build
from supplydesign.design import Capacitor, Design, Link, Mains, Rail, Rectifier, Transformer
from supplydesign.evaluation.analysis import convergence_note, settling_hint


def _supply(first: str, l_h: float = 5.0, current_a: float = 0.05, c_f: float = 47e-6,
            second_l_h: float | None = None) -> Design:
    """Invented supply: a first rail fed by ``first`` and, optionally, an LC section."""
    link = Link("wire") if first == "wire" else Link("choke", resistance_ohm=100.0,
                                                     inductance_h=l_h)
    rails = [Rail("out", None, link, Capacitor(c_f, esr_ohm=0.2), current_a=current_a)]
    if second_l_h is not None:
        rails.append(Rail("next", "out", Link("choke", resistance_ohm=50.0,
                                              inductance_h=second_l_h),
                          Capacitor(100e-6), current_a=0.001))
    return Design("test", Mains(50.0), Transformer("center-tapped", open_circuit_v=350.0,
                                                   resistance_ohm=50.0),
                  Rectifier(), tuple(rails))


def _dampers(design: Design):
    circuit = build([design])
    return {e.name: circuit.value(e.name, "r")[0] for e in circuit.topology.elements
            if e.role and e.role[0] == "choke_damping"}


def test_a_choke_input_choke_carries_its_damping_resistance():
    # a model choice, not an outside reference: CHOKE_DAMPING * sqrt(L / C_junction),
    # Q 4 for the choke ringing with the junction capacitance once its current stops
    # (see the netlist module docstring)
    got = _dampers(_supply("choke", l_h=9.0))
    assert got == {"rp1": pytest.approx(CHOKE_DAMPING * np.sqrt(9.0 / JUNCTION_CAPACITANCE))}
    assert got["rp1"] == pytest.approx(1.2e6)


def test_a_choke_after_a_reservoir_capacitor_has_none():
    # a choke between two capacitors does not ring with the junction capacitance
    assert _dampers(_supply("wire", second_l_h=10.0)) == {}
    # and a choke input keeps its one damper when an LC section follows
    assert list(_dampers(_supply("choke", second_l_h=10.0))) == ["rp1"]


def test_the_hint_names_a_choke_input_below_its_critical_inductance():
    # L_c = R_L / 3ω (Wikipedia, "Ripple (electrical)" [source]; REFERENCES item 4),
    # values [derived]: at 300 V and 5 mA R_L is
    # 60 kΩ and L_c = 60e3 / (3 · 2π · 50) = 63.7 H, far above the 5 H fitted
    design = _supply("choke", l_h=5.0, current_a=0.005)
    hint = settling_hint(design, np.array([300.0]), np.array([0.005]))
    assert "below its critical inductance (5 H against 63.7 H at 5 mA)" in hint
    # at 100 mA (R_L = 3 kΩ, L_c = 3.18 H) the same choke conducts continuously
    assert "critical" not in settling_hint(design, np.array([300.0]), np.array([0.1]))


def test_the_hint_names_a_ringing_lc_section():
    # series-RLC Q = sqrt(L/C)/R (Wikipedia, "RLC circuit" [source]), values [derived]:
    # 20 H, 100 µF, 50 Ω and a light load give Q near 8.9, above RINGING_Q
    design = _supply("wire", second_l_h=20.0)
    hint = settling_hint(design, np.array([400.0, 390.0]), np.array([np.nan, 0.001]))
    assert "rail 'next' is an LC section that rings" in hint
    assert "f0 3.56 Hz" in hint


def test_a_converged_design_has_no_note_and_a_stopped_one_gets_the_hint():
    class Arrays:  # the fields convergence_note reads, as a solver batch gives them
        converged = np.array([True, False])
        dc_v = np.array([[300.0], [300.0]])
        link_dc_a = np.array([[0.005], [0.005]])
        residual = np.array([1e-12, 3e-4])
        iterations = np.array([5, 65])
    design = _supply("choke", l_h=5.0, current_a=0.005)
    assert convergence_note(Arrays, 0, design) == ""
    note = convergence_note(Arrays, 1, design)
    assert note.startswith("Newton shooting stopped after 65 iterations at a residual of 3.0e-04")
    assert "critical inductance" in note


def test_the_hint_names_a_choke_ringing_with_a_small_reservoir():
    # the choke sees the reservoir before it as an LC with no load damping: 10 H on
    # 2 µF gives f0 = 1/(2π sqrt(LC)) = 35.6 Hz and Q = sqrt(L/C)/R = 2236/50.2 = 45
    # (Wikipedia, "RLC circuit" [source]; values [derived]), near the mains frequency
    design = _supply("wire", c_f=2e-6, second_l_h=10.0)
    hint = settling_hint(design, np.array([400.0, 390.0]), np.array([np.nan, 0.001]))
    assert "the choke of rail 'next' rings with the capacitor of rail 'out' (f0 35.6 Hz, Q 45)" \
        in hint
    # with a 470 µF reservoir Q is 146/50.2 = 2.9: nothing to name
    calm = _supply("wire", c_f=470e-6, second_l_h=10.0)
    assert "rings with" not in settling_hint(calm, np.array([400.0, 390.0]),
                                             np.array([np.nan, 0.001]))
