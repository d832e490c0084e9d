"""IEC 60063 preferred numbers: the E3 ... E192 series and rounding onto them.

E3, E6, E12 and E24 are tables (eight E24 values differ from plain rounding of
10^(n/24), so no formula gives them). E48, E96 and E192 are 10^(n/m) rounded to
three significant figures in decimal arithmetic, with one exception in E192
(n = 185 is 9.20, not 9.19).

Values are built from integer mantissas in hundredths (``470`` for 4.70) and
scaled by an exact power of ten, so ``values("E6", ...)`` gives the same float
as the literal ``4.7e-6``.

References
----------
.. [1] IEC 60063:2015, "Preferred number series for resistors and capacitors",
   International Electrotechnical Commission.
"""

from __future__ import annotations

from decimal import ROUND_HALF_UP, Decimal, localcontext
from functools import cache

import numpy as np

E24_HUNDREDTHS = (100, 110, 120, 130, 150, 160, 180, 200, 220, 240, 270, 300,
                  330, 360, 390, 430, 470, 510, 560, 620, 680, 750, 820, 910)
E3_HUNDREDTHS = (100, 220, 470)

# Series defined by the IEC 60063 tables: name -> mantissas in hundredths.
TABLE_SERIES: dict[str, tuple[int, ...]] = {
    "E3": E3_HUNDREDTHS,
    "E6": E24_HUNDREDTHS[::4],
    "E12": E24_HUNDREDTHS[::2],
    "E24": E24_HUNDREDTHS,
}
# Series defined by the formula: name -> number of steps per decade.
FORMULA_SERIES: dict[str, int] = {"E48": 48, "E96": 96, "E192": 192}
# Where the standard departs from the formula: (series, n) -> hundredths.
FORMULA_EXCEPTIONS: dict[tuple[str, int], int] = {("E192", 185): 920}

SERIES_NAMES = tuple(TABLE_SERIES) + tuple(FORMULA_SERIES)

# Relative slack when deciding whether a value already lies on the series,
# so that 47e-6 parsed from "47 uF" counts as the E6 value 47 uF.
REL_TOL = 1e-9


def formula_hundredths(n: int, steps: int) -> int:
    """Mantissa of 10^(n/steps) rounded to three figures, in hundredths.

    Computed in 40-digit decimal arithmetic, rounding halves up, so that values
    near a rounding boundary (10^(11/48) = 1.69499 ...) are not decided by
    binary floating-point error.

    Parameters
    ----------
    n : int
        Index within the decade, 0 <= n < steps.
    steps : int
        Values per decade (48, 96, 192).

    Returns
    -------
    int
        The rounded mantissa times 100 (169 for 1.69).
    """
    with localcontext() as ctx:
        ctx.prec = 40
        value = Decimal(10) ** (Decimal(n) / Decimal(steps))
        return int((value * 100).quantize(Decimal(1), rounding=ROUND_HALF_UP))


def _check_name(name: str) -> str:
    key = name.strip().upper() if isinstance(name, str) else name
    if key not in SERIES_NAMES:
        raise ValueError(f"unknown E-series {name!r}; expected one of {', '.join(SERIES_NAMES)}")
    return key


@cache
def _hundredths(name: str) -> tuple[int, ...]:
    key = _check_name(name)
    if key in TABLE_SERIES:
        return TABLE_SERIES[key]
    steps = FORMULA_SERIES[key]
    return tuple(FORMULA_EXCEPTIONS.get((key, n), formula_hundredths(n, steps))
                 for n in range(steps))


def series(name: str) -> np.ndarray:
    """The mantissas of one decade of an E-series, in [1, 10).

    Parameters
    ----------
    name : str
        "E3", "E6", "E12", "E24", "E48", "E96" or "E192".

    Returns
    -------
    numpy.ndarray
        Ascending mantissas (``series("E6")`` is 1.0 1.5 2.2 3.3 4.7 6.8).

    Raises
    ------
    ValueError
        For an unknown series name.

    References
    ----------
    .. [1] IEC 60063:2015, "Preferred number series for resistors and capacitors".
    """
    return np.asarray(_hundredths(name), dtype=float) / 100.0


def _scale(hundredths: np.ndarray, exponent: np.ndarray) -> np.ndarray:
    """hundredths * 10**exponent, correctly rounded (exact powers of ten up to 1e22)."""
    e = np.asarray(exponent, dtype=float) - 2.0
    m = np.asarray(hundredths, dtype=float)
    return np.where(e >= 0, m * 10.0 ** np.abs(e), m / 10.0 ** np.abs(e))


def values(name: str, lo: float, hi: float) -> np.ndarray:
    """All values of a series in the closed range [lo, hi], over as many decades as needed.

    Parameters
    ----------
    name : str
        Series name ("E6", "E24", ...).
    lo, hi : float
        Range limits, 0 < lo <= hi, in any unit (the result is in the same unit).
        A limit that lies on the series (within a relative 1e-9) is included.

    Returns
    -------
    numpy.ndarray
        Ascending values; empty if no series value lies in the range.
    """
    if not (np.isfinite(lo) and np.isfinite(hi) and 0 < lo <= hi):
        raise ValueError(f"expected 0 < lo <= hi, got lo={lo!r}, hi={hi!r}")
    mant = np.asarray(_hundredths(name))
    k_lo = int(np.floor(np.log10(lo))) - 1
    k_hi = int(np.floor(np.log10(hi))) + 1
    exps = np.arange(k_lo, k_hi + 1)
    grid = _scale(mant[None, :], exps[:, None]).ravel()
    keep = (grid >= lo * (1 - REL_TOL)) & (grid <= hi * (1 + REL_TOL))
    return grid[keep]


def _decade(name: str, x) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Series mantissas (hundredths), x, its decade exponent and mantissa x/10^k in [1, 10)."""
    mant = np.asarray(_hundredths(name))
    x = np.asarray(x, dtype=float)
    if np.any(~np.isfinite(x) | (x <= 0)):
        raise ValueError("E-series rounding needs finite positive values")
    k = np.floor(np.log10(x))
    return mant, x, k, x / 10.0**k


def next_up(name: str, x):
    """The smallest series value >= x (x itself when x lies on the series).

    Parameters
    ----------
    name : str
        Series name.
    x : float or array_like
        Positive values.

    Returns
    -------
    float or numpy.ndarray
        A float (numpy.float64) for a scalar ``x``, else an array of its shape.
    """
    mant, x, k, m = _decade(name, x)
    ext = np.append(mant, 1000)  # the next decade's 1.00
    idx = np.searchsorted(ext / 100.0, m * (1 - REL_TOL), side="left")
    return _scale(ext[idx], k)[()]


def next_down(name: str, x):
    """The largest series value <= x (x itself when x lies on the series).

    Parameters and result as for :func:`next_up`.
    """
    mant, x, k, m = _decade(name, x)
    idx = np.searchsorted(mant / 100.0, m * (1 + REL_TOL), side="right") - 1
    below = idx < 0  # only when float error puts m just under 1.0
    return _scale(mant[np.where(below, -1, idx)], k - below)[()]


def nearest(name: str, x):
    """The series value nearest to x in ratio (log) terms; a tie goes to the upper value.

    The E-series are geometric, so "nearest" is measured as |log(v/x)|: 1.2 lies
    between E6 1.0 and 1.5 and rounds to 1.0 (ratio 1.2) rather than 1.5 (1.25).
    Parameters and result as for :func:`next_up`.
    """
    up = np.asarray(next_up(name, x))
    down = np.asarray(next_down(name, x))
    x = np.asarray(x, dtype=float)
    take_up = np.log(up / x) <= np.log(x / down)
    return np.where(take_up, up, down)[()]


#: The tolerance IEC 60063 associates with each series (a fraction): E6 ±20 %,
#: E12 ±10 %, E24 ±5 %, E48 ±2 %, E96 ±1 %, E192 ±0.5 %.
SERIES_TOLERANCE: dict[str, float] = {"E6": 0.20, "E12": 0.10, "E24": 0.05, "E48": 0.02,
                                      "E96": 0.01, "E192": 0.005}


def on_series(name: str, x: float) -> bool:
    """Whether ``x`` (> 0) is a value of the series (within a relative 1e-9)."""
    return bool(np.isclose(next_down(name, x), x, rtol=REL_TOL, atol=0.0)
                or np.isclose(next_up(name, x), x, rtol=REL_TOL, atol=0.0))


def series_of(x: float, coarsest: str = "E6") -> str | None:
    """The coarsest series of :data:`SERIES_TOLERANCE`, from ``coarsest`` on, that holds ``x``.

    A value lies on several series (4.7 is in E6, E12 and E24); which one a part
    is made to depends on its kind: an electrolytic of 47 µF is an E6 part (±20 %),
    a resistor of 4.7 kΩ is made to E24 (±5 %) and finer. ``coarsest`` is the
    kind's first series; None when no series from it on holds the value.

    Parameters
    ----------
    x : float
        The value (any unit), > 0.
    coarsest : str
        First series to try ("E6" for capacitors, "E24" for resistors).

    Returns
    -------
    str or None
        The series name; its tolerance is ``SERIES_TOLERANCE[name]``.

    References
    ----------
    .. [1] IEC 60063:2015, "Preferred number series for resistors and capacitors",
       International Electrotechnical Commission (the series and their tolerances).
    """
    names = list(SERIES_TOLERANCE)
    for name in names[names.index(_check_name(coarsest)):]:
        if on_series(name, x):
            return name
    return None
