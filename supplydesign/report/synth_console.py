"""Console report of a synthesis run (rich): Pareto table, picks, choke against resistor."""

from __future__ import annotations

from ..cautions import CAUTION_LINES
from ..units import format_si

PICK_LABELS = {"cheapest": "cheapest", "quietest": "quietest", "stiffest": "stiffest",
               "balanced": "balanced"}


#: how each objective and reported column of a candidate is shown: name -> (header,
#: cell text of the value). An objective or column missing here is shown by its name.
#: Shown in this order, then any others the candidates carry.
FIGURES = {
    "hum_db": ("hum Σ dB", lambda c, v: f"{round(v, 1) or 0.0:+.1f}"),  # no "-0.0"
    "hum_margin_db": ("worst margin dB", lambda c, v: f"{v:.1f}" if v == v else "·"),
    "regulation_pct": ("idle→full %", lambda c, v: f"{-v:.1f}"),
    "peak": ("peak", lambda c, v: f"{100 * v:.0f} %" if c.design.rectifier.max_peak_current_a
             else format_si(v, "A")),
}
LEGEND = {
    "hum_db": "hum Σ: every rail's ripple over its allowance, powers added, "
              "10·log10 Σ (ripple/allowed)²",
    "hum_margin_db": "worst margin: the noisiest rail's dB below its allowance",
    "regulation_pct": "idle→full: the worst rail's DC change from idle to full signal",
    "peak": "peak: rectifier peak current per anode as a share of its rating",
}


def compact_value(x: float, unit: str) -> str:
    """A part value without the space, as the trade writes it on a schematic: "10µF"."""
    return format_si(x, unit).replace(" ", "")


def rail_cell(rail) -> str:
    """The parts of one rail, link then capacitor: "10H 22µF", "4.7kΩ 10µF", "330µF"."""
    out = []
    if rail.link.kind == "resistor":
        out.append(compact_value(rail.link.resistance_ohm, "Ω"))
    elif rail.link.kind == "choke":
        out.append(compact_value(rail.link.inductance_h, "H"))
    if rail.capacitor is not None:
        out.append(compact_value(rail.capacitor.capacitance_f, "F"))
    return " ".join(out) or "—"


def dc_offsets(c) -> str:
    """Each rail's DC off its target in %, in rail order: "-6 -6 +4 +3" (· without one)."""
    out = []
    for i, r in enumerate(c.design.rails):
        if r.voltage_v is not None:
            off = round(100 * (c.full['dc_v'][i] / r.voltage_v - 1)) or 0  # no "-0"
            out.append(f"{off:+d}")
        else:
            out.append("·")
    return " ".join(out)


def _source(c) -> tuple[str, str]:
    return (c.design.transformer.part or "—",
            c.design.rectifier.part or c.design.rectifier.kind)


def pareto_sheet(result, shown: list[int], marks: dict[int, list[str]]):
    """The table of the shown designs as a :class:`~supplydesign.report.layout.Sheet`:
    figures (cost, every objective and reported column, picks), then the transformer and
    rectifier where they differ between the shown designs, then each rail's parts."""
    from .layout import Column, Sheet

    cands = [result.designs[k] for k in shown]
    first = cands[0]
    carried = [f for f in (*first.objectives, *first.columns) if f != "cost"]
    figures = [f for f in FIGURES if f in carried] + [f for f in carried if f not in FIGURES]
    cols = [Column("#", key=True), Column("filter", "left", band="figures"),
            Column(f"cost {result.currency or ''}".strip(), band="figures")]
    cols += [Column(FIGURES.get(f, (f,))[0], band="figures") for f in figures]
    cols.append(Column("pick", "left", band="figures"))
    vary = len({_source(c) for c in cands}) > 1
    if vary:
        cols += [Column("transformer", "left", band="transformer and rectifier"),
                 Column("rectifier", "left", band="transformer and rectifier")]
    cols += [Column(r.name, "left", band="parts per rail") for r in result.brief.rails]
    cols.append(Column("DC off target %", "left", band="parts per rail"))
    sheet = Sheet(f"Pareto set: {len(result.designs)} verified designs, cheapest first", cols)
    for k, c in zip(shown, cands, strict=True):
        values = {**c.objectives, **c.columns}
        cells = [str(k + 1), c.notation, f"{c.cost:.2f}"]
        for f in figures:
            show = FIGURES.get(f, (f, lambda c, v: f"{v:.3g}"))[1]
            cells.append(show(c, values[f]))
        cells.append(", ".join(marks.get(k, [])))
        if vary:
            cells += list(_source(c))
        cells += [rail_cell(r) for r in c.design.rails]
        cells.append(dc_offsets(c))
        sheet.add_row(*cells)
    return sheet, None if vary else _source(first)


def render_synthesis(console, result, limit: int = 25, more=None) -> None:
    """Print a synthesis run; ``more(console)``, when given, prints further tables (the
    yields of synth --yield) before the cautions."""
    from rich.panel import Panel

    from .layout import print_sheet

    brief = result.brief
    console.rule(f"[bold]{brief.file_name}[/]")
    console.print(f"[bold]{brief.title}[/]")
    if not result.designs:
        lines = "\n".join(f"• {x}" for x in result.explanation) or "no design found"
        console.print(Panel(lines, title="No buildable design meets this brief",
                            border_style="red"))
        console.print(Panel("\n".join(CAUTION_LINES), title="Caution", border_style="yellow"))
        return
    marks = {}
    for name, (i, _) in result.picks.items():
        marks.setdefault(i, []).append(PICK_LABELS[name])
    cur = result.currency or ""
    shown = sorted(set(range(min(limit, len(result.designs)))) | set(marks))
    sheet, common = pareto_sheet(result, shown, marks)
    if common is not None and common != ("—", brief.rectifier.kind):
        console.print(f"Every design shown takes transformer {common[0]} and rectifier "
                      f"{common[1]}.")
    print_sheet(console, sheet)
    first = result.designs[shown[0]]
    legend = [LEGEND[f] for f in LEGEND if f in first.objectives or f in first.columns]
    console.print(f"[dim]{result.evaluations} candidates evaluated. " + "; ".join(legend)
                  + "; DC off target: each rail's DC from its target, in rail order.[/]")
    if len(result.designs) > len(shown):
        console.print(f"[dim]{len(result.designs) - len(shown)} more designs in the output "
                      "files.[/]")
    picks = "\n".join(f"[bold]{name}[/] #{i + 1}: {why}" for name, (i, why) in
                      result.picks.items())
    console.print(Panel(picks, title="Picks"))
    ex = getattr(result, "heat_exclusion", None)
    if ex:
        console.print(Panel("\n".join(ex["text"]), title="Left out for heat and life"))
    cmp = result.comparison
    if cmp:
        r, c = cmp["resistor"], cmp["choke"]
        lines = [
            f"best all-resistor: {r.notation}, cost {r.cost:.2f} {cur}, hum Σ "
            f"{r.objectives['hum_db']:+.1f} dB, idle→full {-r.objectives['regulation_pct']:.1f} "
            f"%, {format_si(r.resistor_heat_w, 'W')} of heat in dropping resistors",
            f"best with a choke{' at comparable hum' if cmp['comparable_hum'] else ''}: "
            f"{c.notation}, cost {c.cost:.2f} {cur}, hum Σ {c.objectives['hum_db']:+.1f} "
            f"dB, idle→full {-c.objectives['regulation_pct']:.1f} %, "
            f"{format_si(c.resistor_heat_w, 'W')} in resistors, chokes weigh "
            f"{c.choke_mass_kg:.1f} kg",
            f"the choke costs {c.cost - r.cost:+.2f} {cur} and saves "
            f"{format_si(max(r.resistor_heat_w - c.resistor_heat_w, 0.0), 'W')} of heat",
        ]
        console.print(Panel("\n".join(lines), title="Choke against resistor"))
    if more is not None:
        more(console)
    console.print(Panel("\n".join(CAUTION_LINES), title="Caution", border_style="yellow"))
