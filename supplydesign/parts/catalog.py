"""Parts catalogs: CSV files of capacitors, chokes, resistors, transformers, rectifiers.

A catalog directory holds up to one file per family (``capacitors.csv``,
``chokes.csv``, ``resistors.csv``, ``transformers.csv``, ``rectifiers.csv``;
other file types are ignored, other ``.csv`` names are an error). Format, in
brief (the full schema is ``catalogs/README.md``; the columns are
:mod:`supplydesign.parts.schema`):

- UTF-8 text; lines whose first non-blank character is ``#`` are comments and
  blank lines are skipped; each other line is one CSV record (no line breaks
  inside quoted cells).
- The first record is the header. A numeric column names its unit in brackets,
  ``capacitance [uF]``; any pint unit of the right dimension is accepted and the
  cells below it are plain numbers in that unit. Column order is free; unknown
  columns are an error (so a misspelt header is caught).
- Every row is checked; the first mistake raises :class:`UserError` whose line
  reads ``path:LINE: column 'NAME': expected ...``.
- All prices of the catalog set (built-in plus user rows) must be in one
  currency; a second currency is an error naming both.

:func:`load_catalog` reads the built-in demo catalogs (or a directory that
replaces them) and then, optionally, a user directory whose rows *replace*
built-in rows with the same id (the whole row) and *add* rows with new ids;
families the user directory does not have are kept as they are.
"""

from __future__ import annotations

import csv
import difflib
import math
import re
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..errors import UserError
from .schema import BY_FILENAME, CURRENCIES, FAMILIES, TEXT, Column, Family, family

BUILTIN_DIR = Path(__file__).resolve().parent.parent / "data" / "catalogs"

ID_PATTERN = re.compile(r"[A-Za-z0-9][A-Za-z0-9._-]*")
HEADER_PATTERN = re.compile(r"^(?P<name>[^\[\]]*?)\s*(?:\[(?P<unit>[^\[\]]*)\])?\s*$")


@dataclass(frozen=True)
class Part:
    """One validated catalog row.

    Attributes
    ----------
    family : str
        Family name ("capacitor", ...).
    values : dict
        Column key -> SI float, text, or None for an empty optional cell.
    source : str
        ``path:line`` of the row, for messages.
    """

    family: str
    values: dict
    source: str

    @property
    def id(self) -> str:
        return self.values["part"]

    @property
    def kind(self) -> str | None:
        return self.values.get("kind")


# --------------------------------------------------------------------------- reading


def _records(path: Path):
    """Yield (line number, cells) of the non-comment, non-blank lines of a CSV file."""
    try:
        text = path.read_text(encoding="utf-8-sig")
    except UnicodeDecodeError as exc:
        raise UserError("expected UTF-8 text", str(path), f"byte {exc.start}") from None
    except OSError as exc:
        raise UserError(f"could not read the file ({exc.strerror})", str(path)) from None
    for number, line in enumerate(text.splitlines(), start=1):
        stripped = line.strip()
        if not stripped or stripped.startswith("#"):
            continue
        try:
            (cells,) = list(csv.reader([line], skipinitialspace=True, strict=True))
        except csv.Error as exc:
            raise UserError(f"expected comma-separated cells, a quoted cell closed on the same "
                            f"line and followed by a comma ({exc})", f"{path}:{number}") from None
        yield number, [c.strip() for c in cells]


def _unit_scale(col: Column, unit: str | None, where: str,
                label: str) -> tuple[float, float]:
    """(factor, offset) from the header's unit to the column's SI unit: SI = cell * factor
    + offset (the offset is zero but for temperatures in degC or degF); checks the
    dimension."""
    if col.si_unit is TEXT or not col.unit:
        if unit is not None:
            what = "text" if col.si_unit is TEXT else "a plain number"
            raise UserError(f"expected no unit in brackets (the column holds {what})",
                            where, f"column '{label}'")
        return 1.0, 0.0
    if not unit:
        raise UserError(f"expected a unit in brackets, such as '{col.header}'",
                        where, f"column '{label}'")
    from ..units import registry

    ureg = registry()
    try:
        zero = float(ureg.Quantity(0.0, unit).to(col.si_unit).magnitude)
        return float(ureg.Quantity(1.0, unit).to(col.si_unit).magnitude) - zero, zero
    except Exception:
        raise UserError(f"expected a unit convertible to {col.si_unit}, such as "
                        f"'{col.header}', got '{unit}'", where, f"column '{label}'") from None


def _header(fam: Family, cells: list[str], path: Path, number: int):
    """Map header cells to (column, scale, label) per position; check required columns."""
    where = f"{path}:{number}"
    layout, seen = [], {}
    for cell in cells:
        m = HEADER_PATTERN.match(cell)
        name = " ".join(m.group("name").lower().split()) if m else cell
        if not m or name not in {c.name for c in fam.columns}:
            expected = ", ".join(f"'{c.header}'" for c in fam.columns)
            raise UserError(f"unknown column; expected one of {expected}", where,
                            f"column '{cell}'")
        if name in seen:
            raise UserError(f"expected each column once; '{name}' is also column {seen[name]}",
                            where, f"column '{cell}'")
        seen[name] = len(seen) + 1
        col = fam.column(name)
        layout.append((col, _unit_scale(col, m.group("unit"), where, cell), cell))
    for col in fam.columns:
        if col.required and not col.kinds and col.name not in seen:
            raise UserError(f"missing; expected a column '{col.header}' in the header",
                            where, f"column '{col.name}'")
    return layout


def _cell(col: Column, text: str, scale: tuple[float, float], kind: str | None, where: str,
          label: str):
    """Validate one cell; return its SI value, text, or None (empty optional)."""
    key = f"column '{label}'"
    if not col.applies(kind):
        if text:
            raise UserError(f"expected an empty cell: the column applies to "
                            f"{' and '.join(col.kinds)} rectifiers only, this row is {kind}",
                            where, key)
        return None
    if not text:
        if col.required:
            for_kind = f" for a {kind} rectifier" if col.kinds else ""
            raise UserError(f"expected a value{for_kind}, got an empty cell", where, key)
        return col.default
    if col.si_unit is TEXT:
        return _text_cell(col, text, where, key)
    unit = f" in {col.unit}" if col.unit else ""
    try:
        number = float(text)
    except ValueError:
        raise UserError(f"expected a plain number{unit} (the unit is in the header), got "
                        f"'{text}'", where, key) from None
    if not math.isfinite(number):
        raise UserError(f"expected a finite number{unit}, got '{text}'", where, key)
    if col.sign == "positive" and number <= 0:
        raise UserError(f"expected a number above zero{unit}, got '{text}'", where, key)
    if number < 0:
        raise UserError(f"expected a number of zero or more{unit}, got '{text}'", where, key)
    # 15 significant figures drop the binary noise of the unit factor (60 * 1e-6).
    factor, offset = scale
    return float(f"{number * factor + offset:.15g}")


def _text_cell(col: Column, text: str, where: str, key: str) -> str:
    if col.name == "id" and not ID_PATTERN.fullmatch(text):
        raise UserError(f"expected an id of letters, digits, '.', '_' and '-' "
                        f"(such as 'CAP-47U-450'), got '{text}'", where, key)
    if col.choices and text not in col.choices:
        what = "an ISO 4217 code, one of" if col.choices is CURRENCIES else "one of"
        raise UserError(f"expected {what} {', '.join(col.choices)}; got '{text}'", where, key)
    return text


def read_family_file(path: str | Path, fam: Family) -> list[Part]:
    """Read and validate one catalog file of one family.

    Parameters
    ----------
    path : str or Path
        The CSV file.
    fam : Family
        Its family (from :data:`supplydesign.parts.schema.FAMILIES`).

    Returns
    -------
    list of Part
        The rows in file order.

    Raises
    ------
    UserError
        ``path:line: column 'name': expected ...`` for the first mistake.
    """
    path = Path(path)
    records = _records(path)
    try:
        header_line, header_cells = next(records)
    except StopIteration:
        raise UserError("expected a header line and at least one row", str(path)) from None
    layout = _header(fam, header_cells, path, header_line)
    kind_pos = next((i for i, (c, _, _) in enumerate(layout) if c.name == "kind"), None)
    parts: list[Part] = []
    first_line: dict[str, int] = {}
    for number, cells in records:
        where = f"{path}:{number}"
        if len(cells) != len(layout):
            _cell_count_error(layout, cells, where)
        kind = None
        if kind_pos is not None:
            col, scale, label = layout[kind_pos]
            kind = _cell(col, cells[kind_pos], scale, None, where, label)
        given = {col.name: (cell, scale, label) for (col, scale, label), cell in zip(layout, cells,
                                                                                    strict=True)}
        values = {}
        for col in fam.columns:
            cell, scale, label = given.get(col.name, ("", (1.0, 0.0), col.name))
            values[col.key] = _cell(col, cell, scale, kind, where, label)
        part_id = values["part"]
        if part_id in first_line:
            raise UserError(f"expected a unique id; '{part_id}' is also on line "
                            f"{first_line[part_id]}", where, f"column '{given['id'][2]}'")
        first_line[part_id] = number
        parts.append(Part(fam.name, values, where))
    if not parts:
        raise UserError("expected at least one row after the header", f"{path}:{header_line}")
    return parts


def _cell_count_error(layout, cells: list[str], where: str):
    n, m = len(layout), len(cells)
    if m < n:
        missing = layout[m][2]
        raise UserError(f"expected {n} cells as in the header, got {m}", where,
                        f"column '{missing}'")
    raise UserError(f"expected {n} cells as in the header, got {m} (extra cells after "
                    f"column '{layout[-1][2]}')", where, f"column {n + 1}")


def read_directory(directory: str | Path) -> dict[str, list[Part]]:
    """Read every family file of a catalog directory: family name -> rows."""
    directory = Path(directory)
    if not directory.is_dir():
        raise UserError("expected a directory holding catalog files such as capacitors.csv",
                        str(directory))
    found: dict[str, list[Part]] = {}
    for path in sorted(directory.glob("*.csv")):
        fam = BY_FILENAME.get(path.name)
        if fam is None:
            close = difflib.get_close_matches(path.name, BY_FILENAME, n=1)
            hint = f" (did you mean {close[0]}?)" if close else ""
            raise UserError(f"unknown catalog file name; expected one of "
                            f"{', '.join(BY_FILENAME)}{hint}", str(path))
        found[fam.name] = read_family_file(path, fam)
    if not found:
        raise UserError(f"expected at least one catalog file ({', '.join(BY_FILENAME)})",
                        str(directory))
    return found


# --------------------------------------------------------------------------- the catalog


class Catalog:
    """A validated set of parts, by family and id, all priced in one currency.

    Use :func:`load_catalog` to make one. Family names are "capacitor", "choke",
    "resistor", "transformer", "rectifier"; the file stems ("capacitors", ...)
    are accepted too.
    """

    def __init__(self, parts: dict[str, list[Part]]):
        self._parts: dict[str, dict[str, Part]] = {
            name: {p.id: p for p in parts.get(name, [])} for name in FAMILIES}
        self.currency = _single_currency(self._parts)

    @property
    def families(self) -> tuple[str, ...]:
        """Names of the families that have at least one part."""
        return tuple(name for name, rows in self._parts.items() if rows)

    def ids(self, family_name: str) -> tuple[str, ...]:
        """Part ids of a family, in catalog order."""
        return tuple(self._rows(family_name))

    def _rows(self, family_name: str) -> dict[str, Part]:
        return self._parts[family(family_name).name]

    def _part(self, family_name: str, part_id: str) -> Part:
        rows = self._rows(family_name)
        if part_id not in rows:
            close = difflib.get_close_matches(str(part_id), rows, n=3)
            hint = f"; close ids: {', '.join(close)}" if close else ""
            raise KeyError(f"no {family(family_name).name} with id {part_id!r} in the "
                           f"catalog{hint}")
        return rows[part_id]

    def get(self, family_name: str, part_id: str) -> dict:
        """The fields a design dataclass takes from a catalog part.

        The keys are field names of :mod:`supplydesign.design`, so that
        ``Capacitor(**catalog.get("capacitor", "CAP-47U-450"))`` builds the part:

        - capacitor: capacitance_f, esr_ohm, voltage_rating_v, ripple_rating_a
        - choke (a :class:`~supplydesign.design.Link`): kind="choke", inductance_h,
          resistance_ohm (DCR), current_rating_a
        - resistor (a Link without its resistance; the value is chosen apart):
          kind="resistor", power_w
        - transformer: winding, open_circuit_v, resistance_ohm, leakage_h,
          rated_current_a
        - rectifier, valve: kind, arrangement, drop_v, drop_current_a,
          max_peak_current_a, max_reservoir_f, min_source_resistance_ohm;
          silicon: kind, saturation_current_a, emission, series_resistance_ohm,
          max_peak_current_a, max_surge_current_a (the arrangement is the
          circuit's, so the design supplies it)

        and always price, currency and part (the id). Optional limits missing
        from the row are None; a missing leakage is 0. Values are SI floats.

        Raises
        ------
        KeyError
            For an unknown family or id.
        """
        part = self._part(family_name, part_id)
        fam = FAMILIES[part.family]
        out = dict(fam.fixed)
        for col in fam.columns:
            if col.field and col.applies(part.kind):
                out[col.key] = part.values[col.key]
        return out

    def row(self, family_name: str, part_id: str) -> dict:
        """Every column of a part (SI keys, description, ...) plus its ``source`` (file:line)."""
        part = self._part(family_name, part_id)
        return {**part.values, "source": part.source}

    def table(self, family_name: str) -> dict[str, np.ndarray]:
        """The family as column arrays for vectorised use.

        Returns
        -------
        dict of str to numpy.ndarray
            One entry per column key of the family (SI floats, NaN where a cell
            is empty or does not apply; text columns and ``part`` as object
            arrays) plus ``source`` (file:line). All arrays have one entry per
            part, in catalog order.
        """
        fam = family(family_name)
        return table_from_rows(fam, [self.row(fam.name, i) for i in self.ids(fam.name)])

    def select(self, family_name: str, *, kind: str | None = None,
               at_least: dict[str, float] | None = None,
               at_most: dict[str, float] | None = None) -> dict[str, np.ndarray]:
        """The rows of :meth:`table` that meet every bound.

        Parameters
        ----------
        family_name : str
            Family.
        kind : str, optional
            Rectifiers only: "valve" or "silicon".
        at_least, at_most : dict, optional
            Column key -> bound, in SI (``{"voltage_rating_v": 450.0}``). A row with
            no value in a bounded column (NaN) is left out.

        Returns
        -------
        dict of str to numpy.ndarray
            The same keys as :meth:`table`, fewer rows.
        """
        tab = self.table(family_name)
        keep = np.ones(len(tab["part"]), dtype=bool)
        if kind is not None:
            keep &= tab["kind"] == kind
        for bounds, inside in ((at_least or {}, np.greater_equal), (at_most or {}, np.less_equal)):
            for key, bound in bounds.items():
                if key not in tab or tab[key].dtype != float:
                    raise KeyError(f"no numeric column {key!r} in the {family_name} table")
                keep &= inside(tab[key], bound)  # NaN compares False
        return {key: col[keep] for key, col in tab.items()}


def table_from_rows(fam: Family, rows: list[dict]) -> dict[str, np.ndarray]:
    """Column arrays of a family from row dicts (missing keys become NaN or None)."""
    out: dict[str, np.ndarray] = {}
    for col in fam.columns:
        cells = [r.get(col.key) for r in rows]
        if col.si_unit is TEXT:
            out[col.key] = np.array(cells, dtype=object)
        else:
            out[col.key] = np.array([np.nan if v is None else v for v in cells], dtype=float)
    out["source"] = np.array([r.get("source") for r in rows], dtype=object)
    return out


def _single_currency(parts: dict[str, dict[str, Part]]) -> str | None:
    """The one currency of all parts; UserError at the first row in another one."""
    first: Part | None = None
    for rows in parts.values():
        for part in rows.values():
            if first is None:
                first = part
            elif part.values["currency"] != first.values["currency"]:
                this, that = part.values["currency"], first.values["currency"]
                raise UserError(f"expected one currency for the whole catalog: {this} here, "
                                f"{that} at {first.source}; convert the prices to one currency",
                                part.source, "column 'currency'")
    return None if first is None else first.values["currency"]


def load_catalog(directory: str | Path | None = None,
                 extra: str | Path | None = None) -> Catalog:
    """Load, validate and merge catalog directories.

    Parameters
    ----------
    directory : str or Path, optional
        The base catalogs; default the built-in demo catalogs
        (``supplydesign/data/catalogs``, invented demo data).
    extra : str or Path, optional
        A user directory (the command line's ``--catalog DIR``) laid over the
        base: a row whose id is already in the same family replaces that row
        whole, in its place; a row with a new id is added after the others; a
        family file absent here leaves the base family as it is.

    Returns
    -------
    Catalog

    Raises
    ------
    UserError
        For any mistake in any file, or prices in more than one currency.
    """
    parts = read_directory(BUILTIN_DIR if directory is None else directory)
    if extra is not None:
        for name, rows in read_directory(extra).items():
            merged = {p.id: p for p in parts.get(name, [])}
            merged.update({p.id: p for p in rows})
            parts[name] = list(merged.values())
    return Catalog(parts)
