"""Console report of a synthesis run (rich): Pareto table, picks, choke against resistor."""

from __future__ import annotations

from ..cautions import CAUTION_LINES
from ..units import format_si
from .bom import rail_part_values

PICK_LABELS = {"cheapest": "cheapest", "quietest": "quietest", "stiffest": "stiffest",
               "balanced": "balanced"}


def _parts(c) -> str:
    return " ".join(v for r in c.design.rails for v in rail_part_values(r))


def _margins(c) -> str:
    out = []
    for i, r in enumerate(c.design.rails):
        if r.voltage_v is not None:
            out.append(f"{100 * (c.full['dc_v'][i] / r.voltage_v - 1):+.0f}")
        else:
            out.append("·")
    return " ".join(out)


def _margin_text(c) -> str:
    m = c.columns.get("hum_margin_db", float("nan"))
    return f"{m:.1f} dB" if m == m else "·"


def render_synthesis(console, result, limit: int = 25) -> None:
    from rich.panel import Panel
    from rich.table import Table

    brief = result.brief
    console.rule(f"[bold]{brief.title}[/]  ({brief.source})")
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
    t = Table(title=f"Pareto set: {len(result.designs)} verified designs, cheapest first "
                    f"({result.evaluations} candidates evaluated)", title_justify="left")
    for col, just in (("#", "right"), ("filter", "left"), ("transformer / rectifier", "left"),
                      ("links and capacitors", "left"), ("DC off target %", "left"),
                      ("hum Σ", "right"), ("worst margin", "right"), ("idle→full", "right"),
                      ("peak", "right"),
                      (f"cost {cur}", "right"), ("pick", "left")):
        t.add_column(col, justify=just)
    shown = sorted(set(range(min(limit, len(result.designs)))) | set(marks))
    for k in shown:
        c = result.designs[k]
        peak = c.objectives["peak"]
        peak_txt = f"{100 * peak:.0f} %" if c.design.rectifier.max_peak_current_a \
            else format_si(peak, "A")
        source = f"{c.design.transformer.part or '—'} / " \
                 f"{c.design.rectifier.part or c.design.rectifier.kind}"
        t.add_row(str(k + 1), c.notation, source, _parts(c), _margins(c),
                  f"{c.objectives['hum_db']:+.1f} dB", _margin_text(c),
                  f"{-c.objectives['regulation_pct']:.1f} %",
                  peak_txt, f"{c.cost:.2f}", ", ".join(marks.get(k, [])))
    console.print(t)
    console.print("[dim]hum Σ: every rail's ripple over its allowance, powers added, "
                  "10·log10 Σ (ripple/allowed)²; worst margin: the noisiest rail's dB below "
                  "its allowance; peak: rectifier peak current per anode as a share of its "
                  "rating; idle→full: the worst rail's DC change from idle to full signal[/]")
    if len(result.designs) > len(shown):
        console.print(f"[dim]{len(result.designs) - len(shown)} more designs in the output "
                      "files.[/]")
    picks = "\n".join(f"[bold]{name}[/] #{i + 1}: {why}" for name, (i, why) in
                      result.picks.items())
    console.print(Panel(picks, title="Picks"))
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
    console.print(Panel("\n".join(CAUTION_LINES), title="Caution", border_style="yellow"))
