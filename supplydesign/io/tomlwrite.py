"""Writing a :class:`~supplydesign.design.Design` (or a brief) back as a TOML file.

The text follows the shared file contract, with every quantity as a string in a
readable engineering unit ("47 uF", "2.2 kohm", "150 mA") written with as many
digits as it takes for :func:`~supplydesign.io.designfile.load_design` to read
back the very same float (to a few units in the last place).
"""

from __future__ import annotations

import json
import os
import tempfile
from collections.abc import Mapping

from ..design import (
    SILICON_EMISSION,
    SILICON_SATURATION_A,
    SILICON_SERIES_OHM,
    Capacitor,
    Design,
    Link,
    Rail,
    Tolerance,
)
from ..errors import UserError
from .designfile import (
    CAPACITOR_KEYS,
    CHOKE_KEYS,
    LINK_CHOICES,
    PRICE_KEYS,
    RAIL_KEYS,
    RECTIFIER_LIMIT_KEYS,
    RESISTOR_KEYS,
    SILICON_KEYS,
    TRANSFORMER_KEYS,
    VALVE_KEYS,
    Quantity,
)

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
}
SILICON_DEFAULTS = {"saturation_current_a": SILICON_SATURATION_A,
                    "emission": SILICON_EMISSION,
                    "series_resistance_ohm": SILICON_SERIES_OHM}


def _number(x: float, size: float = 1.0) -> str:
    """Shortest plain decimal ``d`` (no exponent) with ``d * size`` equal to ``x * size``.

    Equal to 1e-14 relative: a few units in the last place, so that a value
    such as 1e-5 F is written "10 uF" and not "10.000000000000002 uF". Falls
    back to ``repr`` (an exponent form, which pint reads too).
    """
    target = x * size
    for digits in range(1, 18):
        text = f"{x:.{digits}g}"
        if "e" not in text and abs(float(text) * size - target) <= 1e-14 * abs(target):
            return text
    return repr(x)


def format_quantity(value: float, dimension: str, *, sign: bool = False) -> str:
    """A SI float as a string with a readable unit, such as ``"47 uF"``.

    Parameters
    ----------
    value : float
        The value in SI units (a fraction for ``"fraction"``: 0.1 -> "10 %").
    dimension : str
        A key of :data:`OUT_UNITS`.
    sign : bool
        Write a "+" before positive values ("+6 %").
    """
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


def _part_body(obj, body: list[str]) -> list[str]:
    """Lines of a transformer or rectifier section: ``choose = [...]`` or part and values."""
    if obj.choose:
        return ["choose = [" + ", ".join(_string(c) for c in obj.choose) + "]"]
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


def _comment(text: str | None) -> list[str]:
    if not text:
        return []
    return [("# " + line).rstrip() for line in text.splitlines()]


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
                header: str | None = None, base_dir: str | os.PathLike | None = None) -> str:
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

    Returns
    -------
    str
        The file text; :func:`~supplydesign.io.designfile.load_design` reads it
        back to an equal design.

    Notes
    -----
    Values filled from a parts catalog are written next to their ``part`` id, so
    the file reads the same without the catalog. A rectifier ``part`` read
    without a catalog (a brief) holds the dataclass defaults for ``kind`` and
    ``arrangement``, which are written as if given: resolve parts before dumping.
    """
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
    out += ["", *_comment(comments.get("[transformer]")), "[transformer]", *_part_body(tr, body)]

    rect = design.rectifier
    body = [f"kind = {_string(rect.kind)}", f"arrangement = {_string(rect.arrangement)}"]
    if rect.kind == "valve":
        body += _pairs(rect, VALVE_KEYS) + _spread_pairs(rect)
    else:
        body += _pairs(rect, SILICON_KEYS, skip=SILICON_DEFAULTS)
    body += _pairs(rect, RECTIFIER_LIMIT_KEYS)
    out += ["", *_comment(comments.get("[rectifier]")), "[rectifier]", *_part_body(rect, body)]

    previous = None
    for rail in design.rails:
        out += ["", *_comment(comments.get(rail.name)), *_rail(rail, previous)]
        previous = rail
    return "\n".join(out) + "\n"


def save_design(design: Design, path: str | os.PathLike, *, force: bool = False,
                comments: Mapping[str, str] | None = None, header: str | None = None) -> None:
    """Write a design to ``path`` atomically (a temporary file, then a rename).

    Parameters
    ----------
    force : bool
        Replace an existing file; without it an existing file is an error.
    comments, header
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
    text = dump_design(design, comments=comments, header=header, base_dir=folder)
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
