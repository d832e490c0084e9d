"""Closed-form laws of filter sections and of capacitor discharge, vectorised.

These are the textbook relations the worst-case report quotes beside the
simulated figures: the critical inductance of a choke input, the resonance and
damping of an LC section, the choke-input DC output, and the RC discharge of a
capacitor through a bleeder.
"""

from __future__ import annotations

import numpy as np

#: voltage below which a capacitor counts as discharged [V] (IEC 60204-1, 6.2.4)
SAFE_VOLTAGE_V = 60.0
#: the time IEC 60204-1 allows to reach it [s]; amplifier practice is often gentler
DISCHARGE_TARGET_S = 5.0
#: the quality factor practice aims at for an LC section: near critical damping
Q_PRACTICE = 0.5
#: above this the section's response peaks clearly at resonance: a warning
Q_WARNING = 1.0


def critical_inductance_h(r_load_ohm, frequency_hz, arrangement="full-wave"):
    """Least inductance that keeps a choke input in continuous conduction.

    .. math:: L_c = \\frac{R_L}{3\\omega} \\quad\\text{(full-wave, bridge)}, \\qquad
              L_c = \\frac{\\pi R_L}{2\\omega} \\quad\\text{(half-wave)}

    with :math:`\\omega = 2\\pi f` of the mains. Conduction stays continuous while
    the peak of the ripple current does not exceed the DC: the ripple current is
    the first ripple harmonic of the rectified sine over the choke's reactance
    (amplitude 4V_p/3π at 2ω for full-wave, V_p/2 at ω for half-wave), the DC the
    mean (2V_p/π, V_p/π) over R_L.

    Parameters
    ----------
    r_load_ohm : array_like
        DC load resistance the choke feeds, V_dc / I_dc [ohm] (``inf``: no load).
    frequency_hz : array_like
        Mains frequency [Hz].
    arrangement : str
        "full-wave", "bridge" or "half-wave".

    Returns
    -------
    numpy.ndarray
        Critical inductance [H].

    References
    ----------
    .. [1] Wikipedia, "Ripple (electrical)", section on choke-input filters
       (L_c = R_L / 3ω).
    """
    omega = 2.0 * np.pi * np.asarray(frequency_hz, dtype=float)
    r = np.asarray(r_load_ohm, dtype=float)
    factor = np.pi / 2.0 if arrangement == "half-wave" else 1.0 / 3.0
    return factor * r / omega


def min_conduction_current_a(v_dc, inductance_h, frequency_hz, arrangement="full-wave"):
    """Least DC current that keeps a choke input of inductance L in conduction [A].

    The same condition as :func:`critical_inductance_h` solved for the current:
    I_min = V_dc / (3ωL) (full-wave, bridge) or 2V_dc / (πωL) (half-wave).
    """
    omega = 2.0 * np.pi * np.asarray(frequency_hz, dtype=float)
    factor = 2.0 / np.pi if arrangement == "half-wave" else 3.0
    return np.asarray(v_dc, dtype=float) / (factor * omega * np.asarray(inductance_h))


def choke_input_dc_v(v_rms, current_a=0.0, resistance_ohm=0.0):
    """DC output of a full-wave choke input in continuous conduction [V].

    .. math:: V_{dc} = \\frac{2\\sqrt{2}}{\\pi} V_{rms} - I R

    with R the choke's DC resistance plus the winding and rectifier resistance.

    References
    ----------
    .. [1] Wikipedia, "Ripple (electrical)".
    .. [2] N. Crowhurst, *Basic Audio*, vol. 3 (1959).
    """
    return (2.0 * np.sqrt(2.0) / np.pi * np.asarray(v_rms, dtype=float)
            - np.asarray(current_a) * np.asarray(resistance_ohm))


def lc_section(inductance_h, capacitance_f, r_series_ohm=0.0, r_load_ohm=np.inf):
    """Resonance and quality factor of an LC section with losses and a resistive load.

    The section is a series L with resistance R (choke DCR plus capacitor ESR)
    feeding C in parallel with a load resistance R_L. From the source to the
    capacitor,

    .. math:: H(s) = \\frac{1}{LC s^2 + (L/R_L + RC) s + 1 + R/R_L}

    so that

    .. math:: \\omega_0 = \\sqrt{\\frac{1 + R/R_L}{LC}}, \\qquad
              Q = \\frac{\\sqrt{LC (1 + R/R_L)}}{L/R_L + RC}

    which gives the series-RLC Q = √(L/C)/R for R_L → ∞ and the parallel Q =
    R_L √(C/L) for R → 0, and f0 = 1/(2π√(LC)) for both.

    Parameters
    ----------
    inductance_h, capacitance_f : array_like
        L [H] and C [F].
    r_series_ohm : array_like
        Series resistance R [ohm].
    r_load_ohm : array_like
        Load resistance R_L [ohm]; ``inf`` for a constant-current or no load.

    Returns
    -------
    f0_hz, q : numpy.ndarray
        Resonance frequency [Hz] and quality factor (dimensionless).

    References
    ----------
    .. [1] Wikipedia, "Ripple (electrical)" (f0 of an LC section).
    .. [2] Wikipedia, "RLC circuit" (series and parallel Q).
    """
    L = np.asarray(inductance_h, dtype=float)
    C = np.asarray(capacitance_f, dtype=float)
    R = np.asarray(r_series_ohm, dtype=float)
    G = 1.0 / np.asarray(r_load_ohm, dtype=float)  # load conductance, 0 for inf
    k = 1.0 + R * G
    f0 = np.sqrt(k / (L * C)) / (2.0 * np.pi)
    with np.errstate(divide="ignore"):
        q = np.sqrt(L * C * k) / (L * G + R * C)
    return f0, q


def ripple_frequency_hz(frequency_hz, arrangement="full-wave"):
    """Fundamental of the rectified ripple [Hz]: twice the mains for full-wave and
    bridge, the mains itself for half-wave."""
    return np.asarray(frequency_hz, dtype=float) * (1.0 if arrangement == "half-wave" else 2.0)


def reservoir_ripple_rms_v(current_a, capacitance_f, frequency_hz, arrangement="full-wave"):
    """Rms ripple on a capacitor-input reservoir feeding a constant current [V].

    .. math:: V_{rms} \\approx \\frac{I}{4\\sqrt{3} f C} \\ \\text{(full-wave, bridge)},
              \\qquad \\frac{I}{2\\sqrt{3} f C} \\ \\text{(half-wave)}

    the sawtooth of a linear discharge over the whole ripple period (peak-to-peak
    I / (2fC) or I / (fC)). It over-estimates, since the capacitor recharges for
    part of the period (about +12 % at ωRC ≈ 50).

    References
    ----------
    .. [1] P. Horowitz, W. Hill, *The Art of Electronics*, 3rd ed. (2015), §1.6.3.
    .. [2] Wikipedia, "Ripple (electrical)".
    """
    f_r = ripple_frequency_hz(frequency_hz, arrangement)
    return np.asarray(current_a, dtype=float) / (2.0 * np.sqrt(3.0) * f_r
                                                 * np.asarray(capacitance_f, dtype=float))


def choke_input_ripple_rms_v(v_dc, inductance_h, capacitance_f, frequency_hz):
    """Rms ripple after the first LC section of a full-wave choke input [V].

    .. math:: V_{rms} = \\gamma V_{dc}, \\qquad
              \\gamma = \\frac{\\sqrt{2}}{3(\\omega_r^2 LC - 1)}, \\quad \\omega_r = 2\\pi \\cdot 2f

    (the second harmonic of the rectified sine, amplitude 4V_p/3π, through the
    section; higher harmonics neglected).

    References
    ----------
    .. [1] Wikipedia, "Ripple (electrical)", choke-input filter.
    """
    w_r = 2.0 * np.pi * ripple_frequency_hz(frequency_hz)
    lc = np.asarray(inductance_h, dtype=float) * np.asarray(capacitance_f, dtype=float)
    with np.errstate(divide="ignore"):
        gamma = np.sqrt(2.0) / (3.0 * np.abs(w_r**2 * lc - 1.0))
    return gamma * np.asarray(v_dc, dtype=float)


def rc_attenuation(resistance_ohm, capacitance_f, omega_rad_s):
    """Ripple gain |H| of an RC section feeding a constant-current load (R_L → ∞).

    .. math:: |H| = \\frac{1}{\\sqrt{1 + (\\omega R C)^2}} \\approx \\frac{1}{\\omega R C}

    References
    ----------
    .. [1] Circuit theory: the voltage divider of R and 1/(jωC); see REFERENCES.md,
       "Rectifier and filter formulas" 6.
    """
    x = (np.asarray(omega_rad_s, dtype=float) * np.asarray(resistance_ohm, dtype=float)
         * np.asarray(capacitance_f, dtype=float))
    return 1.0 / np.sqrt(1.0 + x**2)


def lc_attenuation(inductance_h, capacitance_f, omega_rad_s):
    """Ripple gain |H| of a lossless LC section feeding a constant-current load.

    .. math:: |H| = \\frac{1}{|1 - \\omega^2 L C|}

    (above the resonance 1/√(LC) it falls as 1/(ω²LC); near it the lossless form
    grows without bound, and the section's losses, not modelled here, limit it).

    References
    ----------
    .. [1] Circuit theory; see REFERENCES.md, "Rectifier and filter formulas" 6.
    """
    x = (np.asarray(omega_rad_s, dtype=float) ** 2 * np.asarray(inductance_h, dtype=float)
         * np.asarray(capacitance_f, dtype=float))
    with np.errstate(divide="ignore"):
        return 1.0 / np.abs(1.0 - x)


def discharge_time_s(capacitance_f, resistance_ohm, v0, v_safe=SAFE_VOLTAGE_V):
    """Time for a capacitor to fall from v0 to v_safe through a resistance [s].

    .. math:: t = R C \\ln(V_0 / V_{safe})

    Zero when v0 is already at or below v_safe.

    References
    ----------
    .. [1] IEC 60204-1, §6.2.4 (60 V within 5 s); the RC law is circuit theory.
    """
    v0 = np.asarray(v0, dtype=float)
    ratio = np.maximum(v0 / v_safe, 1.0)
    return np.asarray(resistance_ohm) * np.asarray(capacitance_f) * np.log(ratio)


def max_bleeder_ohm(t_s, capacitance_f, v0, v_safe=SAFE_VOLTAGE_V):
    """Largest bleeder that discharges C from v0 to v_safe within t [ohm].

    .. math:: R \\le \\frac{t}{C \\ln(V_0 / V_{safe})}

    ``inf`` when v0 is already at or below v_safe.

    References
    ----------
    .. [1] IEC 60204-1, §6.2.4 (60 V within 5 s).
    """
    v0 = np.asarray(v0, dtype=float)
    with np.errstate(divide="ignore"):
        return np.asarray(t_s) / (np.asarray(capacitance_f)
                                  * np.log(np.maximum(v0 / v_safe, 1.0)))
