"""Console summary of many evaluated designs, one row each. Presentation only.

``evaluate`` prints the full tables of each design for a few designs; past
``SUMMARY_ABOVE`` designs (a folder of variants, a batch from a script) it prints
this summary instead, and the full tables with ``--details``.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

from ..design import Design
from ..evaluation.figures import Figures
from ..units import format_si
from .console import stress_rows

#: more designs than this get the summary instead of the full tables
SUMMARY_ABOVE = 3


def _worst_dc(design: Design, full: Figures) -> str:
    """The rail furthest off its DC target, against its tolerance."""
    worst = None
    for rail, fig in zip(design.rails, full.rails, strict=True):
        if rail.voltage_v is None:
            continue
        dev = (fig.dc_v - rail.voltage_v) / rail.voltage_v
        if worst is None or abs(dev) / rail.tolerance > abs(worst[1]) / worst[2]:
            worst = (rail.name, dev, rail.tolerance)
    if worst is None:
        return "—"
    name, dev, tol = worst
    style = "green" if abs(dev) <= tol else "bold red"
    return f"[{style}]{name} {100 * dev:+.1f} % (±{100 * tol:.0f} %)[/]"


def _worst_hum(design: Design, full: Figures) -> str:
    """The rail with the least hum margin, in dB."""
    worst = None
    for rail, fig in zip(design.rails, full.rails, strict=True):
        if rail.hum_v is None:
            continue
        m = 20 * math.log10(rail.hum_v / max(fig.ripple_rms_v, 1e-15))
        if worst is None or m < worst[1]:
            worst = (rail.name, m)
    if worst is None:
        return "—"
    style = "green" if worst[1] >= 0 else "bold red"
    return f"[{style}]{worst[0]} {worst[1]:+.1f} dB[/]"


def _over_rating(design: Design, full: Figures) -> str:
    """How many nominal stresses exceed their rating."""
    over = sum(1 for row in stress_rows(design, full)
               if len(row) == 5 and row[3] is not None and row[2] > row[3])
    return "0" if over == 0 else f"[bold red]{over}[/]"


def summary_sheet(designs: Sequence[Design], full: Sequence[Figures], findings=None):
    """One row per design: the worst rail's DC and hum, the rectifier's peak, the nominal
    stresses over rating, with the worst cases the count of warnings, and whether the
    steady state settled.

    ``findings(b)``, when given, returns design b's (level, text) findings."""
    from .layout import Column, Sheet

    parts = "parts and solver"
    cols = [Column("#", key=True), Column("design", "left", key=True),
            Column("DC off target (worst)", band="rails"),
            Column("hum margin (least)", band="rails"), Column("rectifier peak", band=parts),
            Column("over rating", band=parts)]
    if findings is not None:
        cols.append(Column("warnings", band=parts))
    cols.append(Column("settled", band=parts))
    sheet = Sheet(f"{len(designs)} designs (nominal mains, full-signal load)", cols)
    for b, (d, f) in enumerate(zip(designs, full, strict=True)):
        rect = d.rectifier
        peak = format_si(f.rectifier.peak_a, "A")
        if rect.max_peak_current_a:
            share = f.rectifier.peak_a / rect.max_peak_current_a
            style = "green" if share <= 1.0 else "bold red"
            peak = f"[{style}]{peak} ({100 * share:.0f} %)[/]"
        row = [str(b + 1), d.file_name, _worst_dc(d, f), _worst_hum(d, f), peak,
               _over_rating(d, f)]
        if findings is not None:
            n = sum(1 for level, _ in findings(b) if level == "warning")
            row.append("0" if n == 0 else f"[yellow]{n}[/]")
        sheet.add_row(*row, "yes" if f.converged else "[bold red]no[/]")
    return sheet


def render_summary(console, designs: Sequence[Design], full: Sequence[Figures],
                   findings=None) -> None:
    """Print the summary, how to see the details, and the cautions."""
    from rich.panel import Panel

    from ..cautions import CAUTION_LINES
    from .layout import print_sheet

    print_sheet(console, summary_sheet(designs, full, findings))
    console.print("The full tables of every design (rails, part stresses, worst cases, heat "
                  "and life): add --details. Every figure of every design: --json FILE.")
    console.print(Panel("\n".join(CAUTION_LINES), title="Caution", border_style="yellow"))
