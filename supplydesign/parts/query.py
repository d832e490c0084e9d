"""Catalog look-ups for the ``parts`` command: parts with a given value, user-catalog checks."""

from __future__ import annotations

from pathlib import Path

from ..errors import UserError
from ..units import DIMENSIONS, parse_quantity
from .catalog import BUILTIN_DIR, Catalog, Part, load_catalog, read_directory
from .eseries import REL_TOL
from .schema import FAMILIES

#: dimensions a ``--value`` may have, tried in this order
VALUE_DIMENSIONS = ("capacitance", "voltage", "current", "resistance", "inductance", "power")


def parse_value(text: str, key: str = "--value") -> tuple[float, str]:
    """A quantity of any dimension a part column has: (SI value, SI unit name)."""
    for dim in VALUE_DIMENSIONS:
        try:
            return parse_quantity(text, dim, key=key), DIMENSIONS[dim][0]
        except UserError:
            continue
    words = ", ".join(DIMENSIONS[d][1].split(" such as ")[0] for d in VALUE_DIMENSIONS)
    raise UserError(f"expected {words}, with a unit (such as '47 uF' or '450 V'); got {text!r}",
                    key=key)


def with_value(catalog: Catalog, text: str) -> Catalog:
    """The parts having the value ``text`` (such as "47 uF") in a column of its dimension.

    Values match within a relative 1e-9; "450 V" finds capacitors rated 450 V,
    transformers of 450 V open-circuit, and so on.
    """
    value, si_unit = parse_value(text)
    kept: dict[str, list[Part]] = {}
    for name in catalog.families:
        keys = [c.key for c in FAMILIES[name].columns if c.si_unit == si_unit and c.si_unit]
        rows = [catalog.row(name, i) for i in catalog.ids(name)]
        kept[name] = [Part(name, {k: v for k, v in r.items() if k != "source"}, r["source"])
                      for r in rows
                      if any(r[k] is not None and abs(r[k] - value) <= REL_TOL * abs(value)
                             for k in keys)]
    return Catalog(kept)


def check_user_catalog(directory: str | Path) -> str:
    """Validate a user catalog laid over the built-in one; a one-line summary.

    Raises
    ------
    UserError
        ``file:line: column 'name': expected ...`` for the first bad row, or
        for a currency other than the built-in catalog's.
    """
    user = read_directory(directory)
    load_catalog(extra=directory)  # the currency must agree with the built-in rows
    builtin = read_directory(BUILTIN_DIR)
    parts = []
    for name, rows in user.items():
        known = {p.id for p in builtin.get(name, [])}
        replaced = sum(p.id in known for p in rows)
        parts.append(f"{FAMILIES[name].filename} {len(rows)} row{'s' * (len(rows) != 1)} "
                     f"({replaced} replacing built-in parts, {len(rows) - replaced} new)")
    return f"{directory}: OK: " + "; ".join(parts)
