"""Ratings at temperature: resistors, electrolytic capacitors and transformer windings.

The rules by which a part's rating depends on the air around it, as functions
over arrays (temperatures in degC, powers in W, currents in A):

- **Resistors** (IEC 60115-1): the rated dissipation holds up to the rated
  ambient temperature of 70 degC and falls linearly to zero at the upper
  category temperature (a catalog column; ``DEFAULT_UPPER_C`` where none is
  given, the common figure of metal film resistors).
- **Electrolytic capacitors**: the ripple current rating applies at the rated
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
