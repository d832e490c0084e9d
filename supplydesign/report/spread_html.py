"""The spread of many builds as HTML: a ``spread`` section (for report.html) and a page of
its own (``supplydesign spread --report``), self-contained like
:mod:`supplydesign.report.html`."""

from __future__ import annotations

from collections.abc import Mapping

from ..design import Design
from ..evaluation.spread import SpreadSummary
from ..evaluation.spreadstats import DRIVERS_METHOD, YIELD_CI_METHOD
from ..units import format_si
from .html import CSS, _caution_box, _e, _figure, _table
from .spread_console import (
    SPREAD_CAUTION,
    TOP_DRIVERS,
    drivers_text,
    mains_hint,
    pct,
    sag_text,
    yield_text,
)


def _with_ci(p, unit: str, digits: int = 4) -> str:
    """"420.2 V (410.7 V – 427.6 V)": a percentile and its 95 % interval."""
    return (f"{format_si(p.value, unit, digits)} ({format_si(p.low, unit, digits)} – "
            f"{format_si(p.high, unit, digits)})")


def spread_section_html(design: Design, s: SpreadSummary, svgs: Mapping[str, str],
                        pictures: tuple[str, str] | None = None, anchor: str = "spread",
                        heading: str | None = None) -> str:
    """The ``spread`` section: yield, sources, DC, hum, drivers, stresses and pictures.

    ``pictures`` names the histogram and drivers pictures in ``svgs``.
    """
    head = heading or f"Spread of {s.builds} builds"
    unsettled = "" if s.converged == s.builds else (
        f" {s.builds - s.converged} builds did not settle and count as missing their targets.")
    parts = [f'<section id="{_e(anchor)}"><h2>{_e(head)}</h2>',
             f'<p class="meta">Latin hypercube, seed {s.seed}. Yield '
             f"<strong>{_e(yield_text(s.passed, s.builds, s.yield_ci))}</strong>: the builds "
             f"meeting every rail's voltage band and hum allowance at their own mains and "
             f"full signal (95 % interval by {_e(YIELD_CI_METHOD)}).{_e(unsettled)}</p>"]
    rows = [[f.part, f.band, f.distribution, f.source] for f in s.factors]
    parts += ["<h3>Where each spread comes from</h3>",
              _table(["part", "band", "distribution", "from"], rows),
              '<p class="note">default: the band assumed for that kind of part when the file, '
              "the catalog and the E-series give none (from memory of makers' offers).</p>"]
    rows = []
    for rail, r in zip(design.rails, s.rails, strict=True):
        target = (f"{format_si(rail.voltage_v, 'V')} ± {100 * rail.tolerance:.3g} %"
                  if rail.voltage_v is not None else "—")
        lo, _, hi = r.regulation_pct
        rows.append([r.name, format_si(r.dc_mean_v, "V", 4),
                     *(_with_ci(p, "V") for p in r.dc_v), target,
                     sag_text(lo.value, hi.value)])
    parts += ["<h3>DC of the builds (own mains, full signal)</h3>",
              _table(["rail", "mean", "1 %", "median", "99 %", "target",
                      "idle→full, 1–99 %"], rows, numeric=(1, 2, 3, 4, 6)),
              '<p class="note">In brackets: the 95 % interval of each percentile from the '
              "builds' order statistics (its sampling error).</p>"]
    rows = []
    for rail, r in zip(design.rails, s.rails, strict=True):
        rows.append([r.name, *(_with_ci(p, "V", 3) for p in r.hum_v),
                     format_si(rail.hum_v, "V") if rail.hum_v is not None else "—",
                     yield_text(r.passed, r.builds, r.yield_ci)])
    parts += ["<h3>Hum of the builds and yield per rail</h3>",
              _table(["rail", "median rms", "99 % rms", "allowed", "rail meets targets"], rows,
                     numeric=(1, 2, 3, 4))]
    rows = []
    for r in s.rails:
        rows.append([r.name, "DC", drivers_text(r.dc_drivers), f"{r.dc_r2:.2f}"])
        rows.append(["", "hum", drivers_text(r.hum_drivers), f"{r.hum_r2:.2f}"])
    parts += [f"<h3>What drives the spread (largest {TOP_DRIVERS})</h3>",
              _table(["rail", "figure", "shares of the variance", "fit R²"], rows, numeric=(3,)),
              f'<p class="note">By {_e(DRIVERS_METHOD)} of the logarithm of each figure on the '
              "logarithms of the parts' multipliers, over the builds; R² is the part of the "
              "variance the linear fit explains.</p>"]
    hint = mains_hint(s)
    if hint:
        parts.append(f'<p class="note">{_e(hint)}</p>')
    rows = []
    for x in s.stresses:
        rating = format_si(x.rating, x.unit) if x.rating is not None else "none given"
        over = f"{x.over} ({pct(x.over / x.builds)})" if x.rating is not None else "—"
        rows.append([x.part, x.what, _with_ci(x.at_percentile, x.unit, 3), rating, over])
    parts += ["<h3>Part stresses at the 99th percentile</h3>",
              _table(["part", "stress", "99 %", "rating", "builds over"], rows,
                     numeric=(2, 3, 4)),
              f'<p class="note">No-load voltage: {_e(s.no_load_method)}. Other stresses at '
              "each build's own mains and full signal; surge from a cold switch-on at the "
              "crest of high mains.</p>"]
    if pictures:
        hist, drivers = pictures
        parts.append(_figure(svgs, hist, "Each rail's DC over the builds with its target band "
                                         "(dashed; the solid line is the target), and its hum "
                                         "with its allowance (dashed)."))
        parts.append(_figure(svgs, drivers, "The parts whose spread moves each rail's DC and "
                                            "hum most, as shares of the variance."))
    parts.append(f'<p class="note">{_e(SPREAD_CAUTION)}</p></section>')
    return "".join(parts)


def yield_section_html(result) -> str:
    """The ``yield`` section of a synthesis page: every shown design's yield over its
    builds (``synth --yield N``); "" when the run measured none."""
    info = result.extra.get("yield")
    if not info:
        return ""
    marks: dict[int, list[str]] = {}
    for name, (i, _) in result.picks.items():
        marks.setdefault(i, []).append(name)
    cur = result.currency or ""
    rows = [[f"#{k + 1}", c.notation, f"{c.cost:.2f} {cur}".strip(),
             yield_text(round(c.columns["yield"] * info["builds"]), info["builds"],
                        (c.columns["yield_low"], c.columns["yield_high"])),
             ", ".join(marks.get(k, []))]
            for k, c in enumerate(result.designs) if "yield" in c.columns]
    least = result.extra.get("min_yield")
    note = "" if least is None else (
        f'<p class="note">Designs whose yield is below {100 * least:.3g} % (or was not '
        f"measured) were left out: {result.extra['below_min_yield']} of them; the picks are "
        "chosen among the rest.</p>")
    return (f'<section id="yield"><h2>Yield over {info["builds"]} builds of each shown '
            f"design</h2>"
            f'<p class="meta">Latin hypercube, seed {info["seed"]}: each build draws every part '
            "within its tolerance and the mains across its band, as supplydesign spread does; "
            "it meets the brief when every rail lies within its voltage band and hum "
            f"allowance. 95 % intervals by {_e(YIELD_CI_METHOD)}.</p>"
            + _table(["design", "filter", "cost", "yield (95 % interval)", "pick"], rows,
                     numeric=(2, 3))
            + note + f'<p class="note">{_e(SPREAD_CAUTION)}</p></section>')


def spread_report_html(design: Design, s: SpreadSummary, svgs: Mapping[str, str],
                       pictures: tuple[str, str] | None = None) -> str:
    """A page of its own holding the spread section, with the cautions."""
    from .. import __version__

    meta = f"supplydesign {__version__} spread of {_e(design.file_name)}"
    body = [f"<header><h1>{_e(design.title)}</h1><p class=\"meta\">{meta}</p></header>",
            _caution_box(), spread_section_html(design, s, svgs, pictures), _caution_box()]
    return ("<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">"
            "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">"
            f"<title>{_e(design.title)} — supplydesign spread</title><style>{CSS}</style>"
            f"</head><body><main>{''.join(body)}</main></body></html>\n")
