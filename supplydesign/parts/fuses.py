"""Fuse ratings: the preferred current ratings and the rules of the suggestion.

Cartridge fuse ratings (IEC 60127) follow the R10 series of preferred numbers
(ISO 3): 1, 1.25, 1.6, 2, 2.5, 3.15, 4, 5, 6.3, 8 in each decade. The tool
suggests time-lag fuses (IEC 60127 "T"), whose slow element rides the switch-on
surge of a reservoir capacitor:

- the rating is at least ``RMS_FACTOR`` times the rms current the fuse carries
  at high mains and full signal (fuse makers load a fuse to about three quarters
  of its rating in continuous service, and a chassis is warm) [practice];
- the switch-on surge's I^2 t is at most ``SURGE_SHARE`` of the fuse's melting
  I^2 t, so that thousands of switch-ons do not age the element [memory: fuse
  makers' application notes derate repeated pulses to 20-40 % of the melting
  I^2 t];
- the melting I^2 t of a time-lag 5 x 20 mm fuse is taken as
  ``MELTING_I2T_S`` times the square of its rating [memory: typical makers' data
  of time-lag fuses lie near 2-5 I_n^2 A^2 s; IEC 60127-2 sheet 3 asks a
  pre-arcing time of 10-100 ms at ten times the rating, that is I^2 t between
  1 and 10 I_n^2 A^2 s].

Caution: these are rules of thumb. Fuse choice follows the fuse maker's data
sheet (melting I^2 t, ambient derating, breaking capacity, voltage rating) and
local electrical codes; a suggested fuse does not make a design safe.
"""

from __future__ import annotations

import numpy as np

#: the R10 series of ISO 3 in one decade, as the standard rounds it
R10 = (1.00, 1.25, 1.60, 2.00, 2.50, 3.15, 4.00, 5.00, 6.30, 8.00)
#: the ratings suggested [A]: R10 values from 50 mA to 16 A
RATINGS_A = tuple(round(m * 10.0**e, 4) for e in (-2, -1, 0, 1) for m in R10
                  if 0.05 - 1e-9 <= m * 10.0**e <= 16.0 + 1e-9)
#: rating over the rms current at high mains and full signal [practice]
RMS_FACTOR = 1.5
#: largest share of the melting I^2 t a switch-on surge may take [memory]
SURGE_SHARE = 0.3
#: typical melting I^2 t of a time-lag fuse per square of its rating [s, memory]
MELTING_I2T_S = 3.0
#: the caution every fuse suggestion carries
FUSE_CAUTION = ("Fuse choice follows the fuse maker's data (melting I²t, derating with "
                "temperature, breaking capacity, voltage rating) and your local electrical "
                "codes; a suggested fuse does not make a design safe.")


def melting_i2t(rating_a) -> np.ndarray:
    """Typical melting I^2 t of a time-lag fuse of this rating [A^2 s] (see module notes)."""
    return MELTING_I2T_S * np.asarray(rating_a, dtype=float) ** 2


def least_for_surge_a(surge_i2t) -> np.ndarray:
    """The least rating whose typical melting I^2 t takes the surge at ``SURGE_SHARE`` [A]."""
    return np.sqrt(np.asarray(surge_i2t, dtype=float) / (SURGE_SHARE * MELTING_I2T_S))


def time_lag_rating(rms_a, surge_i2t=np.nan) -> np.ndarray:
    """The smallest rating of :data:`RATINGS_A` for a running current and a surge.

    Parameters
    ----------
    rms_a : array_like
        Rms current through the fuse at high mains and full signal [A].
    surge_i2t : array_like
        I^2 t of the switch-on surge through the fuse [A^2 s]; NaN: not known
        (the rating follows the rms alone).

    Returns
    -------
    numpy.ndarray
        The rating [A]; NaN where even the largest rating is too small.
    """
    need = np.fmax(RMS_FACTOR * np.asarray(rms_a, dtype=float), least_for_surge_a(surge_i2t))
    table = np.asarray(RATINGS_A)
    k = np.searchsorted(table, need * (1.0 - 1e-9))
    return np.where(k < table.size, table[np.minimum(k, table.size - 1)], np.nan)


def rating_text(rating_a: float) -> str:
    """"800 mA" or "1.25 A"."""
    if not np.isfinite(rating_a):
        return "—"
    if rating_a < 1.0:
        return f"{rating_a * 1e3:.0f} mA"
    return f"{rating_a:g} A"
