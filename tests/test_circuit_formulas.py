"""Closed-form laws (supplydesign.circuit.formulas) and the linear filter analyses
(supplydesign.circuit.smallsignal) against the published values of REFERENCES.md.

Every check names its item of REFERENCES.md and its tag beside it; tolerances are
the rounding of the printed value unless said otherwise.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from supplydesign.circuit import formulas
from supplydesign.circuit.smallsignal import discharge_times, output_impedance
from supplydesign.design import Capacitor, Design, Link, Mains, Rail, Rectifier, Transformer
from supplydesign.evaluation.cases import HIGH_MAINS_NO_LOAD, case_circuit
from supplydesign.evaluation.stress import damping


def test_critical_inductance_worked_values():
    # REFERENCES "Rectifier and filter formulas" 4 [source: Wikipedia, "Ripple
    # (electrical)"]: L_c = R_L/(3 omega); 3150 ohm at 50 Hz -> 3.342 H (printed to 4 figures)
    assert formulas.critical_inductance_h(3150.0, 50.0) == pytest.approx(3.342, abs=5e-4)
    # ... R_L/942 at 50 Hz and R_L/1131 at 60 Hz (printed to 3-4 figures)
    assert 1.0 / formulas.critical_inductance_h(1.0, 50.0) == pytest.approx(942, abs=0.5)
    assert 1.0 / formulas.critical_inductance_h(1.0, 60.0) == pytest.approx(1131, abs=0.5)
    # [practice] rule of thumb R_L/1000: within 6 % at 50 Hz
    assert formulas.critical_inductance_h(1000.0, 50.0) == pytest.approx(1.0, rel=0.07)


def test_minimum_current_inverts_the_critical_inductance():
    # [derived from item 4] I_min = V/(3 omega L): the load R_L = V/I_min is critical for L
    v, L = 315.1, 10.0
    i = formulas.min_conduction_current_a(v, L, 50.0)
    assert formulas.critical_inductance_h(v / i, 50.0) == pytest.approx(L, rel=1e-12)
    assert formulas.critical_inductance_h(3150.0, 50.0, "bridge") == \
        formulas.critical_inductance_h(3150.0, 50.0)


def test_reservoir_ripple_worked_value():
    # REFERENCES "Rectifier and filter formulas" 1 [source: Horowitz & Hill §1.6.3]:
    # 100 mA, 100 uF, 50 Hz full-wave -> 2.887 V rms [derived, printed to 4 figures];
    # half-wave: the ripple period doubles, so twice the ripple
    assert formulas.reservoir_ripple_rms_v(0.1, 100e-6, 50.0) == pytest.approx(2.887, abs=5e-4)
    assert formulas.reservoir_ripple_rms_v(0.1, 100e-6, 50.0, "half-wave") == \
        pytest.approx(2 * 2.887, abs=1e-3)


def test_section_attenuation_worked_values():
    # REFERENCES "Rectifier and filter formulas" 6 [derived; circuit theory], printed to
    # 0.01 dB: 10 kohm, 47 uF at 100 Hz -> -49.41 dB; 10 H, 47 uF at 100 Hz -> -45.32 dB
    w = 2 * math.pi * 100.0
    assert 20 * math.log10(formulas.rc_attenuation(10e3, 47e-6, w)) == \
        pytest.approx(-49.41, abs=0.005)
    assert 20 * math.log10(formulas.lc_attenuation(10.0, 47e-6, w)) == \
        pytest.approx(-45.32, abs=0.005)


def test_choke_input_ripple_worked_value():
    # REFERENCES item 5 [derived from source: Wikipedia, "Ripple (electrical)"]: 10 H,
    # 50 uF at 60 Hz -> ripple factor 1.664e-3 (printed to 4 figures)
    assert formulas.choke_input_ripple_rms_v(1.0, 10.0, 50e-6, 60.0) == \
        pytest.approx(1.664e-3, abs=5e-7)


def test_choke_input_dc_worked_value():
    # REFERENCES 3 [source: Wikipedia, "Ripple (electrical)"; Crowhurst, Basic Audio vol. 3]:
    # 350 V rms per half -> 315.1 V ideal; less I R
    assert formulas.choke_input_dc_v(350.0) == pytest.approx(315.1, abs=0.05)
    assert formulas.choke_input_dc_v(350.0, 0.1, 400.0) == pytest.approx(315.1 - 40.0, abs=0.05)


def test_lc_resonance_worked_value():
    # REFERENCES 6 [derived; circuit theory]: 10 H, 47 uF -> f0 = 7.34 Hz
    f0, _ = formulas.lc_section(10.0, 47e-6)
    assert f0 == pytest.approx(7.34, abs=5e-3)


@pytest.mark.parametrize("r_series, r_load, q_expected", [
    # [derived; circuit theory] series RLC: Q = sqrt(L/C) / R = 461.27 / 150
    (150.0, math.inf, math.sqrt(10.0 / 47e-6) / 150.0),
    # [derived; circuit theory] parallel RLC: Q = R_L sqrt(C/L)
    (0.0, 3150.0, 3150.0 * math.sqrt(47e-6 / 10.0)),
])
def test_lc_quality_factor_limits(r_series, r_load, q_expected):
    _, q = formulas.lc_section(10.0, 47e-6, r_series, r_load)
    assert q == pytest.approx(q_expected, rel=1e-12)


def test_damping_words_follow_practice():
    # REFERENCES "Damping of an LC section: aim near critical damping, Q = 0.5" [practice]
    assert damping(0.5) == "damped"
    assert damping(0.7) == "under-damped"
    assert damping(3.0) == "resonant"


def test_bleeder_for_five_seconds_worked_value():
    # REFERENCES "Standard values, mains, safety" [derived from IEC 60204-1 6.2.4]:
    # 100 uF from 450 V to 60 V in 5 s needs <= 24.8 kohm (8.2 W), printed to 3 and 2 figures
    r = formulas.max_bleeder_ohm(5.0, 100e-6, 450.0)
    assert r == pytest.approx(24.8e3, abs=50.0)
    assert 450.0 ** 2 / r == pytest.approx(8.2, abs=0.05)
    assert formulas.discharge_time_s(100e-6, r, 450.0) == pytest.approx(5.0, rel=1e-12)
    assert formulas.discharge_time_s(100e-6, r, 50.0) == 0.0


def _one_rail(capacitance, *, bleeder=None, link=None, rails=()) -> Design:
    """An invented single-winding supply for the filter tests."""
    first = Rail("reservoir", link=link or Link("wire"),
                 capacitor=Capacitor(capacitance), bleeder_ohm=bleeder)
    return Design(title="invented filter test", mains=Mains(50.0),
                  transformer=Transformer(winding="center-tapped", open_circuit_v=300.0,
                                          resistance_ohm=50.0),
                  rectifier=Rectifier(kind="silicon", arrangement="full-wave"),
                  rails=(first, *rails))


def test_network_discharge_equals_the_rc_law():
    # REFERENCES safety worked value [derived]: 100 uF, 24.8 kohm from 450 V: 60 V at
    # R C ln(450/60) = 4.997 s. The network is the filter alone (no winding, no
    # rectifier); 1e-6 is well above the bisection's resolution.
    r = 24.8e3
    circuit = case_circuit([_one_rail(100e-6, bleeder=r)], HIGH_MAINS_NO_LOAD)
    start = {n: np.array([450.0]) for n in circuit.topology.nodes}
    t = discharge_times(circuit, start)
    assert t[0, 0] == pytest.approx(r * 100e-6 * math.log(450.0 / 60.0), rel=1e-6)


def test_discharge_without_a_path_never_ends_and_two_sections_discharge_in_turn():
    from supplydesign.circuit.smallsignal import DISCHARGE_HORIZON_S

    none = case_circuit([_one_rail(100e-6)], HIGH_MAINS_NO_LOAD)
    start = {n: np.array([450.0]) for n in none.topology.nodes}
    assert np.isinf(discharge_times(none, start)[0, 0])
    # a second capacitor behind 10 kohm drains through the reservoir's bleeder: slower
    chain = _one_rail(100e-6, bleeder=24.8e3, rails=(
        Rail("second", link=Link("resistor", resistance_ohm=10e3),
             capacitor=Capacitor(47e-6)),))
    c = case_circuit([chain], HIGH_MAINS_NO_LOAD)
    t = discharge_times(c, {n: np.array([450.0]) for n in c.topology.nodes})
    assert 4.997 < t[0, 0] < t[0, 1] < DISCHARGE_HORIZON_S


def test_output_impedance_peaks_at_the_lc_resonance():
    # REFERENCES 6 [derived; circuit theory]: a choke of 10 H into 47 uF resonates at
    # 7.34 Hz; with a stiff source (0.1 ohm) and no load the impedance at the rail,
    # j w L / (1 - w^2 L C), peaks there (the 20 ohm DCR moves the peak by 1e-4). The
    # grid has 200 points a decade (1.2 %), so 1 % holds the peak.
    d = _one_rail(47e-6, link=Link("choke", inductance_h=10.0, resistance_ohm=20.0))
    circuit = case_circuit([d], HIGH_MAINS_NO_LOAD)
    freqs = np.logspace(0.0, 2.0, 401)
    z = np.abs(output_impedance(circuit, np.array([0.1]), freqs))[0, 0]
    assert freqs[np.argmax(z)] == pytest.approx(7.34, rel=0.01)
    # well above resonance the capacitor dominates: |Z| -> 1/(w C)
    assert z[-1] == pytest.approx(1.0 / (2 * math.pi * 100.0 * 47e-6), rel=0.01)
