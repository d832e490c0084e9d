"""Writing a :class:`~supplydesign.design.Design` (or a brief) back as a TOML file.

The text follows the shared file contract, with every quantity as a string in a
readable engineering unit ("47 uF", "2.2 kohm", "0.4823 ohm") of at most
:data:`SIGNIFICANT_FIGURES` significant figures, so that a person reads the file
as a parts list. :func:`readable` is the design such a file holds: the values
rounded as written, which :func:`~supplydesign.io.designfile.load_design` reads
back as the very same floats. A caller that reports figures of the written
file (synth, rate) solves ``readable(design)``. ``digits=None`` writes every
value exactly instead (as many digits as a float needs). Prices are money and
are written as given.
"""

from __future__ import annotations

import json
import math
import os
import re
import tempfile
import textwrap
from collections.abc import Mapping
from dataclasses import replace

from ..design import (
    SILICON_EMISSION,
    SILICON_SATURATION_A,
    SILICON_SERIES_OHM,
    Capacitor,
    Design,
    Link,
    Mains,
    Rail,
    Rectifier,
    Tolerance,
    Transformer,
)
from ..errors import UserError
from .designfile import (
    CAPACITOR_KEYS,
    CHASSIS_KEYS,
    CHOKE_KEYS,
    CHOOSE_WITH,
    LINK_CHOICES,
    MAINS_KEYS,
    PRICE_KEYS,
    RAIL_KEYS,
    RECTIFIER_LIMIT_KEYS,
    RESISTOR_KEYS,
    SILICON_KEYS,
    TRANSFORMER_KEYS,
    TRANSFORMER_TEXT_KEYS,
    VALVE_KEYS,
    Quantity,
)

#: significant figures of every quantity a design file is written with
SIGNIFICANT_FIGURES = 4
#: comment lines of a written file are folded to this width (a terminal's 80 columns)
COMMENT_WIDTH = 79

#: units written per dimension: (unit, size in SI), smallest first
OUT_UNITS: dict[str, tuple[tuple[str, float], ...]] = {
    "voltage": (("mV", 1e-3), ("V", 1.0), ("kV", 1e3)),
    "current": (("fA", 1e-15), ("pA", 1e-12), ("nA", 1e-9), ("uA", 1e-6), ("mA", 1e-3),
                ("A", 1.0)),
    "resistance": (("ohm", 1.0), ("kohm", 1e3), ("Mohm", 1e6)),
    "capacitance": (("pF", 1e-12), ("nF", 1e-9), ("uF", 1e-6)),
    "inductance": (("uH", 1e-6), ("mH", 1e-3), ("H", 1.0)),
    "frequency": (("Hz", 1.0), ("kHz", 1e3)),
    "power": (("W", 1.0), ("kW", 1e3)),
    "time": (("ms", 1e-3), ("s", 1.0)),
    "fraction": (("%", 1e-2),),
    "temperature": (("degC", 1.0),),
    "length": (("mm", 1e-3),),
    "lifetime": (("h", 1.0),),
    "apparent_power": (("VA", 1.0), ("kVA", 1e3)),
    "duty": (("h/day", 1.0 / 24.0),),
}
SILICON_DEFAULTS = {"saturation_current_a": SILICON_SATURATION_A,
                    "emission": SILICON_EMISSION,
                    "series_resistance_ohm": SILICON_SERIES_OHM}


def _number(x: float, size: float = 1.0) -> str:
    """Shortest plain decimal ``d`` (no exponent) with ``d * size`` equal to ``x * size``.

    Equal to 1e-14 relative: a few units in the last place, so that a value
    such as 1e-5 F is written "10 uF" and not "10.000000000000002 uF". Falls
    back to the shortest exponent form (which pint reads too) for values no
    plain decimal of 17 figures holds.
    """
    target = x * size
    for exponent in (False, True):
        for digits in range(1, 18):
            text = f"{x:.{digits}g}"
            if ("e" in text) == exponent and abs(float(text) * size - target) <= \
                    1e-14 * abs(target):
                return text
    return repr(x)


def round_significant(value: float, digits: int | None) -> float:
    """``value`` rounded to ``digits`` significant figures (unchanged for None).

    The float of the shortest decimal of that many figures, which is also what
    :func:`~supplydesign.units.parse_quantity` reads back from the written text.
    """
    if digits is None or value == 0 or not math.isfinite(value):
        return value
    return float(f"{value:.{digits}g}")


def format_quantity(value: float, dimension: str, *, sign: bool = False,
                    digits: int | None = None) -> str:
    """A SI float as a string with a readable unit, such as ``"47 uF"``.

    Parameters
    ----------
    value : float
        The value in SI units (a fraction for ``"fraction"``: 0.1 -> "10 %").
    dimension : str
        A key of :data:`OUT_UNITS`.
    sign : bool
        Write a "+" before positive values ("+6 %").
    digits : int, optional
        Round to this many significant figures first (0.48228 ohm, 4 ->
        "0.4823 ohm"); None writes the value exactly.
    """
    value = round_significant(value, digits)
    units = OUT_UNITS[dimension]
    unit, size = units[0]
    for u, s in units:
        if abs(value) >= s * (1 - 1e-9) or (value == 0 and s == 1.0):
            unit, size = u, s
    text = _number(value / size, size)
    if sign and value >= 0:
        text = "+" + text
    return f"{text} {unit}".rstrip()


def _string(text: str) -> str:
    """A TOML basic string."""
    return json.dumps(text, ensure_ascii=False).replace("\x7f", "\\u007f")


#: the quantity keys written for each part of a design, as the writer writes them
WRITTEN_KEYS: dict[type, tuple[Mapping[str, Quantity], ...]] = {
    Mains: (MAINS_KEYS,),
    Transformer: (TRANSFORMER_KEYS,),
    Rectifier: (VALVE_KEYS, SILICON_KEYS, RECTIFIER_LIMIT_KEYS),
    Link: (RESISTOR_KEYS, CHOKE_KEYS),
    Capacitor: (CAPACITOR_KEYS,),
    Rail: (RAIL_KEYS,),
}


def _rounded(obj, digits: int):
    """``obj`` with every quantity the writer rounds rounded to ``digits`` figures."""
    if obj is None:
        return None
    fields = {spec.field for specs in WRITTEN_KEYS[type(obj)] for spec in specs.values()
              if spec.dimension in OUT_UNITS}
    new = {f: round_significant(getattr(obj, f), digits) for f in fields
           if isinstance(getattr(obj, f), float)}
    for f in ("tolerance", "resistance_tolerance"):  # a part's spread, as tolerance_text writes it
        tol = getattr(obj, f, None)
        if isinstance(tol, Tolerance):
            new[f] = Tolerance(round_significant(tol.low, digits),
                               round_significant(tol.high, digits))
    return replace(obj, **new)


def readable(design: Design, digits: int = SIGNIFICANT_FIGURES) -> Design:
    """The design a file written by :func:`dump_design` holds: every quantity
    rounded to ``digits`` significant figures (prices and plain numbers as they are).

    Solve this design, not the unrounded one, when its figures are reported beside
    the file: ``load_design`` reads the file back to exactly these floats.
    """
    rails = [replace(_rounded(r, digits), link=_rounded(r.link, digits),
                     capacitor=_rounded(r.capacitor, digits)) for r in design.rails]
    return replace(design, mains=_rounded(design.mains, digits),
                   transformer=_rounded(design.transformer, digits),
                   rectifier=_rounded(design.rectifier, digits), rails=tuple(rails))


def _value(value, spec: Quantity) -> str:
    if spec.dimension == "number":
        return repr(float(value))
    return _string(format_quantity(value, spec.dimension))


def _pairs(obj, specs: Mapping[str, Quantity], skip: Mapping[str, float] = {}) -> list[str]:
    """``key = "value"`` for each set field of ``obj`` named in ``specs``."""
    out = []
    for key, spec in specs.items():
        value = getattr(obj, spec.field)
        if value is None or (spec.field in skip and value == skip[spec.field]):
            continue
        out.append(f"{key} = {_value(value, spec)}")
    return out


def tolerance_text(tol: Tolerance) -> str:
    """A tolerance as the file writes it: ``"20 %"`` or ``"-10 % +50 %"``."""
    if tol.symmetric:
        return format_quantity(tol.low, "fraction")
    below = format_quantity(-tol.low, "fraction")
    return f"{below} {format_quantity(tol.high, 'fraction', sign=True)}"


def _spread_pairs(obj) -> list[str]:
    """``tolerance``, ``resistance_tolerance`` and ``distribution`` where set."""
    out = [f"{key} = {_string(tolerance_text(getattr(obj, key)))}"
           for key in ("tolerance", "resistance_tolerance") if getattr(obj, key, None)]
    if obj.distribution != "uniform":
        out.append(f"distribution = {_string(obj.distribution)}")
    return out


def _part_pairs(obj) -> tuple[list[str], list[str]]:
    """(``part = ...`` line or nothing, price and currency lines)."""
    head = [f"part = {_string(obj.part)}"] if obj.part is not None else []
    tail = _pairs(obj, PRICE_KEYS)
    if obj.currency is not None:
        tail.append(f"currency = {_string(obj.currency)}")
    return head, tail


def _part_body(obj, body: list[str], beside: list[str] = ()) -> list[str]:
    """Lines of a transformer or rectifier section: ``choose = [...]`` (and the lines
    ``beside`` it) or part and values."""
    if obj.choose:
        return ["choose = [" + ", ".join(_string(c) for c in obj.choose) + "]", *beside]
    head, tail = _part_pairs(obj)
    return [*head, *body, *tail]


def _inline(pairs: list[str]) -> str:
    return "{ " + ", ".join(pairs) + " }"


def _link(link: Link) -> str:
    if link.kind == "wire":
        return _string("wire")
    if link.kind == "choose":
        if tuple(link.among) == LINK_CHOICES or not link.among:
            return _string("choose")
        return _inline([f"kind = {_string('choose')}",
                        "among = [" + ", ".join(_string(a) for a in link.among) + "]"])
    if link.kind not in ("resistor", "choke"):
        raise ValueError(f"unknown link kind {link.kind!r}")
    head, tail = _part_pairs(link)
    specs = RESISTOR_KEYS if link.kind == "resistor" else CHOKE_KEYS
    return _inline([f"kind = {_string(link.kind)}", *head, *_pairs(link, specs),
                    *_spread_pairs(link), *tail])


def _capacitor(cap: Capacitor | None) -> str:
    if cap is None:
        return _string("none")
    head, tail = _part_pairs(cap)
    pairs = [*head, *_pairs(cap, CAPACITOR_KEYS, skip={"esr_ohm": 0.0}), *_spread_pairs(cap),
             *tail]
    if not pairs:
        return _string("choose")
    return _inline(pairs)


#: a number and the unit after it ("536 V", "10 %"), kept on one line when folding
_NUMBER_UNIT = re.compile(r"(\d) (?=[^\W\d_]|[%Ω°])")


def _comment(text: str | None) -> list[str]:
    """Comment lines of ``text``, each line folded to :data:`COMMENT_WIDTH` at spaces
    (continuations indented), never between a number and its unit."""
    if not text:
        return []
    out = []
    for line in text.splitlines():
        glued = _NUMBER_UNIT.sub("\\1\u00a0", line)  # textwrap breaks at ASCII spaces only
        folded = textwrap.wrap(glued, COMMENT_WIDTH, initial_indent="# ",
                               subsequent_indent="#   ", break_long_words=False,
                               break_on_hyphens=False) or ["#"]
        out += [part.replace("\u00a0", " ") for part in folded]
    return out


def _rail(rail: Rail, previous: Rail | None) -> list[str]:
    if previous is None and rail.parent is not None:
        raise ValueError(f"the first rail {rail.name!r} must hang from the rectifier output")
    if previous is not None and rail.parent is None:
        raise ValueError(f"rail {rail.name!r} hangs from the rectifier output; the file form "
                         "allows that for the first rail only")
    lines = ["[[rail]]", f"name = {_string(rail.name)}"]
    if previous is not None and rail.parent != previous.name:
        lines.append(f"from = {_string(rail.parent)}")
    lines.append(f"link = {_link(rail.link)}")
    lines.append(f"capacitor = {_capacitor(rail.capacitor)}")
    skip = {"current_a": 0.0}
    if rail.voltage_v is None:
        skip["tolerance"] = Rail.__dataclass_fields__["tolerance"].default
    lines += _pairs(rail, RAIL_KEYS, skip=skip)
    return lines


def dump_design(design: Design, *, comments: Mapping[str, str] | None = None,
                header: str | None = None, base_dir: str | os.PathLike | None = None,
                digits: int | None = SIGNIFICANT_FIGURES) -> str:
    """The TOML text of a design or brief, in the form of the shared file contract.

    Parameters
    ----------
    design : Design
    comments : mapping, optional
        Comment text written above a section: keys are rail names, or
        ``"[mains]"``, ``"[transformer]"``, ``"[rectifier]"``. Several lines are
        allowed (for example why a rating was chosen).
    header : str, optional
        Comment text at the top of the file.
    base_dir : path, optional
        Folder the file will be in: the ``catalog`` folder is written relative
        to it.
    digits : int or None
        Significant figures of every quantity (default
        :data:`SIGNIFICANT_FIGURES`); None writes each value exactly.

    Returns
    -------
    str
        The file text; :func:`~supplydesign.io.designfile.load_design` reads it
        back to ``readable(design, digits)`` (to ``design`` itself for
        ``digits=None``).

    Notes
    -----
    Values filled from a parts catalog are written next to their ``part`` id, so
    the file reads the same without the catalog. A rectifier ``part`` read
    without a catalog (a brief) holds the dataclass defaults for ``kind`` and
    ``arrangement``, which are written as if given: resolve parts before dumping.
    """
    if digits is not None:
        design = readable(design, digits)
    comments = dict(comments or {})
    sections = {"[mains]", "[transformer]", "[rectifier]"}
    unknown = set(comments) - sections - {r.name for r in design.rails}
    if unknown:
        raise ValueError(f"comments for unknown sections or rails: {sorted(unknown)}")
    out = _comment(header)
    if out:
        out.append("")
    if design.title:
        out.append(f"title = {_string(design.title)}")
    if design.catalog:
        folder = design.catalog
        if base_dir is not None:
            try:
                folder = os.path.relpath(folder, os.path.abspath(base_dir))
            except ValueError:  # another drive: keep it absolute
                pass
        out.append(f"catalog = {_string(folder)}")

    m = design.mains
    out += ["", *_comment(comments.get("[mains]")), "[mains]",
            f"frequency = {_string(format_quantity(m.frequency_hz, 'frequency'))}"]
    if m.low == m.high:
        out.append(f"tolerance = {_string(format_quantity(m.low, 'fraction'))}")
    else:
        out.append(f"low = {_string(format_quantity(-m.low, 'fraction'))}")
        out.append(f"high = {_string(format_quantity(m.high, 'fraction', sign=True))}")
    if m.distribution != "uniform":
        out.append(f"distribution = {_string(m.distribution)}")

    tr = design.transformer
    body = [] if tr.part is not None and tr.open_circuit_v is None \
        else [f"winding = {_string(tr.winding)}"]  # not for a part the catalog did not fill
    body += _pairs(tr, TRANSFORMER_KEYS, skip={"leakage_h": 0.0}) + _spread_pairs(tr)
    body += [f"{key} = {_string(getattr(tr, name))}"
             for key, (name, _) in TRANSFORMER_TEXT_KEYS.items() if getattr(tr, name)]
    beside = _pairs(tr, {k: TRANSFORMER_KEYS[k] for k in CHOOSE_WITH})
    out += ["", *_comment(comments.get("[transformer]")), "[transformer]",
            *_part_body(tr, body, beside)]

    rect = design.rectifier
    body = [f"kind = {_string(rect.kind)}", f"arrangement = {_string(rect.arrangement)}"]
    if rect.kind == "valve":
        body += _pairs(rect, VALVE_KEYS) + _spread_pairs(rect)
    else:
        body += _pairs(rect, SILICON_KEYS, skip=SILICON_DEFAULTS)
    body += _pairs(rect, RECTIFIER_LIMIT_KEYS)
    out += ["", *_comment(comments.get("[rectifier]")), "[rectifier]", *_part_body(rect, body)]

    chassis = _pairs(design.chassis, CHASSIS_KEYS)
    if chassis:
        out += ["", "[chassis]", *chassis]

    previous = None
    for rail in design.rails:
        out += ["", *_comment(comments.get(rail.name)), *_rail(rail, previous)]
        previous = rail
    return "\n".join(out) + "\n"


def save_design(design: Design, path: str | os.PathLike, *, force: bool = False,
                comments: Mapping[str, str] | None = None, header: str | None = None,
                digits: int | None = SIGNIFICANT_FIGURES) -> None:
    """Write a design to ``path`` atomically (a temporary file, then a rename).

    Parameters
    ----------
    force : bool
        Replace an existing file; without it an existing file is an error.
    comments, header, digits
        As for :func:`dump_design`.

    Raises
    ------
    UserError
        When the file exists (and ``force`` is False) or cannot be written.
    """
    file = os.fspath(path)
    folder = os.path.dirname(os.path.abspath(file))
    if os.path.exists(file) and not force:
        raise UserError("the file exists; expected a new file name (or allow overwriting it)",
                        file)
    if not os.path.isdir(folder):
        raise UserError(f"no folder {folder!r}: expected the design file in an existing folder",
                        file)
    text = dump_design(design, comments=comments, header=header, base_dir=folder,
                       digits=digits)
    try:
        fd, tmp = tempfile.mkstemp(dir=folder, prefix=f".{os.path.basename(file)}.",
                                   suffix=".tmp")
    except OSError as exc:
        raise UserError(f"cannot write in the folder ({exc.strerror})", file) from None
    try:
        with os.fdopen(fd, "w", encoding="utf-8", newline="\n") as fh:
            fh.write(text)
            fh.flush()
            os.fsync(fh.fileno())
        os.chmod(tmp, 0o644)
        os.replace(tmp, file)
    except OSError as exc:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise UserError(f"cannot write the file ({exc.strerror})", file) from None
    except BaseException:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise
