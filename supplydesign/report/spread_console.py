"""Console report of a spread of many builds (tables laid out for the terminal's width).
Presentation only: a :class:`~supplydesign.evaluation.spread.SpreadSummary` in, text out."""

from __future__ import annotations

import math

from ..cautions import CAUTION_LINES
from ..design import Design
from ..evaluation.spread import SpreadSummary, StressSpread
from ..evaluation.spreadstats import DRIVERS_METHOD, YIELD_CI_METHOD
from ..units import format_si
from .layout import Column, Sheet, print_sheet

#: drivers named per rail and figure
TOP_DRIVERS = 3
#: a regression fit below this R² is flagged: the shares then say less
LOW_R2 = 0.8
#: the caution a spread adds to the general ones
SPREAD_CAUTION = ("A yield is a model's estimate for parts within their stated tolerances; "
                  "it says nothing of parts outside them, of wiring faults or of safety.")


def pct(x: float, digits: int = 1) -> str:
    return "—" if not math.isfinite(x) else f"{100 * x:.{digits}f} %"


def yield_text(passed: int, builds: int, ci: tuple[float, float]) -> str:
    """"57.0 % (52.1-61.8 %)": a yield and its 95 % interval."""
    return f"{pct(passed / builds)} ({100 * ci[0]:.1f}–{pct(ci[1])})"


def drivers_text(drivers, top: int = TOP_DRIVERS) -> str:
    """"mains 71 %, transformer resistance 14 %, ..." of the largest shares."""
    shown = [d for d in drivers[:top] if d.share >= 0.005]
    return ", ".join(f"{d.part} {100 * d.share:.0f} %" for d in shown) or "—"


def _sheet(title: str, *columns: Column) -> Sheet:
    return Sheet(title, list(columns))


def escape(text: str) -> str:
    """``text`` with its square brackets kept from being read as rich markup."""
    from rich.markup import escape as rich_escape

    return rich_escape(text)


def _caption(console, text: str) -> None:
    """A note under a table, dimmed and folded to the console's width."""
    console.print(f"[dim]{escape(text)}[/]")


def sources_table(s: SpreadSummary) -> Sheet:
    t = _sheet("Where each spread comes from", Column("part", "left", key=True),
               Column("band"), Column("distribution", "left"),
               Column("from", "left", text=True))
    for f in s.factors:
        t.add_row(f.part, f.band, f.distribution, f.source)
    return t


SOURCES_NOTE = ("default: the band assumed for that kind of part when the file, the catalog "
                "and the E-series give none (from memory of makers' offers).")


def dc_table(design: Design, s: SpreadSummary) -> Sheet:
    t = _sheet("DC of the builds: own mains, full signal", Column("rail", "left", key=True),
               *(Column(h, band="DC") for h in ("1 %", "median", "99 %")),
               Column("target", band="target"), Column("idle→full 1–99 %", band="idle→full"))
    for rail, r in zip(design.rails, s.rails, strict=True):
        target = "—"
        if rail.voltage_v is not None:
            target = f"{format_si(rail.voltage_v, 'V')} ±{100 * rail.tolerance:.3g} %"
        lo, _, hi = r.regulation_pct
        t.add_row(r.name, *(format_si(p.value, "V", 4) for p in r.dc_v), target,
                  sag_text(lo.value, hi.value))
    return t


def dc_note(s: SpreadSummary) -> str:
    err = max((max(p.value - p.low, p.high - p.value) / abs(p.value)
               for r in s.rails for p in r.dc_v if p.value), default=math.nan)
    return (f"Percentiles of {s.converged} settled builds; 95 % sampling error at most "
            f"±{pct(err, 2)} of a value (the JSON gives each interval).")


def hum_table(design: Design, s: SpreadSummary) -> Sheet:
    t = _sheet("Hum of the builds and yield per rail", Column("rail", "left", key=True),
               Column("median", band="hum"), Column("99 %", band="hum"),
               Column("allowed", band="hum"), Column("rail meets targets", band="yield"))
    for rail, r in zip(design.rails, s.rails, strict=True):
        allowed = format_si(rail.hum_v, "V") if rail.hum_v is not None else "—"
        style = "green" if r.yield_ >= 0.95 else ("yellow" if r.yield_ >= 0.8 else "bold red")
        t.add_row(r.name, *(format_si(p.value, "V") for p in r.hum_v), allowed,
                  f"[{style}]{yield_text(r.passed, r.builds, r.yield_ci)}[/]")
    return t


def drivers_table(s: SpreadSummary) -> Sheet:
    t = _sheet("What drives the spread (share of the variance)",
               Column("rail", "left", key=True), Column("figure", "left"),
               Column(f"largest {TOP_DRIVERS}", "left", text=True), Column("fit R²"))
    for r in s.rails:
        for k, (what, drivers, r2) in enumerate((("DC", r.dc_drivers, r.dc_r2),
                                                 ("hum", r.hum_drivers, r.hum_r2))):
            fit = "—" if not math.isfinite(r2) else f"{r2:.2f}"
            if math.isfinite(r2) and r2 < LOW_R2:
                fit = f"[yellow]{fit}[/]"
            t.add_row(r.name if k == 0 else "", what, drivers_text(drivers), fit)
    return t


DRIVERS_NOTE = f"By {DRIVERS_METHOD} over the builds (see README)."


def sag_text(lo: float, hi: float) -> str:
    """The idle→full DC change from the 1st to the 99th percentile of the regulation
    (idle minus full, % of full): "-5.9 … -4.4 %", or one value where they agree."""
    a, b = -hi + 0.0, -lo + 0.0  # + 0.0: no negative zero
    if abs(a - b) < 0.05:
        return f"{a:+.1f} %"
    return f"{a:+.1f} … {b:+.1f} %"


def _stress_row(x: StressSpread) -> list[str]:
    value = format_si(x.at_percentile.value, x.unit)
    if x.rating is None:
        return [x.part, x.what, value, "no rating"]
    share = x.at_percentile.value / x.rating
    style = "green" if share <= 0.8 else ("yellow" if share <= 1.0 else "bold red")
    over = f"{x.over} ({pct(x.over / x.builds, 0)})" if x.over else "0"
    return [x.part, x.what, f"[{style}]{value} of {format_si(x.rating, x.unit)}[/]", over]


def stresses_table(s: SpreadSummary) -> Sheet:
    t = _sheet("Part stresses at the 99th percentile of the builds",
               Column("part", "left", key=True), Column("stress", "left", text=True),
               Column("99 % against rating"), Column("builds over"))
    for x in s.stresses:
        t.add_row(*_stress_row(x))
    return t


def stresses_note(s: SpreadSummary) -> str:
    return (f"No-load voltage: {s.no_load_method}. Other stresses at each build's own mains "
            "and full signal; surge from a cold switch-on at the crest of high mains.")


def mains_hint(s: SpreadSummary) -> str:
    """A hint when the mains drives most of some rail's DC spread ("" otherwise)."""
    mains = next((f for f in s.factors if f.part == "mains"), None)
    if mains is None or not (mains.low or mains.high):
        return ""
    if any(r.dc_drivers and r.dc_drivers[0].part == "mains" for r in s.rails):
        return ("The mains drives most of the DC spread; --fixed-mains shows the spread of "
                "the parts alone, and [mains] distribution = \"normal\" treats the band as "
                "±3σ rather than every voltage in it as equally likely.")
    return ""


def render_spread(console, design: Design, s: SpreadSummary) -> None:
    """Print the spread of one design."""
    from rich.panel import Panel

    console.rule(f"[bold]{design.file_name}[/]")
    console.print(f"[bold]{design.title}[/]")
    settled = "" if s.converged == s.builds else (
        f"; [bold red]{s.builds - s.converged} did not settle[/] (counted as missing "
        "their targets)")
    console.print(f"{s.builds} builds drawn by Latin hypercube, seed {s.seed}{settled}.")
    style = "green" if s.yield_ >= 0.95 else ("yellow" if s.yield_ >= 0.8 else "bold red")
    console.print(f"Yield: [{style}]{yield_text(s.passed, s.builds, s.yield_ci)}[/] of the "
                  f"builds meet every rail's voltage band and hum allowance (95 % interval "
                  f"by {YIELD_CI_METHOD}).")
    for sheet, note in ((sources_table(s), SOURCES_NOTE), (dc_table(design, s), dc_note(s)),
                        (hum_table(design, s), None), (drivers_table(s), DRIVERS_NOTE),
                        (stresses_table(s), stresses_note(s))):
        print_sheet(console, sheet)
        if note:
            _caption(console, note)
    hint = mains_hint(s)
    if hint:
        console.print(escape(hint))
    console.print(Panel("\n".join((*CAUTION_LINES, SPREAD_CAUTION)), title="Caution",
                        border_style="yellow"))


def render_yields(console, result) -> None:
    """The yield of the shown designs of a synthesis run (``synth --yield N``)."""
    info = result.extra.get("yield")
    if not info:
        return
    marks: dict[int, list[str]] = {}
    for name, (i, _) in result.picks.items():
        marks.setdefault(i, []).append(name)
    cur = result.currency or ""
    t = _sheet(f"Yield over {info['builds']} builds of each shown design (seed {info['seed']})",
               Column("#", key=True), Column("filter", "left"), Column(f"cost {cur}".strip()),
               Column("yield (95 % interval)"), Column("pick", "left", text=True))
    for k, c in enumerate(result.designs):
        if "yield" not in c.columns:
            continue
        y = c.columns["yield"]
        style = "green" if y >= 0.95 else ("yellow" if y >= 0.8 else "bold red")
        t.add_row(str(k + 1), c.notation, f"{c.cost:.2f}",
                  f"[{style}]{pct(y)}[/] ({100 * c.columns['yield_low']:.1f}–"
                  f"{pct(c.columns['yield_high'])})", ", ".join(marks.get(k, [])))
    if t.rows:
        print_sheet(console, t)
        _caption(console, "Each build draws every part within its tolerance and the mains "
                          "across its band, as supplydesign spread does; it meets the brief "
                          "when every rail lies within its voltage band and hum allowance.")
    least = result.extra.get("min_yield")
    if least is not None:
        console.print(escape(f"--min-yield {100 * least:.3g} %: "
                             f"{result.extra['below_min_yield']} designs below it or not "
                             "measured were left out; the picks are chosen among the rest."))
