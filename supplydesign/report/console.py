"""Console report of an evaluation (rich tables). Presentation only: figures in, text out."""

from __future__ import annotations

import math

from ..cautions import CAUTION_LINES
from ..design import Design
from ..evaluation.analysis import regulation_pct
from ..evaluation.figures import Figures
from ..units import format_si


def _pct(x: float | None) -> str:
    return "—" if x is None or not math.isfinite(x) else f"{x:+.1f} %"


def _ratio_cell(used: float, rating: float | None, unit: str) -> str:
    """'used / rating (share)' with a colour telling whether it is within the rating."""
    if rating is None:
        return f"{format_si(used, unit)} (no rating given)"
    share = used / rating if rating > 0 else math.inf
    style = "green" if share <= 0.8 else ("yellow" if share <= 1.0 else "bold red")
    return f"[{style}]{format_si(used, unit)} of {format_si(rating, unit)} ({100 * share:.0f} %)[/]"


def rails_sheet(design: Design, full: Figures, idle: Figures | None):
    """The rails at nominal mains, full signal: DC against target, hum against allowance."""
    from .layout import Column, Sheet

    reg = regulation_pct(full, idle) if idle is not None else [None] * len(full.rails)
    dc, hum = "DC and regulation", "hum"
    sheet = Sheet("Rails (nominal mains, full-signal load)", [
        Column("rail", "left", key=True), Column("DC", band=dc), Column("target", band=dc),
        Column("off target", band=dc), Column("idle→full", band=dc),
        Column("hum rms", band=hum), Column("hum p-p", band=hum), Column("allowed", band=hum),
        Column("hum margin", band=hum)])
    for rail, fig, g in zip(design.rails, full.rails, reg, strict=True):
        target = dev = allowed = margin = "—"
        if rail.voltage_v is not None:
            target = f"{format_si(rail.voltage_v, 'V')} ±{100 * rail.tolerance:.0f} %"
            d = (fig.dc_v - rail.voltage_v) / rail.voltage_v
            style = "green" if abs(d) <= rail.tolerance else "bold red"
            dev = f"[{style}]{100 * d:+.1f} %[/]"
        if rail.hum_v is not None:
            allowed = format_si(rail.hum_v, "V")
            m = 20 * math.log10(rail.hum_v / max(fig.ripple_rms_v, 1e-15))
            style = "green" if m >= 0 else "bold red"
            margin = f"[{style}]{m:+.1f} dB[/]"
        sheet.add_row(rail.name, format_si(fig.dc_v, "V", 4), target, dev,
                      _pct(None if g is None else -g), format_si(fig.ripple_rms_v, "V"),
                      format_si(fig.ripple_pp_v, "V"), allowed, margin)
    return sheet


def stress_rows(design: Design, full: Figures) -> list[tuple]:
    """The nominal-case stress rows of a design: (part, stress, used, rating, unit) for a
    stress with a rating (rating None where the design gives none), (part, stress, text)
    for a figure shown as it is."""
    rect = design.rectifier
    rows: list[tuple] = [
        ("rectifier", "peak current per anode/diode", full.rectifier.peak_a,
         rect.max_peak_current_a, "A"),
        ("", "rms / average per anode/diode",
         f"{format_si(full.rectifier.rms_a, 'A')} / {format_si(full.rectifier.avg_a, 'A')}"),
        ("", "dissipation per anode/diode", format_si(full.rectifier.power_w, "W"))]
    first_cap = design.rails[0].capacitor
    if rect.max_reservoir_f is not None and first_cap is not None \
            and first_cap.capacitance_f is not None:
        rows.append(("", "reservoir capacitance", first_cap.capacitance_f, rect.max_reservoir_f,
                     "F"))
    rows += [("transformer", "DC load current", sum(r.load_a for r in full.rails),
              design.transformer.rated_current_a, "A"),
             ("", "rms current per half-winding", format_si(full.transformer.rms_a, "A")),
             ("", "copper loss", format_si(full.transformer.power_w, "W"))]
    for rail, fig in zip(design.rails, full.rails, strict=True):
        link = rail.link
        if link.kind == "resistor":
            rows.append((f"{rail.name}: {format_si(link.resistance_ohm, 'Ω')}",
                         "resistor dissipation", fig.link_power_w, link.power_w, "W"))
        elif link.kind == "choke":
            rows.append((f"{rail.name}: {format_si(link.inductance_h, 'H')}", "choke DC current",
                         abs(fig.link_dc_a), link.current_rating_a, "A"))
        cap = rail.capacitor
        if cap is not None:
            rows.append((f"{rail.name}: {format_si(cap.capacitance_f, 'F')}",
                         "capacitor: highest voltage (nominal)", fig.peak_v,
                         cap.voltage_rating_v, "V"))
            rows.append(("", "ripple current rms", fig.cap_ripple_rms_a or 0.0,
                         cap.ripple_rating_a, "A"))
    return rows


def stresses_sheet(design: Design, full: Figures):
    """Every part's stress in the nominal case against its rating."""
    from .layout import Column, Sheet

    sheet = Sheet("Part stresses (nominal case)", [
        Column("part", "left", key=True), Column("stress", "left", text=True),
        Column("used against rating", "left")])
    for row in stress_rows(design, full):
        sheet.add_row(row[0], row[1], row[2] if len(row) == 3 else _ratio_cell(*row[2:]))
    return sheet


def render_evaluation(console, design: Design, full: Figures, idle: Figures | None,
                      worst=None, heat=None) -> None:
    """Print the evaluation of one design; ``worst(console)`` and ``heat(console)``, when
    given, print the worst cases and the heat, life and fuses before the cautions."""
    from rich.panel import Panel

    from .layout import print_sheet

    console.rule(f"[bold]{design.file_name}[/]")
    console.print(f"[bold]{design.title}[/]")
    if not full.converged:
        console.print(f"[bold red]No working steady state was found for this design "
                      f"({full.note}); treat its figures with suspicion.[/]")
    print_sheet(console, rails_sheet(design, full, idle))
    print_sheet(console, stresses_sheet(design, full))
    if worst is not None:
        worst(console)
    if heat is not None:
        heat(console)
    console.print(Panel("\n".join(CAUTION_LINES), title="Caution", border_style="yellow"))
