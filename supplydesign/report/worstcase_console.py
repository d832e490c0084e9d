"""Console tables of the worst cases of one design (rich). Presentation only."""

from __future__ import annotations

import math

import numpy as np

from ..circuit import formulas
from ..evaluation.stress import PEAK_SOURCES, capacitor_stress, checks, damping
from ..evaluation.worstcase import WorstCases, signal_dependent
from ..units import format_si
from .console import _ratio_cell
from .layout import Column, Sheet, print_sheet

#: frequencies at which the output impedance is shown [Hz]
SHOWN_HZ = (1.0, 10.0, 100.0, 1000.0)


def _table(title: str, *columns: str | Column) -> Sheet:
    """A sheet keyed by its first column (left), the others values (right) unless given
    as :class:`Column`."""
    cols = [c if isinstance(c, Column) else Column(c, "left" if k == 0 else "right",
                                                   key=k == 0)
            for k, c in enumerate(columns)]
    return Sheet(title, cols)


def _v(x: float, digits: int = 4) -> str:
    return format_si(float(x), "V", digits)


def _time(x: float) -> str:
    if math.isnan(x):
        return "not reached"
    return "never" if math.isinf(x) else format_si(float(x), "s")


def cases_table(wc: WorstCases, b: int):
    d = wc.designs[b]
    a = {name: c.arrays for name, c in wc.cases.items()}
    t = _table(f"Rail DC over the mains and load cases (mains -{100 * d.mains.low:.0f} % "
               f"low, +{100 * d.mains.high:.0f} % high)", "rail", "nominal, full",
               "low mains, full", "high mains, idle", "high mains, no load", "idle→full")
    for i, r in enumerate(d.rails):
        low = a["low_mains_full_load"].dc_v[b, i]
        cell = _v(low)
        if r.voltage_v is not None:
            ok = abs(low / r.voltage_v - 1.0) <= r.tolerance
            cell = f"[{'green' if ok else 'bold red'}]{cell}[/]"
        full, idle = a["nominal"].dc_v[b, i], a["idle"].dc_v[b, i]
        reg = f"{100 * (full - idle) / full:+.1f} %" if full else "—"
        t.add_row(r.name, _v(full), cell, _v(a["high_mains_idle"].dc_v[b, i]),
                  _v(a["high_mains_no_load"].dc_v[b, i]), reg)
    return t


def capacitor_table(wc: WorstCases, b: int):
    cs = capacitor_stress(wc)
    cases, worst = "by case", "against rating"
    t = _table("Capacitor voltage: highest in any case", "capacitor",
               Column("nominal", band=cases), Column("high mains, no load", band=cases),
               Column("switch-on", band=cases), Column("worst against rating", band=worst),
               Column("worst case", "left", text=True, band=worst))
    for i, r in enumerate(wc.designs[b].rails):
        if r.capacitor is None:
            continue
        rating = None if np.isnan(cs.rating_v[b, i]) else float(cs.rating_v[b, i])
        where = PEAK_SOURCES[cs.worst_case[b, i]]
        if cs.only_no_load[b, i]:
            where = f"[bold red]{where} (only there)[/]"
        t.add_row(f"{r.name}: {format_si(r.capacitor.capacitance_f, 'F')}",
                  _v(cs.peaks["nominal"][b, i]), _v(cs.peaks["high_mains_no_load"][b, i]),
                  _v(cs.peaks["switch_on"][b, i]),
                  _ratio_cell(float(cs.worst_v[b, i]), rating, "V"), where)
    return t


def switch_on_table(wc: WorstCases, b: int):
    d = wc.designs[b]
    sw = wc.switch_on
    delay = d.rectifier.warm_up_s or 0.0
    title = ("Switch-on at the mains crest, high mains, capacitors discharged, valves cold"
             + (f" (rectifier conducts after {delay:g} s)" if delay else ""))
    t = _table(title, "rail", "highest voltage", "at", "90 % of final DC at", "final DC")
    for i, r in enumerate(d.rails):
        t.add_row(r.name, _v(sw.peak_v[b, i]), _time(sw.peak_t_s[b, i]), _time(sw.t90_s[b, i]),
                  _v(sw.final_v[b, i]))
    rating = d.rectifier.max_surge_current_a
    t.add_row("rectifier surge", _ratio_cell(float(sw.surge_a[b]), rating, "A"),
              _time(sw.surge_t_s[b]), "", "")
    if wc.warm is not None and not np.isnan(wc.warm.surge_a[b]):
        w = wc.warm
        for i, r in enumerate(d.rails):
            t.add_row(f"{r.name} (stages warming up)", _v(w.peak_v[b, i]),
                      _time(w.peak_t_s[b, i]), _time(w.t90_s[b, i]), _v(w.final_v[b, i]))
        t.add_row("rectifier surge (stages warming up)",
                  _ratio_cell(float(w.surge_a[b]), rating, "A"), _time(w.surge_t_s[b]), "", "")
    return t


def filter_table(wc: WorstCases, b: int):
    d = wc.designs[b]
    z, lc = "output impedance", "LC sections"
    cols = [Column(f"|Z| {format_si(f, 'Hz')}", band=z) for f in SHOWN_HZ]
    t = _table("Output impedance (small signal) and LC sections", "rail", *cols,
               Column("peak |Z|", band=z), Column("LC f0", band=lc),
               Column("Q", "left", text=True, band=lc))
    f = wc.impedance_hz
    for i, r in enumerate(d.rails):
        z = wc.impedance_ohm[b, i]
        k = int(np.argmax(z))
        at = [format_si(float(np.interp(np.log(x), np.log(f), z)), "Ω") for x in SHOWN_HZ]
        q = wc.lc_q[b, i]
        f0 = qs = "—"
        if np.isfinite(wc.lc_f0_hz[b, i]):
            style = {"damped": "green", "under-damped": "yellow"}.get(damping(q), "bold red")
            f0 = format_si(float(wc.lc_f0_hz[b, i]), "Hz")
            mark = " (signal-dependent load)" if signal_dependent(d, i) else ""
            qs = f"[{style}]{q:.2f} {damping(q)}[/]{mark}"
        t.add_row(r.name, *at, f"{format_si(float(z[k]), 'Ω')} at {format_si(float(f[k]), 'Hz')}",
                  f0, qs)
    return t


def choke_input_lines(wc: WorstCases, b: int) -> list[str]:
    ci = {k: float(v[b]) for k, v in wc.choke_input.items()}
    if not math.isfinite(ci["inductance_h"]):
        return []
    return [
        f"Choke input: {format_si(ci['inductance_h'], 'H')} against a critical inductance of "
        f"{format_si(ci['critical_idle_h'], 'H')} at idle "
        f"({format_si(ci['idle_current_a'], 'A')}) and "
        + ("no finite value with the valves cold (nothing draws)"
           if not math.isfinite(ci["critical_cold_h"]) else
           f"{format_si(ci['critical_cold_h'], 'H')} with the valves cold") + ".",
        f"It stays in conduction down to {format_si(ci['min_current_a'], 'A')}: a bleeder of at "
        f"most {format_si(ci['max_bleeder_ohm'], 'Ω')} ({format_si(ci['bleeder_power_w'], 'W')} "
        "at high mains) keeps it there with the valves cold.",
    ]


def discharge_table(wc: WorstCases, b: int):
    t = _table(f"Discharge after switch-off, valves cold: time to fall below "
               f"{formulas.SAFE_VOLTAGE_V:.0f} V", "capacitor", "from", "time")
    for i, r in enumerate(wc.designs[b].rails):
        if r.capacitor is None:
            continue
        s = wc.discharge_s[b, i]
        cell = "[bold red]holds its charge (no discharge path)[/]" if np.isinf(s) else _time(s)
        if np.isfinite(s) and s > formulas.DISCHARGE_TARGET_S:
            cell = f"[yellow]{cell}[/]"
        t.add_row(r.name, _v(wc.discharge_v0[b, i]), cell)
    return t


def bleeder_line(wc: WorstCases, b: int) -> str | None:
    s = {k: float(v[b]) for k, v in wc.bleeder.items()}
    if not math.isfinite(s["ohm"]):
        return None
    return (f"A bleeder of {format_si(s['ohm'], 'Ω')} across {wc.designs[b].rails[0].name!r} "
            f"brings every capacitor below {formulas.SAFE_VOLTAGE_V:.0f} V in "
            f"{_time(s['worst_s'])} (IEC 60204-1 asks 5 s of machinery; amplifier practice is "
            f"often gentler). It dissipates {format_si(s['power_w'], 'W')} at high mains "
            f"with no load, {format_si(s['nominal_power_w'], 'W')} at nominal: rate it for "
            "twice that, and for the voltage.")


def render_worst_cases(console, wc: WorstCases, b: int) -> None:
    """Print the worst-case tables and findings of design ``b``."""
    for table in (cases_table, capacitor_table, switch_on_table, filter_table, discharge_table):
        print_sheet(console, table(wc, b))
    for line in [*choke_input_lines(wc, b), bleeder_line(wc, b)]:
        if line:
            console.print(line)
    for level, text in checks(wc, b):
        style = "bold red" if level == "warning" else "yellow"
        console.print(f"[{style}]{level}:[/] {text}")
