"""Rectifier junction laws against their published forms (REFERENCES.md, "Device laws")."""

from __future__ import annotations

import numpy as np
import pytest
from numpy.testing import assert_allclose
from scipy import constants

from supplydesign.circuit.devices import (
    SILICON_LINEAR_ABOVE_A,
    child_langmuir,
    junction,
    limit_step,
    shockley,
)
from supplydesign.circuit.netlist import THERMAL_VOLTAGE_27C
from supplydesign.design import SILICON_EMISSION, SILICON_SATURATION_A, Rectifier

# A generic silicon rectifier (the shared defaults) and a valve fixed by one point.
NVT = SILICON_EMISSION * THERMAL_VOLTAGE_27C
SILICON = {"isat": np.array(SILICON_SATURATION_A), "nvt": np.array(NVT)}
VALVE = Rectifier(kind="valve", drop_v=25.0, drop_current_a=0.2)


def test_child_langmuir_halving_the_voltage():
    # Child-Langmuir: I = K·V^1.5 (C. D. Child, Phys. Rev. 32, 1911; I. Langmuir,
    # Phys. Rev. 2, 1913) [source]. Halving V gives 0.3536 × I; REFERENCES.md gives
    # four figures, so the ratio must agree to half a unit in the fourth (5e-5).
    v = np.array([0.5, 25.0, 250.0, 1000.0])
    i_full, _ = child_langmuir(v, VALVE.perveance)
    i_half, _ = child_langmuir(v / 2.0, VALVE.perveance)
    assert_allclose(i_half / i_full, 0.3536, rtol=0, atol=5e-5)


def test_child_langmuir_through_its_one_point():
    # Child-Langmuir I = K·V^1.5 [source], K fixed by one (V, I) point: the law
    # returns that point and scales by 2^1.5 when the voltage doubles (exact
    # arithmetic, so the tolerance is rounding only).
    i, _ = child_langmuir(np.array([25.0, 50.0]), VALVE.perveance)
    assert_allclose(i, [0.2, 0.2 * 2.0**1.5], rtol=1e-12)


def test_child_langmuir_conducts_nothing_in_reverse():
    # Child-Langmuir [source]: no anode current at zero or negative anode voltage
    # (a cold cathode emits nothing towards a negative anode), and no slope either.
    i, g = child_langmuir(np.array([-500.0, -1e-3, 0.0]), VALVE.perveance)
    assert np.all(i == 0.0)
    assert np.all(g == 0.0)


def test_thermal_voltage_at_300_kelvin():
    # Shockley diode law, V_T = kT/q = 25.85 mV at 300 K (W. Shockley, Bell Syst.
    # Tech. J. 28, 1949) [source]; k and q from CODATA (scipy.constants). The
    # reference gives four figures: agreement to half a unit in the last (5 µV).
    vt_300 = constants.k * 300.0 / constants.e
    assert vt_300 == pytest.approx(25.85e-3, abs=5e-6)
    # the project's constant is kT/q at 27 degC = 300.15 K, the same law
    assert THERMAL_VOLTAGE_27C * 300.0 / 300.15 == pytest.approx(25.85e-3, abs=5e-6)
    assert THERMAL_VOLTAGE_27C == pytest.approx(constants.k * 300.15 / constants.e, rel=1e-12)


def test_shockley_law_in_its_exponential_range():
    # Shockley diode law I = I_s(exp(V/(n V_T)) - 1) [source], evaluated here
    # independently with expm1; only floating-point rounding separates the two.
    v = np.array([-5.0, -0.2, 0.0, 0.1, 0.4, 0.7, 0.9, 1.1])
    i, _ = shockley(v, SILICON["isat"], SILICON["nvt"])
    assert_allclose(i, SILICON_SATURATION_A * np.expm1(v / NVT), rtol=1e-12, atol=1e-24)


def test_shockley_decade_per_n_vt_ln10():
    # Shockley diode law [source]: well above I_s the current rises tenfold for
    # each n·V_T·ln 10 of forward voltage ([derived]; 83.7 mV for n = 1.8 at
    # 27 degC). The "-1" of the law leaves a relative error of 9·I_s/I < 1e-6 here
    # (I > 0.1 A).
    v = np.array([0.8, 0.9, 1.0])
    i1, _ = shockley(v, SILICON["isat"], SILICON["nvt"])
    i2, _ = shockley(v + NVT * np.log(10.0), SILICON["isat"], SILICON["nvt"])
    assert_allclose(i2 / i1, 10.0, rtol=1e-6)


def test_shockley_reverse_current_saturates_at_minus_is():
    # Shockley diode law [source]: I -> -I_s for V << -n V_T (exp(-200/0.0466) = 0).
    i, _ = shockley(np.array([-1.0, -200.0]), SILICON["isat"], SILICON["nvt"])
    assert_allclose(i, -SILICON_SATURATION_A, rtol=1e-9)


def test_shockley_linear_continuation_joins_smoothly():
    # Beyond SILICON_LINEAR_ABOVE_A the exponential is continued by its tangent:
    # value and slope must be continuous at the knee (compared at ±1 µV, where the
    # exponential itself changes by 2e-5 relative), and the current linear above it.
    v_knee = NVT * np.log(SILICON_LINEAR_ABOVE_A / SILICON_SATURATION_A)
    dv = 1e-6
    v = np.array([v_knee - dv, v_knee + dv, v_knee + 0.5, v_knee + 1.0])
    i, g = shockley(v, SILICON["isat"], SILICON["nvt"])
    g_knee = (SILICON_LINEAR_ABOVE_A + SILICON_SATURATION_A) / NVT
    assert_allclose(i[:2], SILICON_LINEAR_ABOVE_A, rtol=1e-4)
    assert_allclose(g[:2], g_knee, rtol=1e-4)
    assert_allclose(np.diff(i[2:]) / 0.5, g_knee, rtol=1e-9)


# Junction voltages for the derivative checks, kept a safe distance (far more than
# the difference step) from the silicon knee at 1.21 V and from the valve's V = 0.
SILICON_V = np.array([-0.3, 0.0, 0.3, 0.6, 0.8, 1.0, 1.15, 1.4, 3.0])
VALVE_V = np.array([0.01, 0.5, 5.0, 25.0, 400.0])


@pytest.mark.parametrize(("law", "v", "params"), [
    ("silicon", SILICON_V, SILICON),
    ("valve", VALVE_V, {"k": np.array(VALVE.perveance)}),
])
def test_derivative_matches_central_difference(law, v, params):
    # The Newton solver needs dI/dV of the law; check it against a central
    # difference of the law itself. Step h = 1e-5 of the voltage scale (n V_T for
    # silicon, V for the valve): truncation error ~ h²/6 relative (< 1e-10), rounding
    # ~ eps/h (< 1e-10), so 1e-7 relative leaves room for neither to matter; the
    # absolute floor covers the reverse-biased silicon slope of ~1e-12 S.
    h = 1e-5 * (params["nvt"] if law == "silicon" else v)
    i_plus, _ = junction(law, v + h, params)
    i_minus, _ = junction(law, v - h, params)
    _, g = junction(law, v, params)
    assert_allclose(g, (i_plus - i_minus) / (2.0 * h), rtol=1e-7, atol=1e-15)


def test_laws_are_vectorised_over_a_batch():
    # One call serves a batch (B designs x P junctions), each with its own parameters.
    v = np.array([[0.6, 0.7], [0.6, 0.7]])
    isat = np.array([[1e-9, 1e-9], [1e-12, 1e-12]])
    nvt = np.full((2, 2), NVT)
    i, g = shockley(v, isat, nvt)
    assert i.shape == g.shape == (2, 2)
    assert_allclose(i[0] / i[1], 1e3, rtol=1e-6)  # I ∝ I_s in forward bias


def test_step_limiting_keeps_the_exponential_finite():
    # SPICE pn-junction limiting (Nagel 1975): a Newton step of +10 V on a
    # forward-biased junction becomes a logarithmic one, so the current stays finite
    # and the step still goes upward; small steps and valve anodes pass unchanged.
    v_old = np.array([0.6, 0.6])
    v_new = np.array([10.6, 0.6 + 0.5 * NVT])
    limited = limit_step("silicon", v_new, v_old, SILICON)
    assert 0.6 < limited[0] < 0.6 + 10 * NVT
    assert limited[1] == v_new[1]
    i, _ = shockley(limited, SILICON["isat"], SILICON["nvt"])
    assert np.all(np.isfinite(i))
    assert np.all(limit_step("valve", v_new, v_old, {"k": np.array(1e-3)}) == v_new)
