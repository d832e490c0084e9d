"""Part stresses over all worst cases, rating checks and the warnings of a design.

Reads a :class:`~supplydesign.evaluation.worstcase.WorstCases` and compares every stress
with its rating: capacitor voltage over all steady cases and the switch-on run,
rectifier surge and peak current, rails out of tolerance at low mains, LC
sections that ring, choke inputs below their critical inductance, and slow
discharge. :func:`constraints` gives the same comparisons as arrays (<= 0 is
within the rating) for the synthesis.

Caution: a check that passes does not make a design safe; the figures come from
a model, and building HT supplies follows local codes and licensed practice.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..circuit import formulas
from .worstcase import WorstCases, signal_dependent

#: cases whose capacitor peaks are compared with the rating, with words for reports
PEAK_SOURCES = {
    "nominal": "nominal mains, full load",
    "idle": "nominal mains, idle",
    "high_mains_idle": "high mains, idle",
    "low_mains_full_load": "low mains, full load",
    "high_mains_no_load": "high mains, no load",
    "switch_on": "switch-on at high mains, valves cold",
    "switch_on_warm": "switch-on at high mains, stages warming up",
}
#: the cases with no stage drawing at high mains
NO_LOAD_SOURCES = ("high_mains_no_load", "switch_on")


@dataclass
class CapacitorStress:
    """Capacitor voltages against ratings, arrays (B, R)."""

    rating_v: np.ndarray  # NaN where the design states none
    peaks: dict[str, np.ndarray]  # PEAK_SOURCES name -> highest capacitor voltage
    worst_v: np.ndarray
    worst_case: np.ndarray  # (B, R) of str: the PEAK_SOURCES name of worst_v
    exceeded: np.ndarray  # bool
    only_no_load: np.ndarray  # bool: exceeded, but within the rating in every loaded case


def capacitor_stress(wc: WorstCases) -> CapacitorStress:
    """Every capacitor's highest voltage over the cases and the switch-on runs (worked out
    for the whole batch once, kept with ``wc``)."""
    if "capacitor_stress" not in wc.derived:
        wc.derived["capacitor_stress"] = _capacitor_stress(wc)
    return wc.derived["capacitor_stress"]


def _capacitor_stress(wc: WorstCases) -> CapacitorStress:
    shape = wc.lc_q.shape
    rating = np.full(shape, np.nan)
    for b, d in enumerate(wc.designs):
        for i, r in enumerate(d.rails):
            if r.capacitor is not None and r.capacitor.voltage_rating_v is not None:
                rating[b, i] = r.capacitor.voltage_rating_v
    has_cap = np.zeros(shape, dtype=bool)
    for b, d in enumerate(wc.designs):
        for i, r in enumerate(d.rails):
            has_cap[b, i] = r.capacitor is not None
    peaks = {name: wc.cases[name].arrays.peak_v for name in PEAK_SOURCES if name in wc.cases}
    peaks["switch_on"] = wc.switch_on.peak_v
    if wc.warm is not None:
        peaks["switch_on_warm"] = wc.warm.peak_v
    names = list(peaks)
    stack = np.stack([np.where(np.isnan(p), -np.inf, p) for p in peaks.values()])
    worst = np.max(stack, axis=0)
    worst_case = np.array(names, dtype=object)[np.argmax(stack, axis=0)]
    worst = np.where(has_cap, worst, np.nan)
    loaded = np.max(np.stack([stack[k] for k, n in enumerate(names)
                              if n not in NO_LOAD_SOURCES]), axis=0)
    exceeded = has_cap & (worst > rating)
    only = exceeded & ~(loaded > rating)
    return CapacitorStress(rating, peaks, worst, worst_case, exceeded, only)


def _ratio(used: np.ndarray, rating: np.ndarray) -> np.ndarray:
    """used / rating - 1, NaN where no rating is given."""
    with np.errstate(invalid="ignore", divide="ignore"):
        return used / rating - 1.0


def constraints(wc: WorstCases) -> dict[str, np.ndarray]:
    """Worst-case rating constraints, (B,) each: <= 0 within the rating, NaN: no rating.

    - ``capacitor_voltage``: the largest worst-case capacitor voltage over its rating, - 1;
    - ``surge``: the switch-on surge (cold, and with warm-up when given) over the
      rectifier's ``max_surge_current``, - 1;
    - ``peak_current``: the largest steady peak current per anode or diode over all
      cases over ``max_peak_current``, - 1.
    """
    cs = capacitor_stress(wc)
    with np.errstate(invalid="ignore"):
        cap = np.nanmax(np.where(np.isnan(cs.rating_v), -np.inf, _ratio(cs.worst_v, cs.rating_v)),
                        axis=1)
    cap = np.where(np.isinf(cap), np.nan, cap)
    rect = [d.rectifier for d in wc.designs]
    surge_rating = np.array([r.max_surge_current_a or np.nan for r in rect])
    peak_rating = np.array([r.max_peak_current_a or np.nan for r in rect])
    surge = wc.switch_on.surge_a
    if wc.warm is not None:
        surge = np.fmax(surge, wc.warm.surge_a)
    peak = np.max(np.stack([c.arrays.rect_peak_a for c in wc.cases.values()]), axis=0)
    return {"capacitor_voltage": cap, "surge": _ratio(surge, surge_rating),
            "peak_current": _ratio(peak, peak_rating)}


def damping(q: float) -> str:
    """Words for the damping of an LC section of quality factor q."""
    if not np.isfinite(q) or q > formulas.Q_WARNING:
        return "resonant"
    return "under-damped" if q > formulas.Q_PRACTICE else "damped"


def checks(wc: WorstCases, b: int) -> list[tuple[str, str]]:
    """(level, text) of design b's findings; level "warning" or "note"."""
    d = wc.designs[b]
    out: list[tuple[str, str]] = []
    cs = capacitor_stress(wc)
    for i, r in enumerate(d.rails):
        if cs.exceeded[b, i]:
            where = PEAK_SOURCES[cs.worst_case[b, i]]
            extra = " (only with no load at high mains)" if cs.only_no_load[b, i] else ""
            out.append(("warning", f"rail {r.name!r}: capacitor reaches {cs.worst_v[b, i]:.0f} V "
                                   f"({where}), above its {cs.rating_v[b, i]:.0f} V rating{extra}"))
    cons = constraints(wc)
    if cons["surge"][b] > 0:
        out.append(("warning", f"switch-on surge {wc.switch_on.surge_a[b]:.2f} A exceeds the "
                               f"rectifier's surge rating {d.rectifier.max_surge_current_a:.2f} A"))
    if cons["peak_current"][b] > 0:
        out.append(("warning", "rectifier peak current exceeds its rating in a worst case"))
    low = wc.cases["low_mains_full_load"].arrays.dc_v
    for i, r in enumerate(d.rails):
        if r.voltage_v is not None and abs(low[b, i] / r.voltage_v - 1.0) > r.tolerance:
            out.append(("warning", f"rail {r.name!r}: {low[b, i]:.0f} V at low mains and full "
                                   f"load, outside {r.voltage_v:.0f} V ±{100 * r.tolerance:.0f} %"))
    for i, r in enumerate(d.rails):
        q = wc.lc_q[b, i]
        if np.isnan(q) or damping(q) == "damped":
            continue
        level = "warning" if damping(q) == "resonant" else "note"
        swing = (" and a stage's current swings with the signal there"
                 if signal_dependent(d, i) else "")
        out.append((level, f"rail {r.name!r}: LC section resonates at {wc.lc_f0_hz[b, i]:.1f} Hz "
                           f"with Q = {q:.2f} (practice aims near 0.5){swing}"))
    ci = wc.choke_input
    if np.isfinite(ci["inductance_h"][b]):
        if ci["inductance_h"][b] < ci["critical_idle_h"][b]:
            out.append(("warning", f"choke input below its critical inductance at idle "
                                   f"({ci['critical_idle_h'][b]:.1f} H needed)"))
        if ci["inductance_h"][b] < ci["critical_cold_h"][b]:
            out.append(("note", "choke input leaves continuous conduction with the valves cold: "
                                f"a bleeder drawing {1e3 * ci['min_current_a'][b]:.0f} mA or more "
                                "keeps it in conduction"))
    slow = np.nanmax(wc.discharge_s[b])
    if not np.isfinite(slow):
        out.append(("warning", "a capacitor has no discharge path: it holds its charge after "
                               "switch-off"))
    elif slow > formulas.DISCHARGE_TARGET_S:
        out.append(("warning", f"a capacitor takes {slow:.0f} s to fall below "
                               f"{formulas.SAFE_VOLTAGE_V:.0f} V after switch-off"))
    if not wc.cases["high_mains_no_load"].arrays.converged[b]:
        out.append(("note", "the no-load steady state did not converge: its figures are bounded "
                            "by the crest of the open-circuit voltage and the switch-on run"))
    return out
