"""Reading console output back, for the tests of tables laid out for a terminal's width."""

from __future__ import annotations

import io

from rich.cells import cell_len
from rich.console import Console

from supplydesign.report.layout import Sheet, plain


def render(draw, width: int) -> str:
    """The plain text ``draw(console)`` prints on a console ``width`` cells wide."""
    console = Console(width=width, record=True, force_terminal=False, color_system=None,
                      file=io.StringIO())
    draw(console)
    return console.export_text()


def widest(text: str) -> int:
    return max(cell_len(line) for line in text.splitlines())


def table_bodies(text: str) -> list[list[list[str]]]:
    """The body rows of every table in ``text``: per table, per line, the cells."""
    out: list[list[list[str]]] = []
    inside = False
    for line in text.splitlines():
        if line.startswith("┡"):
            out.append([])
            inside = True
        elif line.startswith("└"):
            inside = False
        elif inside and line.startswith("│"):
            out[-1].append([cell.strip() for cell in line.strip("│").split("│")])
    return out


def broken_values(text: str, sheet: Sheet) -> list[str]:
    """Value cells of ``sheet`` that do not appear whole on one line of ``text`` (a cell
    of several lines, line by line); empty when every value kept its line."""
    lines = text.splitlines()
    missing = []
    for row in sheet.rows:
        for col, cell in zip(sheet.columns, row, strict=True):
            if col.text:
                continue
            for part in plain(cell).splitlines():
                if part.strip() and not any(part.strip() in line for line in lines):
                    missing.append(part.strip())
    return missing
