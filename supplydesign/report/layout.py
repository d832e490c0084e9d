"""Console tables laid out for the terminal's width (rich). Presentation only.

A table is described as data (:class:`Sheet`: a title, :class:`Column` specs and
rows of text) and printed by :func:`print_sheet`, which keeps every value on one
line: a value column never wraps, a text column folds at spaces, and a table wider
than the terminal is split into several tables, each repeating the key columns
(the rail, the design number) at its left. Columns of one *band* (the hum
figures of a rail, say) stay together in one table where they fit, and a split
table is titled by the bands it holds. At 80 columns a wide table thus becomes
two or three narrower ones; on a wide terminal it is one table.
"""

from __future__ import annotations

from dataclasses import dataclass, field

#: a text column folds to no narrower than this (or its longest word)
TEXT_MIN_WIDTH = 14
#: cells a column adds to a table beyond its text: padding on both sides and one rule
COLUMN_FRAME = 3


@dataclass(frozen=True)
class Column:
    """One column of a :class:`Sheet`.

    Attributes
    ----------
    header : str
        Header text; it may fold at spaces.
    justify : str
        "left" or "right" (numbers).
    text : bool
        Words that may fold onto several lines (a description); False for a value
        ("419.5 V", "536 V of 550 V (97 %)"), which never wraps.
    key : bool
        Repeated at the left of every table a split makes (rail name, design number).
    band : str
        Columns with the same band stay in one table where they fit; the band's
        name titles a split table.
    """

    header: str
    justify: str = "right"
    text: bool = False
    key: bool = False
    band: str = ""


@dataclass
class Sheet:
    """A table as data: title, columns and rows of cell text (rich markup allowed)."""

    title: str | None
    columns: list[Column]
    rows: list[list[str]] = field(default_factory=list)

    def add_row(self, *cells: str) -> None:
        if len(cells) != len(self.columns):
            raise ValueError(f"{len(cells)} cells for {len(self.columns)} columns")
        self.rows.append(list(cells))


def plain(text: str) -> str:
    """Cell text without rich markup."""
    from rich.text import Text

    return Text.from_markup(text).plain


def _cells(text: str) -> int:
    from rich.cells import cell_len

    return max((cell_len(line) for line in plain(text).splitlines()), default=0)


def _longest_word(text: str) -> int:
    from rich.cells import cell_len

    return max((cell_len(w) for w in plain(text).split()), default=0)


def column_widths(sheet: Sheet) -> list[tuple[int, int]]:
    """(narrowest, natural) text width of every column: a value column needs its
    longest cell in both; a text column can fold down to its longest word (at least
    :data:`TEXT_MIN_WIDTH` where its text is longer); a header folds at spaces."""
    out = []
    for j, col in enumerate(sheet.columns):
        cells = [row[j] for row in sheet.rows]
        natural = max([_cells(c) for c in cells] + [_longest_word(col.header)])
        if col.text:
            words = max([_longest_word(c) for c in cells] + [_longest_word(col.header)])
            narrow = max(words, min(natural, TEXT_MIN_WIDTH))
        else:
            narrow = natural
        out.append((narrow, natural))
    return out


def split_columns(sheet: Sheet, width: int) -> list[list[int]]:
    """Column indices of each table that ``sheet`` becomes at ``width`` cells: one
    table when it fits, else bands packed in order, each table led by the keys."""
    widths = column_widths(sheet)
    keys = [j for j, c in enumerate(sheet.columns) if c.key]
    # a column with nothing in it says nothing: left out
    rest = [j for j, c in enumerate(sheet.columns)
            if not c.key and any(plain(row[j]).strip() for row in sheet.rows)]

    def need(cols) -> int:
        return 1 + sum(widths[j][0] + COLUMN_FRAME for j in cols)

    if need(keys + rest) <= width or not rest:
        return [keys + rest]
    bands: list[list[int]] = []
    for j in rest:
        if bands and sheet.columns[bands[-1][-1]].band == sheet.columns[j].band:
            bands[-1].append(j)
        else:
            bands.append([j])
    groups: list[list[int]] = [[]]
    for band in bands:
        if not groups[-1] or need(keys + groups[-1] + band) <= width:
            groups[-1] += band
            continue
        groups.append(list(band))
    out = []
    for group in groups:  # a band wider than the terminal alone: split it by column
        part: list[int] = []
        for j in group:
            if part and need(keys + part + [j]) > width:
                out.append(part)
                part = []
            part.append(j)
        out.append(part)
    return [keys + part for part in out]


def _value_widths(sheet: Sheet, group: list[int], widths, width: int) -> dict[int, int]:
    """Widths of the value columns of one table: each its longest cell, widened to hold
    its header on one line where the terminal has room (the narrowest first)."""
    from rich.cells import cell_len

    room = width - 1 - sum(widths[j][0] + COLUMN_FRAME for j in group)
    out = {}
    values = [j for j in group if not sheet.columns[j].text]
    for j in sorted(values, key=lambda j: cell_len(sheet.columns[j].header) - widths[j][0]):
        grow = max(0, cell_len(sheet.columns[j].header) - widths[j][0])
        out[j] = widths[j][0] + (grow if grow <= room else 0)
        room -= out[j] - widths[j][0]
    return out


def tables(sheet: Sheet, width: int) -> list:
    """The rich Tables that print ``sheet`` within ``width`` cells."""
    from rich.table import Table
    from rich.text import Text

    groups = split_columns(sheet, width)
    widths = column_widths(sheet)
    out = []
    labels: list[str] = []
    for group in groups:
        fixed = _value_widths(sheet, group, widths, width)
        title = sheet.title
        if len(groups) > 1:
            bands = list(dict.fromkeys(sheet.columns[j].band for j in group
                                       if not sheet.columns[j].key and sheet.columns[j].band))
            label = ", ".join(bands) or f"part {len(out) + 1} of {len(groups)}"
            labels.append(label)
            if labels.count(label) > 1:  # one band split over several tables
                label += ", continued"
            title = f"{title} — {label}" if title else label
        # a title longer than the table would fold: widen the table up to the width
        least = min(width, _cells(title)) if title else None
        table = Table(title=title, title_justify="left", min_width=least)
        for j in group:
            col = sheet.columns[j]
            head = Text(col.header, no_wrap=False)  # a header folds at spaces, values never
            if col.text:
                table.add_column(head, justify=col.justify, overflow="fold")
            else:
                table.add_column(head, justify=col.justify, no_wrap=True, width=fixed[j])
        for row in sheet.rows:
            table.add_row(*(row[j] for j in group))
        out.append(table)
    return out


def print_sheet(console, sheet: Sheet) -> None:
    """Print ``sheet`` laid out for the console's width."""
    for table in tables(sheet, console.width):
        console.print(table)
