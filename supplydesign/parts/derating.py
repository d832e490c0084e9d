"""Ratings at temperature: resistors, electrolytic capacitors and transformer windings.

The rules by which a part's rating depends on the air around it, as functions
over arrays (temperatures in degC, powers in W, currents in A):

- **Resistors** (IEC 60115-1): the rated dissipation holds up to the rated
  ambient temperature of 70 degC and falls linearly to zero at the upper
  category temperature (a catalog column; ``DEFAULT_UPPER_C`` where none is
  given, the common figure of metal film resistors).
- **Electrolytic capacitors**: the core runs warmer than the air by I^2 ESR /
  (h A) (:func:`temperature_rise_k`), and lives the longer the cooler it runs
  (:func:`life_h`, the doubling per 10 K). The ripple current rating applies at the rated
  (upper category) temperature, where it warms the core by about
  ``RATED_RISE_K``. No credit is taken for a cooler ambient, which the makers'
  multipliers allow: the rating holds up to the rated temperature and falls
  to zero where the ambient alone would bring the core to the temperature the
  rated ripple gives there.
- **Transformer windings**: heat with the rms current. An rms or VA rating is
  used as it stands; a DC rating is turned into the rms it assumes of the load
  (:data:`ASSUMED_FORM_FACTOR`).

Caution: derated ratings come from rules of thumb and a model's figures. They do
not make a design safe; check the data sheets and follow local codes and
licensed practice.
"""

from __future__ import annotations

import numpy as np

#: ambient temperature up to which a resistor's rated power holds [degC] (IEC 60115-1)
RESISTOR_RATED_AMBIENT_C = 70.0
#: upper category temperature of a resistor where neither file nor catalog gives one
#: [degC]: the common figure of metal film resistors [practice]
DEFAULT_UPPER_C = 155.0
#: core temperature rise of an electrolytic at its rated ripple current and rated
#: temperature [K], from memory of makers' application notes (about 5 K for 105 degC
#: parts); it only sets how fast the ripple rating falls above the rated temperature
RATED_RISE_K = 5.0

#: rms current per half (whole winding for a bridge or half-wave) over the DC output
#: current that a DC rating assumes, by the load it is rated for and the arrangement.
#: Choke input [derived]: the halves of a centre-tapped winding carry the DC current
#: for half a period each (1/sqrt 2), a bridge winding carries it all the time (1).
#: Capacitor input [derived, a stated assumption]: rectangular charging pulses of 60
#: degrees per junction, the conduction of a typical reservoir: sqrt(2 pi / theta) / 2
#: = 1.22 per half, sqrt(pi / theta) = 1.73 for a bridge, sqrt(2 pi / theta) = 2.45
#: for a half-wave rectifier.
ASSUMED_FORM_FACTOR = {
    ("choke input", "full-wave"): 1.0 / np.sqrt(2.0),
    ("choke input", "bridge"): 1.0,
    ("choke input", "half-wave"): 1.0,
    ("capacitor input", "full-wave"): np.sqrt(6.0) / 2.0,
    ("capacitor input", "bridge"): np.sqrt(3.0),
    ("capacitor input", "half-wave"): np.sqrt(6.0),
}
#: the load a DC rating assumes where the file and catalog do not say
DEFAULT_RATED_FOR = "capacitor input"
#: heat transfer from a capacitor can to still air [W/(m^2 K)]: natural convection
#: (about 5, from memory of textbook values for a vertical cylinder at a rise of
#: 10-20 K) plus radiation from a sleeved can (4 eps sigma T^3 with eps = 0.9 at
#: 330 K: 7) [derived for the radiation]
HEAT_TRANSFER_W_M2K = 12.0
#: life doubles for every this many kelvin cooler [practice: the Arrhenius rule of thumb
#: of capacitor makers' application notes; IEC 60384-4 defines the endurance test]
DOUBLING_K = 10.0


def can_area_m2(diameter_m, height_m) -> np.ndarray:
    """Cooling surface of a cylindrical can: side and top [m^2] (the base sits on the
    board or chassis), ``pi d H + pi d^2 / 4``."""
    d = np.asarray(diameter_m, dtype=float)
    return np.pi * d * np.asarray(height_m, dtype=float) + np.pi * d**2 / 4.0


def temperature_rise_k(ripple_rms_a, esr_ohm, area_m2, h_w_m2k=HEAT_TRANSFER_W_M2K) -> np.ndarray:
    """Core temperature rise of a capacitor above the air around it [K].

    ``dT = I^2 ESR / (h A)``: the ESR loss leaves through the can's surface.

    Parameters
    ----------
    ripple_rms_a : array_like
        Rms ripple current [A].
    esr_ohm : array_like
        Equivalent series resistance [ohm].
    area_m2 : array_like
        Cooling surface [m^2] (:func:`can_area_m2`).
    h_w_m2k : float
        Heat transfer coefficient [W/(m^2 K)].

    References
    ----------
    .. [1] The heat balance of a body losing heat by convection and radiation,
       Newton's law of cooling with a combined coefficient h (for example
       F. P. Incropera, D. P. DeWitt, *Fundamentals of Heat and Mass Transfer*,
       Wiley, ch. 1), from memory.
    """
    i = np.asarray(ripple_rms_a, dtype=float)
    return i**2 * np.asarray(esr_ohm, dtype=float) / (h_w_m2k * np.asarray(area_m2, dtype=float))


def life_h(rated_life_h, rated_c, core_c) -> np.ndarray:
    """Estimated life of an electrolytic capacitor [h].

    ``L = L_r 2^((T_r - T_core) / 10 K)``: the rated endurance ``L_r`` at the
    rated temperature ``T_r``, doubled for every 10 K the core runs cooler.

    References
    ----------
    .. [1] The Arrhenius-based "10 degree rule" of capacitor makers' application
       notes [practice; no standard states it]; IEC 60384-4 defines the
       endurance test at the rated temperature that gives ``L_r``.
    """
    return np.asarray(rated_life_h, dtype=float) * 2.0 ** (
        (np.asarray(rated_c, dtype=float) - np.asarray(core_c, dtype=float)) / DOUBLING_K)


def capacitor_heat(ripple_rms_a, esr_ohm, diameter_m, height_m, rated_life_h, rated_c,
                   ambient_c) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """A capacitor's core rise [K], core temperature [degC] and estimated life [h].

    The rise is NaN without a can size (the core is then taken at the air
    temperature), the life NaN without rated life and temperature. Arguments
    broadcast together (:func:`temperature_rise_k`, :func:`life_h`).
    """
    rise = temperature_rise_k(ripple_rms_a, esr_ohm, can_area_m2(diameter_m, height_m))
    core = np.asarray(ambient_c, dtype=float) + np.nan_to_num(rise, nan=0.0)
    return rise, core, life_h(rated_life_h, rated_c, core)


def resistor_derating(ambient_c, upper_c=DEFAULT_UPPER_C) -> np.ndarray:
    """Share of a resistor's rated power it may dissipate at an ambient temperature.

    1 up to 70 degC, falling linearly to 0 at the upper category temperature:
    ``(T_upper - T_a) / (T_upper - 70)`` between them, 0 beyond.

    Parameters
    ----------
    ambient_c : array_like
        Air temperature around the resistor [degC].
    upper_c : array_like
        Upper category temperature [degC]; NaN takes :data:`DEFAULT_UPPER_C`.

    Returns
    -------
    numpy.ndarray
        The share, between 0 and 1.

    References
    ----------
    .. [1] IEC 60115-1, *Fixed resistors for use in electronic equipment - Part 1:
       Generic specification*, the derating curve of rated dissipation against
       ambient temperature (rated ambient temperature 70 degC), from memory.
    """
    upper = np.where(np.isnan(np.asarray(upper_c, dtype=float)), DEFAULT_UPPER_C, upper_c)
    span = np.maximum(upper - RESISTOR_RATED_AMBIENT_C, 1e-9)
    return np.clip((upper - np.asarray(ambient_c, dtype=float)) / span, 0.0, 1.0)


def ripple_derating(ambient_c, rated_c) -> np.ndarray:
    """Share of an electrolytic's ripple current rating available at an ambient temperature.

    The rating applies at the rated temperature ``T_r``, where the rated current
    warms the core by ``RATED_RISE_K``; the core heats with the square of the
    current, so the current that keeps the core at ``T_r + RATED_RISE_K`` is
    ``sqrt((T_r + RATED_RISE_K - T_a) / RATED_RISE_K)`` of the rating, taken here
    at most 1 (no credit for a cooler ambient) and 0 when the ambient alone
    reaches that core temperature.

    Parameters
    ----------
    ambient_c : array_like
        Air temperature around the capacitor [degC].
    rated_c : array_like
        Rated (upper category) temperature [degC]; NaN: not known, share 1.

    Returns
    -------
    numpy.ndarray
        The share, between 0 and 1.

    References
    ----------
    .. [1] Heat balance of the can, dT = I^2 ESR / (h A) (see
       :func:`supplydesign.evaluation.heatlife.temperature_rise_k`) [derived];
       the rise at rated ripple from makers' application notes, from memory.
    """
    rated = np.asarray(rated_c, dtype=float)
    room = (rated + RATED_RISE_K - np.asarray(ambient_c, dtype=float)) / RATED_RISE_K
    share = np.sqrt(np.clip(room, 0.0, 1.0))
    return np.where(np.isnan(rated), 1.0, share)


def assumed_form_factor(rated_for, arrangement) -> np.ndarray:
    """Rms winding current per DC output current that a DC current rating assumes.

    Parameters
    ----------
    rated_for : array_like of str or None
        "capacitor input" or "choke input"; None takes :data:`DEFAULT_RATED_FOR`.
    arrangement : array_like of str
        "full-wave", "bridge" or "half-wave".
    """
    load = np.atleast_1d(np.asarray(rated_for, dtype=object))
    arr = np.atleast_1d(np.asarray(arrangement, dtype=object))
    load, arr = np.broadcast_arrays(load, arr)
    return np.array([ASSUMED_FORM_FACTOR[(lo or DEFAULT_RATED_FOR, a)]
                     for lo, a in zip(load.ravel(), arr.ravel(), strict=True)]).reshape(load.shape)


def halves(winding) -> np.ndarray:
    """Winding halves: 2 for a centre-tapped winding, 1 for a single one."""
    return np.where(np.asarray(winding, dtype=object) == "center-tapped", 2, 1)


def winding_rms_rating(rated_rms_a, rated_va, open_circuit_v, winding, rated_dc_a, rated_for,
                       arrangement) -> tuple[np.ndarray, np.ndarray]:
    """The rms current one half (or the whole single winding) may carry, and its basis.

    In this order: the rms rating as given; the VA rating over the open-circuit
    voltage of all halves (``VA / (halves V_oc)``); the DC rating times the form
    factor it assumes (:func:`assumed_form_factor`). NaN where none is given.

    Parameters
    ----------
    rated_rms_a, rated_va, rated_dc_a : array_like
        The ratings [A, VA, A]; NaN where not given.
    open_circuit_v : array_like
        Open-circuit rms voltage per half [V].
    winding, rated_for, arrangement : array_like of str
        As in the design file.

    Returns
    -------
    (numpy.ndarray, numpy.ndarray)
        The rms rating per half [A] and its basis per design: "rms", "VA", "DC" or "".
    """
    rms = np.asarray(rated_rms_a, dtype=float)
    va = np.asarray(rated_va, dtype=float)
    dc = np.asarray(rated_dc_a, dtype=float)
    from_va = va / (halves(winding) * np.asarray(open_circuit_v, dtype=float))
    from_dc = dc * assumed_form_factor(rated_for, arrangement)
    out = np.where(np.isfinite(rms), rms, np.where(np.isfinite(va), from_va, from_dc))
    basis = np.where(np.isfinite(rms), "rms", np.where(np.isfinite(va), "VA",
                                                        np.where(np.isfinite(dc), "DC", "")))
    return out, basis.astype(object)
