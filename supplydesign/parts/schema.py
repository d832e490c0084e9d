"""The columns of each catalog family, as data.

One :class:`Family` per CSV file. Each :class:`Column` says how its header reads
(``capacitance [uF]``: a name and a unit in brackets), what dimension the unit
must have, whether a cell may be empty, which SI key it fills and whether that
key is a field of the :mod:`supplydesign.design` dataclass the part becomes.
The loader in :mod:`supplydesign.parts.catalog` and the schema tables in
``catalogs/README.md`` both follow this module.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from ..design import RATING_LOADS, RECTIFIER_KINDS, WINDINGS

# ISO 4217 codes a catalog may use (a short list; extend when needed).
CURRENCIES = ("AUD", "CAD", "CHF", "CNY", "CZK", "DKK", "EUR", "GBP", "HUF", "JPY",
              "NOK", "NZD", "PLN", "SEK", "USD")

# Text columns carry no unit; numeric ones carry a pint unit of this SI unit.
TEXT = None
DIMENSIONLESS = ""


@dataclass(frozen=True)
class Column:
    """One column of a catalog file.

    Attributes
    ----------
    name : str
        Header text before the unit bracket, lower case (``"capacitance"``).
    key : str
        Key of the value in :meth:`Catalog.get` / :meth:`Catalog.table`, SI.
    si_unit : str or None
        Pint unit the cells are converted to (``"farad"``); ``""`` for a plain
        number, None for a text column.
    unit : str
        Unit written in the built-in files and suggested in messages (``"uF"``).
    required : bool
        A cell must be given (for the rows of ``kinds``).
    kinds : tuple of str
        Rectifier kinds the column belongs to; empty for every row. Cells of rows
        of other kinds must be empty.
    sign : str
        ``"positive"`` (> 0) or ``"nonnegative"`` (>= 0) for numbers.
    choices : tuple of str
        Allowed words of a text column; empty for any text.
    field : bool
        The key is a field of the design dataclass and :meth:`Catalog.get`
        returns it.
    default : float or str or None
        Value of an empty optional cell.
    """

    name: str
    key: str
    si_unit: str | None = TEXT
    unit: str = ""
    required: bool = True
    kinds: tuple[str, ...] = ()
    sign: str = "positive"
    choices: tuple[str, ...] = ()
    field: bool = True
    default: float | str | None = None

    @property
    def header(self) -> str:
        """The header as the built-in files write it (``capacitance [uF]``)."""
        return f"{self.name} [{self.unit}]" if self.unit else self.name

    def applies(self, kind: str | None) -> bool:
        return not self.kinds or kind in self.kinds


@dataclass(frozen=True)
class Family:
    """One catalog file: its family name, file name, columns and fixed get() fields."""

    name: str
    filename: str
    columns: tuple[Column, ...]
    fixed: dict[str, str] = field(default_factory=dict)

    def column(self, name: str) -> Column:
        for c in self.columns:
            if c.name == name:
                return c
        raise KeyError(name)


def _tolerance() -> Column:
    """The optional tolerance column of a family: the band of the part's main value (a
    fraction), which ``supplydesign spread`` uses when the design file gives none."""
    return Column("tolerance", "tolerance", DIMENSIONLESS, "%", required=False,
                  sign="nonnegative", field=False)


def _common(*specific: Column) -> tuple[Column, ...]:
    """Identity and price columns shared by every family around the specific ones."""
    return (
        Column("id", "part"),
        Column("description", "description", field=False),
        *specific,
        Column("price", "price", DIMENSIONLESS),
        Column("currency", "currency", choices=CURRENCIES),
    )


CAPACITOR = Family("capacitor", "capacitors.csv", _common(
    Column("capacitance", "capacitance_f", "farad", "uF"),
    Column("voltage", "voltage_rating_v", "volt", "V"),
    Column("esr", "esr_ohm", "ohm", "ohm", sign="nonnegative"),
    Column("ripple current at 100 hz", "ripple_rating_a", "ampere", "mA"),
    _tolerance(),  # of the capacitance
    Column("diameter", "diameter_m", "meter", "mm", required=False),
    Column("height", "height_m", "meter", "mm", required=False),
    Column("rated life", "rated_life_h", "hour", "h", required=False),
    Column("rated temperature", "rated_temperature_c", "degC", "degC", required=False),
))

CHOKE = Family("choke", "chokes.csv", _common(
    Column("inductance", "inductance_h", "henry", "H"),
    Column("dcr", "resistance_ohm", "ohm", "ohm"),
    Column("current", "current_rating_a", "ampere", "mA"),
    _tolerance(),  # of the inductance
    Column("mass", "mass_kg", "kilogram", "kg", required=False, field=False),
), fixed={"kind": "choke"})

RESISTOR = Family("resistor", "resistors.csv", _common(
    Column("power", "power_w", "watt", "W"),
    Column("max voltage", "max_voltage_v", "volt", "V", field=False),
    Column("min resistance", "min_resistance_ohm", "ohm", "ohm", required=False, field=False),
    Column("max resistance", "max_resistance_ohm", "ohm", "ohm", required=False, field=False),
    _tolerance(),  # of the resistance
    Column("upper temperature", "upper_temperature_c", "degC", "degC", required=False),
), fixed={"kind": "resistor"})

TRANSFORMER = Family("transformer", "transformers.csv", _common(
    Column("winding", "winding", choices=WINDINGS),
    Column("open-circuit rms", "open_circuit_v", "volt", "V"),
    Column("resistance", "resistance_ohm", "ohm", "ohm"),
    Column("leakage", "leakage_h", "henry", "mH", required=False, sign="nonnegative",
           default=0.0),
    Column("rated current", "rated_current_a", "ampere", "mA", required=False),
    Column("rated for", "rated_for", choices=RATING_LOADS, required=False),
    Column("rated rms current", "rated_rms_a", "ampere", "mA", required=False),
    Column("rated power", "rated_va", "volt_ampere", "VA", required=False),
    _tolerance(),  # of the open-circuit voltage
    Column("primary", "primary_v", "volt", "V", required=False),
    Column("mass", "mass_kg", "kilogram", "kg", required=False, field=False),
))

VALVE, SILICON = RECTIFIER_KINDS

RECTIFIER = Family("rectifier", "rectifiers.csv", _common(
    Column("kind", "kind", choices=RECTIFIER_KINDS),
    # A twin-anode valve is a full-wave rectifier, a single-anode one half-wave;
    # for silicon diodes the arrangement belongs to the circuit, not the part.
    Column("arrangement", "arrangement", kinds=(VALVE,), choices=("full-wave", "half-wave")),
    Column("drop", "drop_v", "volt", "V", kinds=(VALVE,)),
    Column("drop current", "drop_current_a", "ampere", "mA", kinds=(VALVE,)),
    Column("max peak current", "max_peak_current_a", "ampere", "mA"),
    Column("max reservoir", "max_reservoir_f", "farad", "uF", kinds=(VALVE,), required=False),
    Column("min source resistance", "min_source_resistance_ohm", "ohm", "ohm", kinds=(VALVE,),
           required=False),
    Column("heater power", "heater_w", "watt", "W", kinds=(VALVE,), required=False, field=False),
    Column("warm-up", "warmup_s", "second", "s", kinds=(VALVE,), required=False, field=False),
    Column("saturation current", "saturation_current_a", "ampere", "nA", kinds=(SILICON,)),
    Column("emission", "emission", DIMENSIONLESS, kinds=(SILICON,)),
    Column("series resistance", "series_resistance_ohm", "ohm", "ohm", kinds=(SILICON,)),
    Column("max surge current", "max_surge_current_a", "ampere", "A", kinds=(SILICON,)),
    Column("max reverse voltage", "max_reverse_v", "volt", "V", required=False, field=False),
))

FAMILIES: dict[str, Family] = {f.name: f for f in (CAPACITOR, CHOKE, RESISTOR, TRANSFORMER,
                                                    RECTIFIER)}
BY_FILENAME: dict[str, Family] = {f.filename: f for f in FAMILIES.values()}


def family(name: str) -> Family:
    """The family called ``name`` ("capacitor") or stored in ``name``.csv ("capacitors")."""
    if name in FAMILIES:
        return FAMILIES[name]
    if f"{name}.csv" in BY_FILENAME:
        return BY_FILENAME[f"{name}.csv"]
    raise KeyError(f"unknown part family {name!r}; expected one of {', '.join(FAMILIES)}")
