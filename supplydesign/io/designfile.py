"""Reading design and brief files (TOML) into :class:`~supplydesign.design.Design`.

The file form is the shared file contract ("One file for briefs and designs").
Every quantity is a string with a unit, converted once here to a SI float; every
mistake becomes a :class:`~supplydesign.errors.UserError` naming the file, the
key (``rail "screens".capacitor.capacitance``, or ``rail[2].name`` while a rail
has no valid name yet, or ``line:column`` for TOML syntax) and what was expected.

Parts catalogs are used through one method only: ``catalog.get(family, part_id)``
returns a dict keyed by the field names of the matching dataclass (SI floats) and
raises ``KeyError`` for an unknown id; ``family`` is one of ``"transformer"``,
``"rectifier"``, ``"resistor"``, ``"choke"``, ``"capacitor"``.
"""

from __future__ import annotations

import difflib
import math
import os
import re
import tomllib
from dataclasses import dataclass, fields
from typing import Any, Protocol

from ..design import (
    ARRANGEMENTS,
    DISTRIBUTIONS,
    RATING_LOADS,
    RECTIFIER_KINDS,
    WINDINGS,
    Capacitor,
    Chassis,
    Design,
    Link,
    Mains,
    Rail,
    Rectifier,
    Tolerance,
    Transformer,
)
from ..errors import UserError
from ..units import DIMENSIONS, parse_quantity


class PartsCatalog(Protocol):
    """What :func:`load_design` needs of a parts catalog."""

    def get(self, family: str, part_id: str) -> dict: ...


# --------------------------------------------------------------------------- key tables


@dataclass(frozen=True)
class Quantity:
    """One quantity key of the file: the dataclass field it fills and its checks."""

    field: str
    dimension: str  # a units.DIMENSIONS name, or "number" for a dimensionless bare number
    positive: bool = True  # True: > 0; False: >= 0
    low: float | None = None  # inclusive bounds beyond the per-dimension ones
    high: float | None = None
    example: str | None = None  # shown when the key is missing; default from units.DIMENSIONS
    signed: bool = False  # True: any sign (a temperature in degC); the bounds still apply


#: largest believable magnitude per dimension (SI); beyond it a value is a typo
MAGNITUDE_LIMIT = {
    "voltage": (1e5, "100 kV"),
    "current": (1e3, "1 kA"),
    "resistance": (1e12, "1 Tohm"),
    "capacitance": (10.0, "10 F"),
    "inductance": (1e3, "1000 H"),
    "frequency": (1e4, "10 kHz"),
    "power": (1e5, "100 kW"),
    "time": (3600.0, "1 h"),
    "length": (1.0, "1 m"),
    "lifetime": (1e7, "10 000 000 h"),
    "apparent_power": (1e5, "100 kVA"),
}

MAINS_KEYS = {
    "frequency": Quantity("frequency_hz", "frequency", low=1.0),
    "tolerance": Quantity("low", "fraction", positive=False, high=0.5),
    "low": Quantity("low", "fraction", positive=False, high=0.5),
    "high": Quantity("high", "fraction", positive=False, high=0.5),
}
TRANSFORMER_KEYS = {
    "open_circuit": Quantity("open_circuit_v", "voltage", example="330 V"),
    "resistance": Quantity("resistance_ohm", "resistance", positive=False, example="95 ohm"),
    "leakage": Quantity("leakage_h", "inductance", positive=False),
    "rated_current": Quantity("rated_current_a", "current"),
    "rated_rms_current": Quantity("rated_rms_a", "current"),
    "rated_power": Quantity("rated_va", "apparent_power", example="90 VA"),
    "primary": Quantity("primary_v", "voltage", example="230 V"),
    "other_load": Quantity("other_load_va", "apparent_power", positive=False),
}
#: keys a [transformer] that chooses among catalog parts may give beside ``choose``
CHOOSE_WITH = ("other_load",)
#: text keys of [transformer] beside ``winding``: key -> (field, allowed words)
TRANSFORMER_TEXT_KEYS = {"rated_for": ("rated_for", RATING_LOADS)}
VALVE_KEYS = {
    "drop": Quantity("drop_v", "voltage", example="17 V"),
    "drop_current": Quantity("drop_current_a", "current", example="250 mA"),
}
SILICON_KEYS = {
    "saturation_current": Quantity("saturation_current_a", "current", high=1e-3),
    "emission": Quantity("emission", "number", low=0.5, high=10.0),
    "series_resistance": Quantity("series_resistance_ohm", "resistance", positive=False),
}
RECTIFIER_LIMIT_KEYS = {
    "max_peak_current": Quantity("max_peak_current_a", "current"),
    "max_reservoir": Quantity("max_reservoir_f", "capacitance"),
    "max_surge_current": Quantity("max_surge_current_a", "current"),
    "min_source_resistance": Quantity("min_source_resistance_ohm", "resistance", positive=False),
    # not a limit: the time from switch-on until the rectifier conducts
    "warm_up": Quantity("warm_up_s", "time", positive=False, example="10 s"),
}
#: temperatures a part's data sheet may state [degC]
PART_TEMPERATURE = {"low": 40.0, "high": 400.0, "example": "105 degC"}
RESISTOR_KEYS = {
    "resistance": Quantity("resistance_ohm", "resistance"),
    "power": Quantity("power_w", "power"),
    "upper_temperature": Quantity("upper_temperature_c", "temperature", **PART_TEMPERATURE),
}
CHOKE_KEYS = {
    "inductance": Quantity("inductance_h", "inductance"),
    "resistance": Quantity("resistance_ohm", "resistance", positive=False, example="150 ohm"),
    "current_rating": Quantity("current_rating_a", "current"),
}
CAPACITOR_KEYS = {
    "capacitance": Quantity("capacitance_f", "capacitance"),
    "esr": Quantity("esr_ohm", "resistance", positive=False),
    "voltage": Quantity("voltage_rating_v", "voltage"),
    "ripple_rating": Quantity("ripple_rating_a", "current"),
    "rated_life": Quantity("rated_life_h", "lifetime", example="2000 h"),
    "rated_temperature": Quantity("rated_temperature_c", "temperature", **PART_TEMPERATURE),
    "diameter": Quantity("diameter_m", "length"),
    "height": Quantity("height_m", "length"),
}
#: the air around the parts: [chassis] ambient and a rail's own ambient [degC]
AMBIENT = Quantity("ambient_c", "temperature", signed=True, low=-40.0, high=150.0,
                   example="45 degC")
CHASSIS_KEYS = {
    "ambient": AMBIENT,
    "use": Quantity("use", "duty", high=1.0),
    "min_life": Quantity("min_life_h", "lifetime", example="20000 h"),
}
RAIL_KEYS = {
    "current": Quantity("current_a", "current", positive=False),
    "resistance": Quantity("load_resistance_ohm", "resistance"),
    "idle_current": Quantity("idle_current_a", "current", positive=False),
    "voltage": Quantity("voltage_v", "voltage"),
    "tolerance": Quantity("tolerance", "fraction", high=0.99),
    "hum": Quantity("hum_v", "voltage"),
    "bleeder": Quantity("bleeder_ohm", "resistance", example="220 kohm"),
    "warm_up": Quantity("warm_up_s", "time", positive=False, example="15 s"),
    "ambient": AMBIENT,
}
#: keys any catalog-able part may carry: its id and its price (a bare number, dimensionless)
PRICE_KEYS = {"price": Quantity("price", "number", positive=False)}
PART_KEYS = ("part", "currency", *PRICE_KEYS)

#: keys of a part's spread among builds (`spread`): the tolerance of its value, and of a
#: choke's or winding's resistance, and how values spread within it
SPREAD_KEYS = ("tolerance", "distribution")
RESISTANCE_SPREAD_KEYS = ("tolerance", "resistance_tolerance", "distribution")
#: widest tolerance accepted, below and above nominal (fractions)
TOLERANCE_LOW_LIMIT = 0.99
TOLERANCE_HIGH_LIMIT = 2.0
#: one term of a tolerance: optional sign (+, -, ±, +/-), a number, a percent sign
TOLERANCE_TERM = re.compile(r"\s*(\+/-|[+\-±])?\s*(\d+\.?\d*|\.\d+)\s*%\s*[,/]?")
TOLERANCE_EXAMPLE = 'a tolerance such as "20 %" or, asymmetric, "-10 % +50 %"'

CHOICE_KEYS = {"winding": WINDINGS, "kind": RECTIFIER_KINDS, "arrangement": ARRANGEMENTS}
ALL_QUANTITY_KEYS = (TRANSFORMER_KEYS, VALVE_KEYS, RESISTOR_KEYS, CHOKE_KEYS, CAPACITOR_KEYS)

TOP_KEYS = ("title", "catalog", "mains", "transformer", "rectifier", "chassis", "rail")
RAIL_OTHER_KEYS = ("name", "from", "link", "capacitor")
LINK_CHOICES = ("resistor", "choke")  # kinds a "choose" link may pick among (+ wire, first rail)

OPEN_HINT = "evaluate needs a complete design; run synth on a brief"


# --------------------------------------------------------------------------- file reading


def _read_toml(path: str | os.PathLike) -> tuple[dict, str]:
    """Read and parse a TOML file; return (table, path as str)."""
    file = os.fspath(path)
    try:
        with open(file, "rb") as fh:
            data = fh.read()
    except FileNotFoundError:
        raise UserError("no such file: expected a design or brief (.toml)", file) from None
    except IsADirectoryError:
        raise UserError("is a folder: expected a design or brief file (.toml)", file) from None
    except OSError as exc:
        raise UserError(f"cannot read the file ({exc.strerror})", file) from None
    if b"\x00" in data:
        raise UserError("a binary file: expected a text (TOML) design or brief", file)
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError:
        raise UserError("not UTF-8 text: expected a text (TOML) design or brief", file) from None
    if not text.strip():
        raise UserError("the file is empty: expected [mains], [transformer], [rectifier] "
                        "and at least one [[rail]]", file)
    try:
        return tomllib.loads(text), file
    except tomllib.TOMLDecodeError as exc:
        msg = str(exc)
        m = re.search(r"\(at line (\d+), column (\d+)\)", msg)
        where = f"{m.group(1)}:{m.group(2)}" if m else None
        what = re.sub(r"\s*\(at (line \d+, column \d+|end of document)\)", "", msg)
        raise UserError(f"TOML syntax error: {what}", file, where or "end of file") from None


def read_catalog_setting(path: str | os.PathLike) -> str | None:
    """The parts catalog folder a file names with ``catalog = "DIR"``, resolved.

    Lets a caller open the catalog before :func:`load_design` (which needs it to
    fill ``part = "ID"`` references). Relative folders are taken from the folder
    of the file. Returns None when the file names no catalog.
    """
    table, file = _read_toml(path)
    return _catalog_setting(table, file)


def _catalog_setting(table: dict, file: str) -> str | None:
    if "catalog" not in table:
        return None
    value = table["catalog"]
    if not isinstance(value, str) or not value.strip():
        raise UserError("expected the folder of a parts catalog, such as catalog = \"parts\"",
                        file, "catalog")
    folder = os.path.dirname(os.path.abspath(file))
    return os.path.normpath(os.path.join(folder, os.path.expanduser(value.strip())))


def load_design(path: str | os.PathLike, *, brief: bool = False,
                catalog: PartsCatalog | None = None) -> Design:
    """Read a design (or, with ``brief=True``, a brief) file into a :class:`Design`.

    Parameters
    ----------
    path : str or path-like
        The TOML file.
    brief : bool
        False: every choice must be made (a design for ``evaluate``); an open
        choice is an error naming its key. True: open choices are kept, as the
        dataclasses describe them (``Link(kind="choose")``, values None,
        ``Capacitor(capacitance_f=None)``, ``Transformer.choose``).
    catalog : object with ``get(family, part_id) -> dict``, optional
        Fills ``part = "ID"`` references; values written next to ``part``
        override the catalog's. Without it the ids are kept and the values left
        None, which a design (``brief=False``) only accepts when the file itself
        gives every value the part needs.

    Returns
    -------
    Design
        Validated, SI floats; every rail's ``parent`` is filled in (None only
        for a rail hanging from the rectifier output).

    Raises
    ------
    UserError
        For anything the user must fix in the file.
    """
    table, file = _read_toml(path)
    return _Reader(file, brief, catalog).design(table)


# --------------------------------------------------------------------------- validation


def _suggest(word: str, allowed) -> str:
    near = difflib.get_close_matches(word, list(allowed), n=1, cutoff=0.6)
    if near:
        return f"did you mean {near[0]!r}?"
    return "expected one of " + ", ".join(repr(a) for a in allowed)


def _example(key: str) -> str:
    """``key = example`` for a missing-key message."""
    if key in CHOICE_KEYS:
        return f"{key} = " + " or ".join(f'"{c}"' for c in CHOICE_KEYS[key])
    for specs in ALL_QUANTITY_KEYS:
        if key in specs:
            spec = specs[key]
            example = spec.example or DIMENSIONS[spec.dimension][1].split("'")[1]
            return f'{key} = "{example}"'
    return key


def _ordinal(i: int) -> str:
    n = i + 1
    suffix = "th" if 10 <= n % 100 <= 20 else {1: "st", 2: "nd", 3: "rd"}.get(n % 10, "th")
    return f"{n}{suffix}"


class _Reader:
    """Validation of one parsed file; holds the file name, mode and catalog."""

    def __init__(self, file: str, brief: bool, catalog: PartsCatalog | None):
        self.file = file
        self.brief = brief
        self.catalog = catalog

    def fail(self, key: str | None, message: str) -> UserError:
        return UserError(message, self.file, key)

    # ---- small helpers

    def keys(self, table: dict, allowed, where: str) -> None:
        for k in table:
            if k not in allowed:
                key = f"{where}.{k}" if where else k
                raise self.fail(key, f"unknown key {k!r}; {_suggest(k, allowed)}")

    def section(self, table: dict, name: str, example: str) -> dict:
        if name not in table:
            raise self.fail(f"[{name}]", f"missing section: expected [{name}] with {example}")
        value = table[name]
        if not isinstance(value, dict):
            raise self.fail(name, f"expected a [{name}] table with {example}")
        return value

    def text(self, table: dict, key: str, where: str, *, choices=None) -> str | None:
        if key not in table:
            return None
        value = table[key]
        full = f"{where}.{key}"
        if choices is not None:
            if value not in choices:
                got = repr(value) if isinstance(value, str) else \
                    f"the {type(value).__name__} {value!r}"
                expected = " or ".join(f'"{c}"' for c in choices)
                raise self.fail(full, f"expected {expected}, got {got}")
            return value
        if not isinstance(value, str) or not value.strip():
            raise self.fail(full, f"expected a non-empty string, got {value!r}")
        return value.strip()

    def quantity(self, value: Any, spec: Quantity, key: str) -> float:
        dim = spec.dimension
        if dim == "number":
            number = self.plain_number(value, key)
            if not math.isfinite(number):
                raise self.fail(key, f"expected a finite number, got {value!r}")
            word, shown = "a number", repr(value)
        else:
            number = parse_quantity(value, dim, file=self.file, key=key)
            word, shown = DIMENSIONS[dim][1].split(" such as ")[0], repr(value)
        if spec.signed:
            pass
        elif spec.positive and number <= 0:
            raise self.fail(key, f"expected a positive {word.split(' ', 1)[-1]}, got {shown}")
        elif not spec.positive and number < 0:
            raise self.fail(key, f"expected {word} of zero or more, got {shown}")
        limit = MAGNITUDE_LIMIT.get(dim)
        if limit is not None and abs(number) > limit[0]:
            raise self.fail(key, f"expected {word} of at most {limit[1]}, got {shown}")
        if spec.low is not None and number < spec.low:
            raise self.fail(key, f"expected {word} of at least {self.bound(spec.low, dim)}, "
                                 f"got {shown}")
        if spec.high is not None and number > spec.high:
            raise self.fail(key, f"expected {word} of at most {self.bound(spec.high, dim)}, "
                                 f"got {shown}")
        return number

    def plain_number(self, value: Any, key: str) -> float:
        """A dimensionless number, bare (``emission = 1.8``) or quoted as users write
        every other value (``emission = "1.8"``); a unit is an error."""
        if isinstance(value, str):
            try:
                return float(value.strip())
            except ValueError:
                raise self.fail(key, f"expected a plain number without a unit, such as 1.8 "
                                     f"or \"1.8\", got {value!r}") from None
        if isinstance(value, bool) or not isinstance(value, int | float):
            raise self.fail(key, f"expected a plain number without a unit, such as 1.8, "
                                 f"got {value!r}")
        return float(value)

    @staticmethod
    def bound(value: float, dim: str) -> str:
        if dim == "fraction":
            return f"{value * 100:g} %"
        if dim == "duty":
            return f"{value * 24:g} h/day"
        unit = {"number": "", "frequency": " Hz", "current": " A",
                "temperature": " degC"}.get(dim, "")
        return f"{value:g}{unit}"

    def tolerance(self, value: Any, key: str) -> Tolerance:
        """``"20 %"``, ``"±20 %"`` or ``"-10 % +50 %"`` (either order) as a Tolerance."""
        if not isinstance(value, str) or not value.strip():
            raise self.fail(key, f"expected {TOLERANCE_EXAMPLE}, got {value!r}")
        text, pos, terms = value.strip(), 0, []
        while pos < len(text):
            m = TOLERANCE_TERM.match(text, pos)
            if m is None:
                raise self.fail(key, f"expected {TOLERANCE_EXAMPLE} (percent only), "
                                     f"got {value!r}")
            terms.append((m.group(1) or "", float(m.group(2)) / 100.0))
            pos = m.end()
        signs = sorted(sign for sign, _ in terms)
        if len(terms) == 1 and signs[0] in ("", "±", "+/-"):
            low = high = terms[0][1]
        elif len(terms) == 2 and signs == ["+", "-"]:
            low, high = (dict((sign, x) for sign, x in terms)[s] for s in "-+")
        else:
            raise self.fail(key, f"expected {TOLERANCE_EXAMPLE}: one value for both sides, "
                                 f"or one below (-) and one above (+), got {value!r}")
        if low > TOLERANCE_LOW_LIMIT:
            raise self.fail(key, f"expected at most {100 * TOLERANCE_LOW_LIMIT:g} % below "
                                 f"nominal (a part keeps some of its value), got {value!r}")
        if high > TOLERANCE_HIGH_LIMIT:
            raise self.fail(key, f"expected at most {100 * TOLERANCE_HIGH_LIMIT:g} % above "
                                 f"nominal, got {value!r}")
        return Tolerance(float(f"{low:.15g}"), float(f"{high:.15g}"))

    def spread(self, table: dict, where: str) -> dict:
        """The spread keys of a part's table (see SPREAD_KEYS) as dataclass fields."""
        out: dict = {k: self.tolerance(table[k], f"{where}.{k}")
                     for k in ("tolerance", "resistance_tolerance") if k in table}
        if "distribution" in table:
            out["distribution"] = self.text(table, "distribution", where, choices=DISTRIBUTIONS)
        return out

    def quantities(self, table: dict, specs: dict[str, Quantity], where: str) -> dict:
        return {spec.field: self.quantity(table[k], spec, f"{where}.{k}")
                for k, spec in specs.items() if k in table}

    def part_fields(self, table: dict, family: str, cls, where: str) -> tuple[dict, str | None]:
        """Fields from a ``part`` reference (catalog values) plus price/currency keys."""
        out: dict = {}
        part = self.text(table, "part", where)
        if part is not None:
            out["part"] = part
            if self.catalog is not None:
                out.update(self.catalog_fields(family, part, cls, f"{where}.part"))
        out.update(self.quantities(table, PRICE_KEYS, where))
        currency = self.text(table, "currency", where)
        if currency is not None:
            out["currency"] = currency
        return out, part

    def catalog_fields(self, family: str, part: str, cls, key: str) -> dict:
        try:
            values = self.catalog.get(family, part)
        except KeyError:
            raise self.fail(key, f"expected the id of a {family} in the parts catalog; "
                                 f"there is no {family} {part!r}") from None
        except UserError as exc:
            raise exc.located(self.file, key) from None
        names = {f.name for f in fields(cls)} - {"part", "choose", "among"}
        if cls is Link:
            names.discard("kind")  # the file's kind governs
        return {k: v for k, v in values.items() if k in names and v is not None}

    def id_list(self, value: Any, key: str, family: str) -> tuple[str, ...]:
        if (not isinstance(value, list) or not value
                or not all(isinstance(v, str) and v.strip() for v in value)):
            raise self.fail(key, f"expected a list of {family} part ids, such as [\"A\", \"B\"]")
        ids = tuple(v.strip() for v in value)
        if len(set(ids)) != len(ids):
            raise self.fail(key, "expected each part id once")
        if self.catalog is not None:
            for part in ids:
                self.catalog_fields(family, part, Transformer if family == "transformer"
                                    else Rectifier, key)
        return ids

    def entry(self, table: dict, key: str, where: str, expected: str) -> Any:
        """``table[key]``, which must be present."""
        if key not in table:
            raise self.fail(f"{where}.{key}", f"missing key: expected {expected}")
        return table[key]

    def still_open(self, key: str, what: str) -> None:
        if not self.brief:
            raise self.fail(key, f"{what} is still open: {OPEN_HINT}")

    def require(self, values: dict, needed: dict[str, str], part: str | None, where: str) -> None:
        """Check the fields ``needed`` (field -> file key) are present.

        A ``part`` not looked up in a catalog may leave them missing in a brief.
        """
        missing = [k for f, k in needed.items() if f not in values]
        if not missing:
            return
        if part is not None and self.catalog is None:
            if self.brief:
                return
            raise self.fail(f"{where}.part", f"part {part!r} needs a parts catalog to fill in "
                                             f"{', '.join(missing)} (or write them here)")
        if part is not None:
            raise self.fail(f"{where}.{missing[0]}", f"the catalog gives no {missing[0]} for "
                                                     f"part {part!r}; expected it written here")
        raise self.fail(f"{where}.{missing[0]}", f"missing key: expected {_example(missing[0])}")

    # ---- sections

    def design(self, table: dict) -> Design:
        self.keys(table, TOP_KEYS, "")
        title = table.get("title", "")
        if not isinstance(title, str):
            raise self.fail("title", f"expected a string, got {title!r}")
        mains = self.mains(self.section(table, "mains", 'frequency = "50 Hz"'))
        tr, winding_known = self.transformer(self.section(
            table, "transformer", 'winding, open_circuit and resistance (or part = "ID")'))
        rect, arrangement_known = self.rectifier(self.section(
            table, "rectifier", 'kind and arrangement (or part = "ID")'))
        if winding_known and arrangement_known:
            self.check_arrangement(tr, rect)
        rails = self.rails(table)
        return Design(title=title, mains=mains, transformer=tr, rectifier=rect, rails=rails,
                      source=self.file, catalog=_catalog_setting(table, self.file),
                      chassis=self.chassis(table.get("chassis", {})))

    def chassis(self, t: Any) -> Chassis:
        if not isinstance(t, dict):
            raise self.fail("chassis", 'expected a [chassis] table such as ambient = "45 degC"')
        self.keys(t, CHASSIS_KEYS, "chassis")
        return Chassis(**self.quantities(t, CHASSIS_KEYS, "chassis"))

    def mains(self, t: dict) -> Mains:
        self.keys(t, (*MAINS_KEYS, "distribution"), "mains")
        if "frequency" not in t:
            raise self.fail("mains.frequency", 'missing key: expected frequency = "50 Hz" '
                                                'or "60 Hz"')
        freq = self.quantity(t["frequency"], MAINS_KEYS["frequency"], "mains.frequency")
        if "tolerance" in t and ("low" in t or "high" in t):
            raise self.fail("mains.tolerance", "expected either tolerance or low/high, not both")
        low = high = Mains().low
        if "tolerance" in t:
            low = high = self.quantity(t["tolerance"], MAINS_KEYS["tolerance"], "mains.tolerance")
        if "low" in t:
            raw = t["low"]
            if isinstance(raw, str) and raw.strip().startswith("+"):
                raise self.fail("mains.low", f"expected how far the mains falls below nominal, "
                                             f"such as \"-10 %\", got {raw!r}")
            text = raw.strip().removeprefix("-") if isinstance(raw, str) else raw
            low = self.quantity(text, MAINS_KEYS["low"], "mains.low")
        if "high" in t:
            high = self.quantity(t["high"], MAINS_KEYS["high"], "mains.high")
        spread = {"distribution": self.text(t, "distribution", "mains", choices=DISTRIBUTIONS)}
        return Mains(frequency_hz=freq, low=low, high=high,
                     **{k: v for k, v in spread.items() if v is not None})

    def transformer(self, t: dict) -> tuple[Transformer, bool]:
        where = "transformer"
        self.keys(t, ("winding", "choose", *TRANSFORMER_KEYS, *RESISTANCE_SPREAD_KEYS,
                      *TRANSFORMER_TEXT_KEYS, *PART_KEYS), where)
        if "choose" in t:
            # the amplifier's other load stays the same whichever transformer is chosen
            load = {k: TRANSFORMER_KEYS[k] for k in CHOOSE_WITH}
            return Transformer(choose=self.choose(t, where, "transformer", CHOOSE_WITH),
                               **self.quantities(t, load, where)), False
        values, part = self.part_fields(t, "transformer", Transformer, where)
        winding = self.text(t, "winding", where, choices=WINDINGS)
        if winding is not None:
            values["winding"] = winding
        for key, (name, choices) in TRANSFORMER_TEXT_KEYS.items():
            word = self.text(t, key, where, choices=choices)
            if word is not None:
                values[name] = word
        values.update(self.quantities(t, TRANSFORMER_KEYS, where))
        values.update(self.spread(t, where))
        self.require(values, {"winding": "winding", "open_circuit_v": "open_circuit",
                              "resistance_ohm": "resistance"}, part, where)
        if values.get("winding", "center-tapped") not in WINDINGS:
            raise self.fail(f"{where}.part", f"catalog part {part!r} has the unknown winding "
                                             f"{values['winding']!r}")
        return Transformer(**values), "winding" in values

    def choose(self, t: dict, where: str, family: str, beside=()) -> tuple[str, ...]:
        other = [k for k in t if k != "choose" and k not in beside]
        if other:
            also = f" (and {', '.join(beside)})" if beside else ""
            raise self.fail(f"{where}.{other[0]}", f"expected choose = [...] alone{also} in "
                                                   f"[{where}] (the candidates come from the "
                                                   "catalog)")
        ids = self.id_list(t["choose"], f"{where}.choose", family)
        self.still_open(f"{where}.choose", f"the {family}")
        return ids

    def rectifier(self, t: dict) -> tuple[Rectifier, bool]:
        where = "rectifier"
        quantity_keys = {**VALVE_KEYS, **SILICON_KEYS, **RECTIFIER_LIMIT_KEYS}
        self.keys(t, ("kind", "arrangement", "choose", *quantity_keys, *SPREAD_KEYS,
                      *PART_KEYS), where)
        if "choose" in t:
            return Rectifier(choose=self.choose(t, where, "rectifier")), False
        values, part = self.part_fields(t, "rectifier", Rectifier, where)
        for key, choices in (("kind", RECTIFIER_KINDS), ("arrangement", ARRANGEMENTS)):
            value = self.text(t, key, where, choices=choices)
            if value is not None:
                values[key] = value
        self.require(values, {"kind": "kind", "arrangement": "arrangement"}, part, where)
        kind = values.get("kind")
        for key in (*VALVE_KEYS, *SILICON_KEYS):
            owner = "valve" if key in VALVE_KEYS else "silicon"
            if key in t and kind is not None and kind != owner:
                raise self.fail(f"{where}.{key}", f"{key} is a key of a {owner} rectifier; "
                                                  f'this one has kind = "{kind}"')
        values.update(self.quantities(t, quantity_keys, where))
        for key in SPREAD_KEYS:
            if key in t and kind == "silicon":
                raise self.fail(f"{where}.{key}", f"{key} is a key of a valve rectifier (the "
                                                  "spread of its drop); a silicon rectifier's "
                                                  "spread is fixed, stated in the spread report")
        values.update(self.spread(t, where))
        if kind == "valve":
            self.require(values, {"drop_v": "drop", "drop_current_a": "drop_current"}, part, where)
        for key, choices in (("kind", RECTIFIER_KINDS), ("arrangement", ARRANGEMENTS)):
            if key in values and values[key] not in choices:
                raise self.fail(f"{where}.part", f"catalog part {part!r} has the unknown {key} "
                                                 f"{values[key]!r}")
        return Rectifier(**values), "arrangement" in values

    def check_arrangement(self, tr: Transformer, rect: Rectifier) -> None:
        if tr.winding == "center-tapped" and rect.arrangement != "full-wave":
            raise self.fail("rectifier.arrangement",
                            f'a center-tapped winding needs arrangement = "full-wave", '
                            f'got "{rect.arrangement}"')
        if tr.winding == "single" and rect.arrangement == "full-wave":
            raise self.fail("rectifier.arrangement",
                            'a full-wave arrangement needs a center-tapped winding; '
                            'with winding = "single" expected "bridge" or "half-wave"')

    # ---- rails

    def rails(self, table: dict) -> tuple[Rail, ...]:
        raw = table.get("rail")
        if raw is None:
            raise self.fail("[[rail]]", "missing section: expected at least one [[rail]]")
        if isinstance(raw, dict) or not isinstance(raw, list) or not raw:
            raise self.fail("rail", "expected at least one [[rail]] table (with two brackets)")
        names = []
        for i, r in enumerate(raw):
            if not isinstance(r, dict):
                raise self.fail(f"rail[{i}]", "expected a [[rail]] table")
            name = r.get("name")
            if not isinstance(name, str) or not name.strip():
                raise self.fail(f"rail[{i}].name", f"expected a name for the {_ordinal(i)} "
                                                   f"[[rail]], such as name = \"plates\"")
            if name in names:
                raise self.fail(f"rail[{i}].name", f"rail name {name!r} is used twice; "
                                                   "expected unique names")
            names.append(name)
        return tuple(self.rail(i, r, names) for i, r in enumerate(raw))

    def rail(self, i: int, r: dict, names: list[str]) -> Rail:
        name = names[i]
        where = f'rail "{name}"'
        self.keys(r, (*RAIL_OTHER_KEYS, *RAIL_KEYS), where)
        parent = self.parent(i, r, names, where)
        link = self.link(r, where, first=parent is None)
        capacitor = self.capacitor(r, where)
        values = self.quantities(r, RAIL_KEYS, where)
        if "resistance" in r and ("current" in r or "idle_current" in r):
            other = "current" if "current" in r else "idle_current"
            raise self.fail(f"{where}.{other}", "expected either a current load (current, "
                                                "idle_current) or a resistance load, not both")
        return Rail(name=name, parent=parent, link=link, capacitor=capacitor, **values)

    def parent(self, i: int, r: dict, names: list[str], where: str) -> str | None:
        if "from" not in r:
            return names[i - 1] if i else None
        parent = r["from"]
        key = f"{where}.from"
        if not isinstance(parent, str):
            raise self.fail(key, f"expected the name of an earlier rail, got {parent!r}")
        if parent == names[i]:
            raise self.fail(key, "a rail cannot hang from itself; expected an earlier rail")
        if parent in names[i + 1:]:
            raise self.fail(key, f"rail {parent!r} is written later; expected an earlier rail "
                                 "(a parent comes before its branches)")
        if parent not in names:
            hint = _suggest(parent, names[:i]) if i else "the first rail hangs from the rectifier"
            raise self.fail(key, f"no rail named {parent!r}; {hint}")
        return parent

    def link(self, r: dict, where: str, first: bool) -> Link:
        key = f"{where}.link"
        raw = self.entry(r, "link", where, 'link = "wire" (first rail), '
                                           '{ kind = "resistor", ... } or { kind = "choke", ... }')
        if raw == "wire":
            raw = {"kind": "wire"}
        elif raw == "choose":
            raw = {"kind": "choose"}
        if not isinstance(raw, dict):
            raise self.fail(key, 'expected "wire", "choose" or a table such as '
                                 '{ kind = "resistor", resistance = "1 kohm" }, '
                                 f"got {raw!r}")
        kind = self.text(raw, "kind", key, choices=("wire", "resistor", "choke", "choose"))
        if kind is None:
            raise self.fail(f"{key}.kind", 'missing key: expected kind = "resistor" or "choke"')
        if kind == "wire":
            self.keys(raw, ("kind",), key)
            if not first:
                raise self.fail(key, 'a "wire" joins a rail straight to the rectifier output: '
                                     'only the first rail may have it; expected a resistor '
                                     'or a choke')
            return Link(kind="wire")
        if kind == "choose":
            return self.choose_link(raw, key, first)
        specs = RESISTOR_KEYS if kind == "resistor" else CHOKE_KEYS
        spread = SPREAD_KEYS if kind == "resistor" else RESISTANCE_SPREAD_KEYS
        if kind == "resistor" and "resistance_tolerance" in raw:
            raise self.fail(f"{key}.resistance_tolerance", "a resistor's spread is its "
                            "tolerance = \"5 %\" (resistance_tolerance is a choke's DCR)")
        self.keys(raw, ("kind", *specs, *spread, *PART_KEYS), key)
        values, part = self.part_fields(raw, kind, Link, key)
        values.update(self.quantities(raw, specs, key))
        values.update(self.spread(raw, key))
        needed = {"resistance_ohm": "resistance"} if kind == "resistor" else \
            {"inductance_h": "inductance", "resistance_ohm": "resistance"}
        given = [k for f, k in needed.items() if f in values]
        if kind == "resistor" and not given and (part is None or self.catalog is not None):
            # a catalog resistor is a rating and a price; its value is chosen apart
            self.still_open(f"{key}.resistance", "the resistor value")
        elif part is not None:
            self.require(values, needed, part, key)
        elif not given:
            self.still_open(key, "the choke")
        elif len(given) < len(needed):
            missing = next(k for k in needed.values() if k not in given)
            raise self.fail(f"{key}.{missing}", f"missing key: expected the choke's {missing} "
                                                "too (or neither, in a brief)")
        return Link(kind=kind, **values)

    def choose_link(self, raw: dict, key: str, first: bool) -> Link:
        self.keys(raw, ("kind", "among"), key)
        allowed = ("wire", *LINK_CHOICES) if first else LINK_CHOICES
        among = raw.get("among", list(LINK_CHOICES))
        if (not isinstance(among, list) or not among or len(set(map(str, among))) != len(among)
                or any(a not in allowed for a in among)):
            raise self.fail(f"{key}.among", "expected a list of distinct link kinds among "
                                            + ", ".join(f'"{a}"' for a in allowed))
        self.still_open(key, "the link")
        return Link(kind="choose", among=tuple(among))

    def capacitor(self, r: dict, where: str) -> Capacitor | None:
        key = f"{where}.capacitor"
        raw = self.entry(r, "capacitor", where, 'capacitor = { capacitance = "47 uF" } or "none"')
        if raw == "none":
            return None
        if raw == "choose":
            self.still_open(key, "the capacitor")
            return Capacitor()
        if not isinstance(raw, dict):
            raise self.fail(key, 'expected a table such as { capacitance = "47 uF" }, or "none"'
                                 f", got {raw!r}")
        self.keys(raw, (*CAPACITOR_KEYS, *SPREAD_KEYS, *PART_KEYS), key)
        values, part = self.part_fields(raw, "capacitor", Capacitor, key)
        values.update(self.quantities(raw, CAPACITOR_KEYS, key))
        values.update(self.spread(raw, key))
        if "capacitance_f" not in values and part is None:
            self.still_open(f"{key}.capacitance", "the capacitance")
        else:
            self.require(values, {"capacitance_f": "capacitance"}, part, key)
        return Capacitor(**values)
