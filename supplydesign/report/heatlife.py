"""The heat-and-life figures and the fuse suggestions as words, console tables, HTML
and JSON objects. Presentation only: figures in, text out."""

from __future__ import annotations

import math

from ..design import Design
from ..evaluation.heatlife import FuseSuggestion, HeatLife
from ..parts import derating, fuses
from ..units import format_si
from .bom import BomFuses

#: a life estimate beyond this many years says more about the rule than about the part
#: (seals and sleeves age too) [practice]
CREDIBLE_YEARS = 15.0


def _f(x) -> float | None:
    x = float(x)
    return x if math.isfinite(x) else None


def rounded(x: float, digits: int = 2) -> str:
    """A number rounded to ``digits`` significant figures with thin thousands: 88 000."""
    if not math.isfinite(x):
        return "—"
    if x == 0:
        return "0"
    r = float(f"{x:.{digits}g}")
    return f"{r:,.0f}".replace(",", " ") if r >= 100 else f"{r:g}"


def life_cell(hl: HeatLife, b: int, i: int) -> str:
    """"88 000 h, 60 y", "88 000 h, >15 y" or "—"."""
    h = hl.cap_life_h[b, i]
    if not math.isfinite(h):
        return "—"
    years = float(hl.cap_life_years[b, i])
    word = f">{CREDIBLE_YEARS:.0f} y" if years > CREDIBLE_YEARS else f"{years:.1f} y"
    return f"{rounded(h)} h, {word}"


def level(used: float, allowed: float) -> str:
    """"ok", "high" (above 80 %) or "over" the rating; "ok" without a rating."""
    if not (math.isfinite(used) and math.isfinite(allowed)) or allowed <= 0:
        return "ok"
    return "over" if used > allowed else ("high" if used > 0.8 * allowed else "ok")


def rating_cell(allowed: float, rated: float | None, unit: str) -> str:
    """The rating at the part's air temperature; "*" marks one derated below the data
    sheet's; "—" for none."""
    if not math.isfinite(allowed):
        return "—"
    derated = rated is not None and math.isfinite(rated) and allowed < rated * (1 - 1e-9)
    return format_si(allowed, unit) + ("*" if derated else "")


def heading(design: Design) -> str:
    """"air 45 °C (plates 55 °C), 4 h a day"."""
    ch = design.chassis
    air = f"{ch.ambient:.0f} °C" + ("" if ch.ambient_c is not None else " (default)")
    own = [f"{r.name} {design.ambient_c(i):.0f} °C" for i, r in enumerate(design.rails)
           if r.ambient_c is not None]
    if own:
        air += f" ({', '.join(own)})"
    use = f"{24 * ch.use_share:g} h a day" + ("" if ch.use is not None else " (default)")
    return f"air {air}, in use {use}"


def capacitor_rows(design: Design, hl: HeatLife, b: int) -> list[dict]:
    """Per capacitor: part, ripple, rating, level, rise, core, life, life_short."""
    out = []
    for i, r in enumerate(design.rails):
        c = r.capacitor
        if c is None:
            continue
        rise = hl.cap_rise_k[b, i]
        out.append({
            "part": f"C{i + 1} {r.name}", "ripple": format_si(hl.cap_ripple_a[b, i], "A"),
            "rating": rating_cell(hl.cap_allowed_a[b, i], c.ripple_rating_a, "A"),
            "level": level(hl.cap_ripple_a[b, i], hl.cap_allowed_a[b, i]),
            "rise": "no size" if not math.isfinite(rise) else f"{rise:.1f} K",
            "core": f"{hl.ambient_c[b, i]:.0f}→{hl.cap_core_c[b, i]:.0f} °C",
            "life": life_cell(hl, b, i),
            "life_short": bool(design.chassis.min_life_h is not None
                               and hl.cap_life_h[b, i] < design.chassis.min_life_h)})
    return out


def resistor_rows(design: Design, hl: HeatLife, b: int) -> list[dict]:
    """Per dropping resistor: part, power, rating at its air, level, air, upper."""
    out = []
    for i, r in enumerate(design.rails):
        if r.link.kind != "resistor":
            continue
        p, pa = hl.res_power_w[b, i], hl.res_allowed_w[b, i]
        out.append({"part": f"R{i + 1} {r.name}", "power": format_si(p, "W"),
                    "rating": rating_cell(pa, r.link.power_w, "W"), "level": level(p, pa),
                    "air": f"{hl.ambient_c[b, i]:.0f} °C",
                    "upper": f"{hl.res_upper_c[b, i]:.0f} °C"})
    return out


def transformer_line(design: Design, hl: HeatLife, b: int) -> str:
    t = design.transformer
    per = " per half" if t.winding == "center-tapped" else ""
    rms, allowed = hl.winding_rms_a[b], hl.winding_allowed_a[b]
    text = (f"Transformer: {format_si(rms, 'A')} rms{per} at "
            f"{format_si(hl.output_dc_a[b], 'A')} DC out of the rectifier (form factor "
            f"{hl.form_factor[b]:.2f}); copper loss {format_si(hl.copper_loss_w[b], 'W')}")
    if not math.isfinite(allowed):
        return text + ". No rating given (rated_current, rated_rms_current or rated_power)."
    text += (f", {format_si(hl.copper_loss_rated_w[b], 'W')} at its rating. "
             f"{100 * rms / allowed:.0f} % of ")
    basis = hl.winding_basis[b]
    if basis == "DC":
        ff = float(derating.assumed_form_factor(hl.winding_rated_for[b],
                                                design.rectifier.arrangement)[0])
        return text + (f"the {format_si(allowed, 'A')} rms its {format_si(t.rated_current_a, 'A')}"
                       f" DC rating allows for a {hl.winding_rated_for[b]} (an assumed form "
                       f"factor of {ff:.2f}).")
    if basis == "VA":
        return text + f"the {format_si(allowed, 'A')} rms{per} of its {t.rated_va:g} VA rating."
    return text + f"its {format_si(allowed, 'A')} rms rating{per}."


def fuse_lines(design: Design, fs: FuseSuggestion, b: int) -> list[str]:
    """The HT and mains fuse suggestions with their reasoning, and the caution."""
    out = []
    for which, rating, rms, i2t, where, parts in (
            ("HT", fs.ht_a[b], fs.ht_rms_a[b], fs.ht_surge_i2t[b], fs.position(design), ""),
            ("Mains", fs.mains_a[b], fs.mains_rms_a[b], fs.mains_surge_i2t[b],
             f"in the primary ({fs.primary_v[b]:g} V"
             + ("" if fs.primary_given[b] else ", assumed: give [transformer] primary") + ")",
             f" (HT winding {format_si(fs.mains_ht_a[b], 'A')}, other load "
             f"{format_si(fs.mains_other_a[b], 'A')})")):
        need = fuses.RMS_FACTOR * rms
        least = "" if math.isfinite(i2t) else "at least "
        head = (f"{which} fuse: {least}{fuses.rating_text(rating)} time-lag (T), {where}: "
                if math.isfinite(rating) else
                f"{which} fuse: none of {fuses.rating_text(fuses.RATINGS_A[-1])} or less "
                f"serves, {where}: ")
        text = (head + f"{format_si(rms, 'A')} rms at high mains (+{100 * fs.high[b]:.0f} %) "
                f"and full signal{parts} × {fuses.RMS_FACTOR:g} = {format_si(need, 'A')}; ")
        if math.isfinite(i2t):
            text += (f"switch-on surge {i2t:.2g} A²s, which asks "
                     f"{format_si(float(fuses.least_for_surge_a(i2t)), 'A')} or more (at most "
                     f"{100 * fuses.SURGE_SHARE:.0f} % of the melting I²t, typically "
                     f"{fuses.MELTING_I2T_S:g} A²s per A² of rating: from memory)")
        else:
            text += ("switch-on surge not checked here (evaluate the design file, without "
                     "--nominal-only, to check it)")
        if which == "Mains":
            text += "; the transformer's inrush and cold heaters are not modelled"
            if design.transformer.other_load_va is None:
                text += "; no [transformer] other_load given (heaters, bias)"
        out.append(text + ".")
    out.append(fuses.FUSE_CAUTION)
    return out


def bom_fuses(design: Design, fs: FuseSuggestion, b: int) -> BomFuses:
    """Design b's fuses as the bill of materials lists them."""
    return BomFuses(ht_a=float(fs.ht_a[b]), mains_a=float(fs.mains_a[b]),
                    ht_position=fs.position(design), primary_v=float(fs.primary_v[b]),
                    surge_checked=bool(math.isfinite(fs.ht_surge_i2t[b])))


def capacitor_json(design: Design, hl: HeatLife, b: int, i: int) -> dict | None:
    """The ``rails[].capacitor`` object (shared/FORMAT.md) plus further keys."""
    c = design.rails[i].capacitor
    if c is None:
        return None
    out = {"ripple_rms_a": _f(hl.cap_ripple_a[b, i]),
           "temperature_rise_k": _f(hl.cap_rise_k[b, i])}
    if math.isfinite(hl.cap_life_h[b, i]):
        out["life_h"] = _f(hl.cap_life_h[b, i])
        out["life_years"] = _f(hl.cap_life_years[b, i])
    out.update({"ambient_c": _f(hl.ambient_c[b, i]), "core_c": _f(hl.cap_core_c[b, i]),
                "ripple_rating_a": c.ripple_rating_a,
                "ripple_allowed_a": _f(hl.cap_allowed_a[b, i]),
                "rated_life_h": c.rated_life_h, "rated_temperature_c": c.rated_temperature_c})
    return out


def resistor_json(design: Design, hl: HeatLife, b: int, i: int) -> dict | None:
    link = design.rails[i].link
    if link.kind != "resistor":
        return None
    return {"power_w": _f(hl.res_power_w[b, i]), "rating_w": link.power_w,
            "allowed_w": _f(hl.res_allowed_w[b, i]), "ambient_c": _f(hl.ambient_c[b, i]),
            "upper_temperature_c": _f(hl.res_upper_c[b, i])}


def transformer_json(hl: HeatLife, b: int) -> dict:
    return {"output_dc_a": _f(hl.output_dc_a[b]), "form_factor": _f(hl.form_factor[b]),
            "rms_allowed_a": _f(hl.winding_allowed_a[b]),
            "rating_basis": hl.winding_basis[b] or None,
            "dc_rating_assumes": hl.winding_rated_for[b],
            "copper_loss_rated_w": _f(hl.copper_loss_rated_w[b])}


def fuses_json(design: Design, fs: FuseSuggestion, b: int) -> dict:
    """The ``fuses`` object (shared/FORMAT.md) plus the figures behind it."""
    return {"ht_a": _f(fs.ht_a[b]), "mains_a": _f(fs.mains_a[b]), "kind": "time-lag",
            "ht_position": fs.position(design), "ht_rms_a": _f(fs.ht_rms_a[b]),
            "ht_surge_i2t_a2s": _f(fs.ht_surge_i2t[b]), "mains_rms_a": _f(fs.mains_rms_a[b]),
            "mains_surge_i2t_a2s": _f(fs.mains_surge_i2t[b]), "primary_v": _f(fs.primary_v[b]),
            "primary_assumed": not bool(fs.primary_given[b]), "rms_factor": fuses.RMS_FACTOR,
            "surge_checked": bool(math.isfinite(fs.ht_surge_i2t[b])),
            "reasons": fuse_lines(design, fs, b)[:2], "caution": fuses.FUSE_CAUTION}


def heat_life_json(design: Design, hl: HeatLife, fs: FuseSuggestion, b: int) -> dict:
    """Design b's heat, life and fuse objects, as :func:`report.export.evaluation_json`
    takes them."""
    R = len(design.rails)
    return {"capacitors": [capacitor_json(design, hl, b, i) for i in range(R)],
            "resistors": [resistor_json(design, hl, b, i) for i in range(R)],
            "transformer": transformer_json(hl, b), "fuses": fuses_json(design, fs, b),
            "chassis": chassis_json(design, hl, b)}


def chassis_json(design: Design, hl: HeatLife, b: int) -> dict:
    ch = design.chassis
    return {"ambient_c": ch.ambient, "ambient_default": ch.ambient_c is None,
            "hours_per_day": 24.0 * ch.use_share, "min_life_h": ch.min_life_h,
            "shortest_life_h": _f(hl.shortest_life_h()[b])}


STYLE = {"ok": "green", "high": "yellow", "over": "bold red"}


def render(console, design: Design, hl: HeatLife, b: int, fs: FuseSuggestion | None) -> None:
    """Print the heat-and-life tables, their findings and the fuse suggestions of design b."""
    from rich.table import Table

    from ..evaluation.heatlife import findings

    def table(title: str, *columns: str):
        t = Table(title=title, title_justify="left")
        for k, col in enumerate(columns):
            t.add_column(col, justify="left" if k == 0 else "right")
        return t

    caps = capacitor_rows(design, hl, b)
    if caps:
        t = table(f"Capacitors at full signal: {heading(design)}", "capacitor", "ripple",
                  "rating", "rise", "air→core", "life")
        for row in caps:
            life = f"[bold red]{row['life']}[/]" if row["life_short"] else row["life"]
            t.add_row(row["part"], f"[{STYLE[row['level']]}]{row['ripple']}[/]",
                      row["rating"], row["rise"], row["core"], life)
        console.print(t)
    res = resistor_rows(design, hl, b)
    if res:
        t = table("Dropping resistors (rated power derated above 70 °C)", "resistor",
                  "dissipation", "rating", "air", "upper")
        for row in res:
            t.add_row(row["part"], f"[{STYLE[row['level']]}]{row['power']}[/]", row["rating"],
                      row["air"], row["upper"])
        console.print(t)
    if any("*" in row["rating"] for row in (*caps, *res)):
        console.print("* derated for its air temperature")
    console.print(transformer_line(design, hl, b))
    for lev, text in findings(design, hl, b):
        style = "bold red" if lev == "warning" else "yellow"
        console.print(f"[{style}]{lev}:[/] {text}")
    if fs is not None:
        for line in fuse_lines(design, fs, b):
            console.print(line)
