"""The one pint registry and the parsing of quantities written as strings.

Every quantity in a file is a string with units ("47 uF", "2.2 kohm"); it is
converted once, at the file boundary, to a plain SI float. Nothing downstream
sees pint.
"""

from __future__ import annotations

import math
import re
from functools import lru_cache

from .errors import UserError

# dimension name -> (SI unit string, human word used in messages)
DIMENSIONS: dict[str, tuple[str, str]] = {
    "voltage": ("volt", "a voltage such as '420 V'"),
    "current": ("ampere", "a current such as '150 mA'"),
    "resistance": ("ohm", "a resistance such as '2.2 kohm'"),
    "capacitance": ("farad", "a capacitance such as '47 uF'"),
    "inductance": ("henry", "an inductance such as '10 H'"),
    "frequency": ("hertz", "a frequency such as '50 Hz'"),
    "power": ("watt", "a power such as '5 W'"),
    "time": ("second", "a time such as '30 s'"),
    "fraction": ("", "a percentage such as '10 %'"),
    # temperatures are kept in degrees Celsius (the unit of the parts' data sheets and of
    # IEC 60115-1 and IEC 60384-4), named ``_c``; differences of them in kelvin (``_k``)
    "temperature": ("degC", "a temperature such as '40 degC'"),
    "length": ("meter", "a length such as '35 mm'"),
    # a part's life, kept in hours (``_h``), the unit of endurance ratings
    "lifetime": ("hour", "a time such as '5000 h'"),
    "apparent_power": ("volt_ampere", "an apparent power such as '60 VA'"),
    # hours of use per day as a share of the day (4 h/day -> 1/6)
    "duty": ("", "hours of use per day such as '4 h/day'"),
}


@lru_cache(maxsize=1)
def registry():
    """The project's single pint UnitRegistry (created lazily, on first use)."""
    import pint

    ureg = pint.UnitRegistry(autoconvert_offset_to_baseunit=True)
    # "%" is defined by pint >= 0.21 as 0.01; make sure of it for older ones.
    try:
        ureg.Quantity("1 %")
    except Exception:  # pragma: no cover - depends on the pint version
        ureg.define("percent = 0.01 = %")
    return ureg


#: "<number> <unit>" with a single-word unit, the form nearly every file uses
_SIMPLE = re.compile(r"\s*([+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)\s*([^\W\d_]+|%)\s*")


@lru_cache(maxsize=512)
def _unit_factor(unit: str, dimension: str) -> float | None:
    """The factor from ``unit`` to the SI unit of ``dimension``; None when the unit is
    unknown, of another dimension or not a plain factor (an offset such as degC)."""
    si_unit = DIMENSIONS[dimension][0]
    ureg = registry()
    try:
        one, zero = (ureg.Quantity(v, unit).to(si_unit).magnitude for v in (1.0, 0.0))
    except Exception:
        return None
    if zero != 0.0 or not isinstance(one, float) or not math.isfinite(one) or one == 0.0:
        return None
    return one


def parse_quantity(text: object, dimension: str, *, file: str | None = None,
                   key: str | None = None) -> float:
    """Parse ``text`` (a string with units) into a SI float of ``dimension``.

    Parameters
    ----------
    text : str
        The value as written in the file, for example ``"47 uF"``.
    dimension : str
        One of :data:`DIMENSIONS` (``"capacitance"``, ``"fraction"``, ...).

    Returns
    -------
    float
        The value in SI base units (F, V, A, ohm, H, Hz, W, s; a fraction for
        percentages, so "10 %" gives 0.1).

    Raises
    ------
    UserError
        For a bare number, an unknown unit, the wrong dimension or a value that
        is not finite.
    """
    word = DIMENSIONS[dimension][1]
    if isinstance(text, bool) or not isinstance(text, str):
        if isinstance(text, int | float):
            raise UserError(f"expected {word} (a string with a unit), got the bare number {text!r}",
                            file, key)
        raise UserError(f"expected {word}, got {type(text).__name__} {text!r}", file, key)
    stripped = text.strip()
    if not stripped:
        raise UserError(f"expected {word}, got an empty string", file, key)
    simple = _SIMPLE.fullmatch(stripped)
    if simple is not None:
        # a number and one unit word: the unit's factor once per unit, not a pint parse per
        # value (the same float as pint's after the rounding below; anything else, and
        # every error, takes pint's path)
        factor = _unit_factor(simple.group(2), dimension)
        if factor is not None:
            value = float(simple.group(1)) * factor
            if math.isfinite(value):
                return float(f"{value:.15g}")
    return pint_value(stripped, dimension, file=file, key=key)


def pint_value(text: str, dimension: str, *, file: str | None = None,
               key: str | None = None) -> float:
    """:func:`parse_quantity` through pint's own parser (every form pint reads, and the
    error messages); ``text`` is stripped and not empty."""
    si_unit, word = DIMENSIONS[dimension]
    ureg = registry()
    try:
        q = ureg.Quantity(text)
    except Exception:
        raise UserError(f"expected {word}, could not read {text!r}", file, key) from None
    magnitude = q.magnitude
    if not isinstance(magnitude, int | float):
        raise UserError(f"expected {word}, got {text!r}", file, key)
    if q.dimensionless and q.units == ureg.dimensionless:
        # A bare number: only fractions given as bare numbers would be ambiguous too.
        raise UserError(f"expected {word}, got {text!r} without a unit", file, key)
    try:
        value = float(q.to(si_unit).magnitude) if si_unit else float(q.to("").magnitude)
    except Exception:
        raise UserError(f"expected {word}, got {text!r} ({q.dimensionality})", file, key) from None
    if not math.isfinite(value):
        raise UserError(f"expected {word}, got the non-finite value {text!r}", file, key)
    # 15 significant figures drop the binary noise of the unit factor ("9 mH" would be
    # 0.009000000000000001), as the catalog reader does: a value typed in a design and the
    # same value read from a catalog are then the same float.
    return float(f"{value:.15g}")


def format_si(value: float, unit: str, digits: int = 3) -> str:
    """Format a SI float with an engineering prefix: ``format_si(4.7e-5, "F") == "47 µF"``."""
    if value is None or not math.isfinite(value):
        return "—"
    if value == 0:
        return f"0 {unit}"
    prefixes = {-12: "p", -9: "n", -6: "µ", -3: "m", 0: "", 3: "k", 6: "M"}
    exp3 = int(math.floor(math.log10(abs(value)) / 3) * 3)
    exp3 = max(-12, min(6, exp3))
    scaled = value / 10**exp3
    text = f"{scaled:.{digits}g}"
    return f"{text} {prefixes[exp3]}{unit}"
