"""A synthesis run as one self-contained HTML page: tables, inline SVG pictures, cautions.

The page loads nothing from anywhere: the style sheet is inline, the pictures
are inline ``<svg>`` elements, and there is no script. It opens offline in any
browser and can be sent as one file.
"""

from __future__ import annotations

import html
import re
from collections.abc import Mapping

from ..cautions import CAUTION_LINES
from ..evaluation.figures import Figures
from ..units import format_si
from .bom import bom_lines, bom_totals, rail_part_values
from .pareto_plot import pick_marks
from .pictures import design_key, number_width, picked
from .plots import PICK_STYLE, rail_colour

CSS = """
:root { --ink: #27333b; --muted: #6e6a64; --rule: #e3ded5; --paper: #fcfaf5;
        --accent: #12707a; --warn: #b8611a; }
* { box-sizing: border-box; }
body { margin: 0; color: var(--ink); background: #f3f0ea;
       font: 15px/1.5 "DejaVu Sans", "Segoe UI", Helvetica, Arial, sans-serif; }
main { max-width: 1180px; margin: 0 auto; padding: 24px 28px 48px; background: white; }
h1 { font-size: 1.6em; margin: 0 0 4px; }
h2 { font-size: 1.25em; margin: 36px 0 10px; padding-bottom: 4px;
     border-bottom: 2px solid var(--accent); }
h3 { font-size: 1.05em; margin: 22px 0 8px; }
p.meta, p.note, figcaption { color: var(--muted); font-size: 0.9em; }
.caution { border-left: 6px solid var(--warn); background: #fdf3e7; padding: 10px 16px;
           margin: 18px 0; }
.caution strong { color: var(--warn); }
.caution ul { margin: 6px 0; padding-left: 20px; }
nav a { margin-right: 14px; color: var(--accent); }
table { border-collapse: collapse; margin: 8px 0 14px; font-size: 0.88em; }
th, td { padding: 4px 9px; border-bottom: 1px solid var(--rule); text-align: left;
         vertical-align: top; }
th { background: var(--paper); border-bottom: 2px solid #cfc8bc; }
td.n, th.n { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
tr.total td { font-weight: bold; border-top: 2px solid #cfc8bc; }
tr.pick td { background: #f6f2ea; }
.wide { overflow-x: auto; }
figure { margin: 12px 0 22px; }
figure svg { width: 100%; max-width: 900px; height: auto; display: block; }
figure.wide svg { max-width: none; }
td.k { white-space: nowrap; }
.swatch { display: inline-block; width: 0.8em; height: 0.8em; border-radius: 2px;
          margin-right: 5px; vertical-align: -1px; }
.tag { display: inline-block; padding: 0 6px; border-radius: 3px; color: white;
       font-size: 0.85em; margin-right: 4px; }
@media print { body { background: white; } main { max-width: none; } }
"""


class _Raw(str):
    """A table cell that is markup already (not escaped)."""


def _e(text) -> str:
    return text if isinstance(text, _Raw) else html.escape(str(text), quote=True)


def _table(headers, rows, numeric=(), row_class=None, keep=()) -> str:
    """An HTML table; ``numeric``: indices of right-aligned columns, ``keep``: of columns
    not to wrap; cells are escaped."""
    head = "".join(f'<th class="n">{_e(h)}</th>' if j in numeric else f"<th>{_e(h)}</th>"
                   for j, h in enumerate(headers))
    body = []
    for k, row in enumerate(rows):
        cls = row_class(k) if row_class else ""
        cells = "".join(f'<td class="n">{_e(c)}</td>' if j in numeric else
                        f'<td class="k">{_e(c)}</td>' if j in keep else f"<td>{_e(c)}</td>"
                        for j, c in enumerate(row))
        body.append(f'<tr class="{cls}">{cells}</tr>' if cls else f"<tr>{cells}</tr>")
    return (f'<div class="wide"><table><thead><tr>{head}</tr></thead>'
            f'<tbody>{"".join(body)}</tbody></table></div>')


def _tag(name: str) -> str:
    colour = PICK_STYLE.get(name, ("o", "#27333b"))[1]
    return f'<span class="tag" style="background:{colour}">{_e(name)}</span>'


def _figure(svgs: Mapping[str, str], key: str, caption: str, wide: bool = False) -> str:
    if key not in svgs:
        return ""
    cls = ' class="wide"' if wide else ""
    return (f'<figure id="fig-{_e(key)}"{cls}>{svgs[key]}'
            f"<figcaption>{_e(caption)}</figcaption></figure>")


def _rail_cells(c) -> list[str]:
    """Per rail: its link's value, its capacitor and its DC, as "110 Ω · 220 µF · 365 V"
    (each value unbroken, so that a narrow cell breaks only between values)."""
    out = []
    for i, r in enumerate(c.design.rails):
        bits = [*rail_part_values(r), format_si(c.full["dc_v"][i], "V", 4)]
        out.append(" · ".join(b.replace(" ", "\u00a0") for b in bits))
    return out


def _source(c, sep: str = " / ") -> str:
    d = c.design
    return f"{d.transformer.part or '—'}{sep}{d.rectifier.part or d.rectifier.kind}"


def _peak(c) -> str:
    p = c.objectives["peak"]
    return f"{100 * p:.0f} %" if c.design.rectifier.max_peak_current_a else format_si(p, "A")


def _objective_cells(c, cur: str) -> list[str]:
    return [f"{c.objectives['hum_db']:+.1f} dB", _margin(c),
            f"{c.objectives['regulation_pct']:.1f} %", _peak(c), f"{c.cost:.2f} {cur}".strip()]


#: headers of :func:`_objective_cells`
OBJECTIVE_HEADS = ["hum, all rails", "worst-rail margin", "sag idle→full", "peak", "cost"]


HUM_NOTE = (
    '<p class="note">Hum, all rails: every rail\'s rms ripple over its allowance, squared '
    "and added, in dB: 10·log<sub>10</sub> Σ (ripple<sub>i</sub> / allowed<sub>i</sub>)"
    "<sup>2</sup>. Quieter filtering of any rail lowers it; 0 dB is one rail exactly at its "
    "allowance and the others silent, and every rail at its allowance gives 10·log<sub>10"
    "</sub> N for N rails. Each rail must still meet its own allowance; the worst-rail margin "
    "is how far the noisiest rail (against its allowance) stays below it.</p>")


def _margin(c) -> str:
    m = c.columns.get("hum_margin_db", float("nan"))
    return f"{m:.1f} dB" if m == m else "—"


def _picks_section(result, cur: str) -> str:
    rows = [[name, f"#{i + 1}", result.designs[i].notation,
             *_objective_cells(result.designs[i], cur), why]
            for name, (i, why) in result.picks.items()]
    table = _table(["pick", "design", "filter", *OBJECTIVE_HEADS, "why"], rows,
                   numeric=(3, 4, 5, 6, 7))
    return f'<section id="picks"><h2>Picks</h2>{table}</section>'


def _rails_table(c, fig: Figures | None) -> str:
    rows = []
    for i, r in enumerate(c.design.rails):
        link = {"wire": "", "resistor": format_si(r.link.resistance_ohm or 0, "Ω", 3),
                "choke": f"{format_si(r.link.inductance_h or 0, 'H', 3)}"}.get(r.link.kind, "")
        cap = format_si(r.capacitor.capacitance_f, "F", 3) if r.capacitor else "none"
        dc = c.full["dc_v"][i]
        target = (f"{format_si(r.voltage_v, 'V', 4)} ± {100 * r.tolerance:g} %"
                  if r.voltage_v is not None else "—")
        hum = c.full["ripple_rms_v"][i]
        pp = format_si(fig.rails[i].ripple_pp_v, "V") if fig is not None else "—"
        rows.append([r.name, f"{r.link.kind} {link}".strip(), cap,
                     format_si(r.current_a, "A"), format_si(dc, "V", 4), target,
                     format_si(hum, "V"), pp,
                     format_si(r.hum_v, "V") if r.hum_v is not None else "—",
                     f"{c.regulation[i]:.1f} %"])
    head = ["rail", "link", "capacitor", "load", "DC", "target", "hum rms", "hum p-p",
            "allowed rms", "sag idle→full"]
    table = _table(head, rows, numeric=(3, 4, 6, 7, 8, 9))
    swatches = "".join(f'<span class="swatch" style="background:{rail_colour(i)}"></span>'
                       f"{_e(r.name)} &nbsp;" for i, r in enumerate(c.design.rails))
    return table + f'<p class="note">rail colours in the pictures: {swatches}</p>'


def _symbols(text: str) -> str:
    """ASCII units of the CSV ("47 uF", "2.2 kohm") with their symbols ("47 µF", "2.2 kΩ")."""
    text = re.sub(r"(?<=\d )u(?=[FAHVW]\b)", "µ", text)
    text = re.sub(r"(?<=\d) degC\b", " °C", text)
    return re.sub(r"(?<=[\d ]|[kmM])ohm\b", "Ω", text)


def _bom_table(c, fuses=None) -> str:
    lines = bom_lines(c.design, fuses)
    rows = [[b.ref, b.rail, b.kind, b.part, _symbols(b.value), _symbols(b.rating), b.quantity,
             "" if b.unit_price is None else f"{b.unit_price:.2f}",
             "" if b.total_price is None else f"{b.total_price:.2f}", b.currency or ""]
            for b in lines]
    for cur, total in bom_totals(lines).items():
        rows.append(["total", "", "", "", "", "", sum(b.quantity for b in lines), "",
                     f"{total:.2f}", cur])
    n = len(lines)
    return _table(["ref", "rail", "kind", "part", "value", "rating", "qty", "each", "total",
                   "currency"], rows, numeric=(6, 7, 8), keep=(0, 3, 5),
                  row_class=lambda k: "total" if k >= n else "")


def _heat_section(design, heat: dict) -> str:
    """Heat and life of a design and its fuses: ``heat`` holds its HeatLife ``hl``, its
    row ``b`` and its FuseSuggestion ``fs`` (:mod:`supplydesign.evaluation.heatlife`)."""
    from ..evaluation.heatlife import findings
    from .heatlife import capacitor_rows, fuse_lines, heading, resistor_rows, transformer_line

    hl, b, fs = heat["hl"], heat["b"], heat["fs"]
    caps = capacitor_rows(design, hl, b)
    parts = [f"<h3>Heat and life at full signal: {_e(heading(design))}</h3>"]
    if caps:
        parts.append(_table(["capacitor", "ripple rms", "rating", "rise", "air → core", "life"],
                            [[r["part"], r["ripple"], r["rating"], r["rise"], r["core"],
                              r["life"]] for r in caps], numeric=(1, 2, 3, 4, 5)))
    res = resistor_rows(design, hl, b)
    if res:
        parts.append(_table(["resistor", "dissipation", "rating at its air", "air", "upper"],
                            [[r["part"], r["power"], r["rating"], r["air"], r["upper"]]
                             for r in res], numeric=(1, 2, 3, 4)))
    notes = [transformer_line(design, hl, b),
             *(f"{level}: {text}" for level, text in findings(design, hl, b))]
    parts.append("".join(f'<p class="note">{_e(x)}</p>' for x in notes))
    lines = fuse_lines(design, fs, b)
    parts.append("<h3>Fuses</h3><ul>" + "".join(f"<li>{_e(x)}</li>" for x in lines[:-1])
                 + f'</ul><p class="note">{_e(lines[-1])}</p>')
    return "".join(parts)


def _exclusion_section(result) -> str:
    ex = getattr(result, "heat_exclusion", None)
    if not ex:
        return ""
    head, *rest = ex["text"]
    items = "".join(f"<li>{_e(x)}</li>" for x in rest)
    return (f'<section id="heat"><h2>Left out for heat and life</h2><p>{_e(head)}</p>'
            f"<ul>{items}</ul></section>")


def _design_section(result, i: int, fig: Figures | None, svgs: Mapping[str, str],
                    width: int, heat: dict | None = None) -> str:
    c = result.designs[i]
    names = pick_marks(result.picks).get(i, [])
    cur = result.currency or ""
    head = (f'<section id="design-{i + 1}"><h2>Design #{i + 1}: {_e(c.notation)} '
            f'{"".join(_tag(n) for n in names)}</h2>'
            f'<p class="meta">file designs/{i + 1:0{width}d}.toml · {_e(_source(c))} · '
            f"parts cost {c.cost:.2f} {_e(cur)} · hum, all rails "
            f"{c.objectives['hum_db']:+.1f} dB · worst-rail margin {_margin(c)} · "
            f"sag idle→full {c.objectives['regulation_pct']:.1f} %</p>")
    parts = [head, "<h3>Rails (nominal mains, full signal)</h3>", _rails_table(c, fig)]
    captions = {
        "ripple": "Ripple about the DC at every rail over two mains cycles (nominal mains, "
                  "full-signal load); each panel has its own scale.",
        "rectifier": "Current in each anode or diode over two mains cycles: the charging "
                     "pulses of the reservoir.",
        "switch-on": "Switch-on at high mains with discharged capacitors, at the crest of "
                     "the mains voltage.",
        "impedance": "Magnitude of the output impedance of each rail against frequency.",
    }
    for what, caption in captions.items():
        parts.append(_figure(svgs, design_key(i, what, width), caption))
    fuses = None
    if heat is not None:
        from .heatlife import bom_fuses

        parts.append(_heat_section(c.design, heat))
        fuses = bom_fuses(c.design, heat["fs"], heat["b"])
    parts += ["<h3>Bill of materials</h3>", _bom_table(c, fuses), "</section>"]
    return "".join(parts)


def _comparison_section(result, cur: str) -> str:
    cmp = result.comparison
    if not cmp:
        return ""
    index = {id(c): k for k, c in enumerate(result.designs)}
    rows = []
    for side, c in (("all resistors", cmp["resistor"]), ("with a choke", cmp["choke"])):
        k = index.get(id(c))
        rows.append([side, f"#{k + 1}" if k is not None else "off the front", c.notation,
                     *_objective_cells(c, cur), format_si(c.resistor_heat_w, "W"),
                     f"{c.choke_mass_kg:.1f} kg" if c.chokes else "—"])
    note = "" if cmp["comparable_hum"] else (
        '<p class="note">No design with a choke reaches comparable hum; the quietest is '
        "shown.</p>")
    return ('<section id="comparison"><h2>Choke against resistor</h2>'
            + _table(["", "design", "filter", *OBJECTIVE_HEADS, "heat in resistors",
                      "choke mass"], rows, numeric=(3, 4, 5, 6, 7, 8, 9))
            + note + "</section>")


def _all_section(result, cur: str) -> str:
    marks = pick_marks(result.picks)
    rails = [r.name for r in result.brief.rails]
    rows = [[f"#{k + 1}", c.notation, _Raw("<br>".join(map(_e, _source(c, "\n").split("\n")))),
             *_rail_cells(c), *_objective_cells(c, cur), ", ".join(marks.get(k, []))]
            for k, c in enumerate(result.designs)]
    n = len(rails)
    table = _table(["#", "filter", "transformer, rectifier", *[f"{r}: link · C · DC"
                                                               for r in rails],
                    *OBJECTIVE_HEADS, "pick"], rows,
                   numeric=tuple(range(3 + n, 8 + n)), keep=(2,),
                   row_class=lambda k: "pick" if k in marks else "")
    return (f'<section id="all"><h2>Every design of the Pareto set ({len(result.designs)}, '
            f"cheapest first)</h2>{table}</section>")


def _yield_section(result) -> str:
    """The yield of the shown designs (synth --yield), or "" without it."""
    from .spread_html import yield_section_html  # lazy: that module builds on this one

    return yield_section_html(result)


def _caution_box() -> str:
    items = "".join(f"<li>{_e(line)}</li>" for line in CAUTION_LINES)
    return (f'<div class="caution" role="note"><strong>Caution: lethal voltages.</strong>'
            f"<ul>{items}</ul></div>")


def synth_report_html(result, svgs: Mapping[str, str], waves: Mapping[int, Figures], *,
                      seed: int | None = None, heat: Mapping[int, dict] | None = None) -> str:
    """The HTML page of a synthesis run.

    Parameters
    ----------
    result : supplydesign.synth.run.SynthResult
        The run.
    svgs : mapping of picture name to inline SVG markup
        Names as :func:`supplydesign.report.pictures.synth_figures` gives them.
    waves : mapping of design index to Figures
        The designs shown in detail (the picks), with their evaluated figures.
    seed : int, optional
        The run's seed, for the record.
    heat : mapping of design index to dict, optional
        Heat, life and fuses of the designs shown in detail (see :func:`_heat_section`).
    """
    from .. import __version__

    brief = result.brief
    cur = result.currency or ""
    width = number_width(len(result.designs))
    shown = [i for i in picked(result) if i in waves] or sorted(waves)
    nav = "".join(f'<a href="#{a}">{_e(t)}</a>' for a, t in
                  [("picks", "picks"), ("front", "Pareto front")]
                  + [(f"design-{i + 1}", f"design #{i + 1}") for i in shown]
                  + ([("comparison", "choke against resistor")] if result.comparison else [])
                  + ([("yield", "yield")] if result.extra.get("yield") else [])
                  + [("all", "every design")])
    meta = (f"supplydesign {__version__} synthesis of {_e(brief.file_name)} · "
            f"{result.evaluations} candidates evaluated · {len(result.designs)} verified "
            f"designs on the Pareto set" + (f" · seed {seed}" if seed is not None else ""))
    body = [f"<header><h1>{_e(brief.title)}</h1><p class=\"meta\">{meta}</p></header>",
            _caution_box()]
    if not result.designs:
        items = "".join(f"<li>{_e(x)}</li>" for x in result.explanation) or "<li>none</li>"
        body.append(f"<section><h2>No buildable design meets this brief</h2><ul>{items}</ul>"
                    "</section>")
    else:
        body += [f"<nav>{nav}</nav>", _picks_section(result, cur),
                 '<section id="front"><h2>Pareto front</h2>',
                 _figure(svgs, "pareto", "Each point is a verified design; the marked ones "
                         "are the picks. Sag is the worst rail's DC drop from idle to full "
                         "signal.", wide=True), HUM_NOTE, "</section>"]
        body.append(_exclusion_section(result))
        body += [_design_section(result, i, waves.get(i), svgs, width, (heat or {}).get(i))
                 for i in shown]
        body += [_comparison_section(result, cur), _yield_section(result),
                 _all_section(result, cur)]
    body.append('<p class="note">Parts and prices come from the catalog in use; the built-in '
                "catalog and the E-series price model are invented demo data, not market "
                "prices. Figures are a model's: check them on the bench with care.</p>")
    body.append(_caution_box())
    return ("<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">"
            "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">"
            f"<title>{_e(brief.title)} — supplydesign report</title><style>{CSS}</style>"
            f"</head><body><main>{''.join(body)}</main></body></html>\n")
