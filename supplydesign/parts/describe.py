"""Catalog contents as text rows, for a command that lists parts (no printing here)."""

from __future__ import annotations

import math
from dataclasses import dataclass

from ..units import format_si
from .catalog import Catalog
from .schema import TEXT, family

# SI unit of a column -> symbol shown with its values, with engineering prefixes.
SYMBOLS = {"farad": "F", "volt": "V", "ohm": "Ω", "ampere": "A", "henry": "H", "watt": "W",
           "second": "s"}
# SI unit -> (symbol, factor) for sizes and masses, shown without prefixes.
PLAIN = {"kilogram": ("kg", 1.0), "meter": ("mm", 1e3)}


@dataclass(frozen=True)
class Listing:
    """One family's parts as a table of strings.

    Attributes
    ----------
    family : str
        Family name.
    headers : tuple of str
        Column names (units are in the cells).
    rows : tuple of tuple of str
        One row per part, in catalog order; "" for an empty cell.
    """

    family: str
    headers: tuple[str, ...]
    rows: tuple[tuple[str, ...], ...]


def _format(value, si_unit: str | None, unit: str) -> str:
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return ""
    if si_unit is TEXT:
        return str(value)
    if unit == "%":
        return f"{100 * value:g} %"
    if not si_unit:
        return f"{value:g}"
    if si_unit in PLAIN:
        symbol, factor = PLAIN[si_unit]
        return f"{value * factor:g} {symbol}"
    return format_si(value, SYMBOLS.get(si_unit, si_unit))


def describe_catalog(catalog: Catalog, family_name: str | None = None,
                     kind: str | None = None) -> list[Listing]:
    """Text tables of a catalog, one per family, ready to print.

    Parameters
    ----------
    catalog : Catalog
        The loaded catalog.
    family_name : str, optional
        Only this family ("capacitor" or "capacitors"); default every family
        that has parts.
    kind : str, optional
        Rectifiers only: "valve" or "silicon"; the columns that do not apply to
        that kind are left out.

    Returns
    -------
    list of Listing
        Values formatted with engineering prefixes ("47 µF", "150 mA"); the
        price column joins price and currency ("2.60 EUR"); columns empty in
        every listed row are dropped.
    """
    names = catalog.families if family_name is None else (family(family_name).name,)
    out = []
    for name in names:
        fam = family(name)
        parts = [catalog.row(name, i) for i in catalog.ids(name)]
        if kind is not None:
            parts = [p for p in parts if p.get("kind") == kind]
        columns = [c for c in fam.columns if c.name != "currency"]
        table = []
        for p in parts:
            cells = [_format(p[c.key], c.si_unit, c.unit) for c in columns]
            cells[columns.index(fam.column("price"))] = f"{p['price']:.2f} {p['currency']}"
            table.append(cells)
        used = [j for j in range(len(columns)) if any(row[j] for row in table)]
        out.append(Listing(name, tuple(columns[j].name for j in used),
                           tuple(tuple(row[j] for j in used) for row in table)))
    return out
