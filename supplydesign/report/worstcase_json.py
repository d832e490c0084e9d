"""JSON of the worst cases of one design: the contract's ``cases`` and ``switch_on``
objects (shared/FORMAT.md, "Worst cases and switch-on") and further keys beside them.

Figures are SI floats; a figure that does not exist (no capacitor, no rating, a
time never reached) is ``null``. Added keys, beside the contract's:

- per case: ``mains_factor``, ``converged``; per rail ``ripple_rms_v`` and, at
  low mains, ``in_tolerance``; ``rectifier.rms_a``.
- ``switch_on``: per rail ``peak_t_s`` and ``final_dc_v``; ``rectifier.surge_t_s``
  and ``max_surge_a`` (the rating); ``rectifier_delay_s``, ``settled``, ``run_s``;
  ``warm_up``: the same for the run in which the stages draw from their
  ``warm_up`` times (``null`` when the design gives none).
- ``capacitors``: per capacitor its rating, its highest voltage per case and
  overall, and whether the rating is exceeded only with no load at high mains.
- ``choke_sections``, ``output_impedance``, ``choke_input``, ``discharge``,
  ``checks`` and ``caution``.
"""

from __future__ import annotations

import math

import numpy as np

from ..cautions import CAUTION_TEXT
from ..circuit import formulas
from ..evaluation.cases import WORST_CASES, mains_factors
from ..evaluation.stress import PEAK_SOURCES, capacitor_stress, checks, damping
from ..evaluation.worstcase import WorstCases, signal_dependent

#: points per decade of the output impedance curve written to JSON
CURVE_PER_DECADE = 5


def _f(x) -> float | None:
    """A finite float, or None."""
    x = float(x)
    return x if math.isfinite(x) else None


def _case(wc: WorstCases, b: int, name: str) -> dict:
    d = wc.designs[b]
    case = next(c for c in WORST_CASES if c.name == name)
    a = wc.cases[name].arrays
    rails = []
    for i, r in enumerate(d.rails):
        item = {"name": r.name, "dc_v": _f(a.dc_v[b, i]), "peak_v": _f(a.peak_v[b, i]),
                "ripple_rms_v": _f(a.ripple_rms_v[b, i])}
        if case.mains == "low":
            item["in_tolerance"] = (None if r.voltage_v is None else
                                    bool(abs(a.dc_v[b, i] / r.voltage_v - 1.0) <= r.tolerance))
        rails.append(item)
    out = {"mains_factor": float(mains_factors([d], case.mains)[0]),
           "converged": bool(a.converged[b]), "rails": rails}
    if case.load != "none":
        out["rectifier"] = {"peak_a": _f(a.rect_peak_a[b]), "rms_a": _f(a.rect_rms_a[b])}
    return out


def _switch_on(wc: WorstCases, b: int, sw) -> dict:
    d = wc.designs[b]
    return {
        "rails": [{"name": r.name, "peak_v": _f(sw.peak_v[b, i]), "t90_s": _f(sw.t90_s[b, i]),
                   "peak_t_s": _f(sw.peak_t_s[b, i]), "final_dc_v": _f(sw.final_v[b, i])}
                  for i, r in enumerate(d.rails)],
        "rectifier": {"surge_a": _f(sw.surge_a[b]), "surge_t_s": _f(sw.surge_t_s[b]),
                      "max_surge_a": d.rectifier.max_surge_current_a},
        "rectifier_delay_s": d.rectifier.warm_up_s or 0.0,
        "settled": bool(sw.settled[b]),
        "run_s": _f(sw.end_s[b]),
    }


def _capacitors(wc: WorstCases, b: int) -> list[dict]:
    cs = capacitor_stress(wc)
    out = []
    for i, r in enumerate(wc.designs[b].rails):
        if r.capacitor is None:
            continue
        out.append({
            "rail": r.name, "rating_v": _f(cs.rating_v[b, i]),
            "peak_v": {name: _f(p[b, i]) for name, p in cs.peaks.items()},
            "worst_v": _f(cs.worst_v[b, i]), "worst_case": str(cs.worst_case[b, i]),
            "exceeded": bool(cs.exceeded[b, i]),
            "exceeded_only_at_high_mains_no_load": bool(cs.only_no_load[b, i]),
        })
    return out


def _choke_sections(wc: WorstCases, b: int) -> list[dict]:
    d = wc.designs[b]
    return [{"rail": r.name, "f0_hz": _f(wc.lc_f0_hz[b, i]), "q": _f(wc.lc_q[b, i]),
             "damping": damping(wc.lc_q[b, i]),
             "signal_dependent_current": signal_dependent(d, i)}
            for i, r in enumerate(d.rails) if np.isfinite(wc.lc_f0_hz[b, i])]


def _impedance(wc: WorstCases, b: int) -> dict:
    f = wc.impedance_hz
    decades = math.log10(f[-1] / f[0])
    pick = np.unique(np.round(np.linspace(0, len(f) - 1,
                                          int(decades * CURVE_PER_DECADE) + 1)).astype(int))
    rails = []
    for i, r in enumerate(wc.designs[b].rails):
        z = wc.impedance_ohm[b, i]
        k = int(np.argmax(z))
        rails.append({"name": r.name, "peak_ohm": _f(z[k]), "peak_hz": _f(f[k]),
                      "at_1hz_ohm": _f(z[0]), "freq_hz": [float(x) for x in f[pick]],
                      "ohm": [float(x) for x in z[pick]]})
    return {"model": "small-signal: rectifier as its DC output resistance behind an ideal "
                     "source; constant-current stages open; resistive stages and bleeders kept",
            "source_ohm": _f(wc.source_ohm[b]), "rails": rails}


def _choke_input(wc: WorstCases, b: int) -> dict | None:
    ci = wc.choke_input
    if not np.isfinite(ci["inductance_h"][b]):
        return None
    out = {k: _f(v[b]) for k, v in ci.items()}
    out["in_conduction_idle"] = bool(ci["inductance_h"][b] >= ci["critical_idle_h"][b])
    out["in_conduction_cold"] = bool(ci["inductance_h"][b] >= ci["critical_cold_h"][b])
    return out


def _discharge(wc: WorstCases, b: int) -> dict:
    caps = []
    for i, r in enumerate(wc.designs[b].rails):
        if r.capacitor is None:
            continue
        t = wc.discharge_s[b, i]
        caps.append({"rail": r.name, "from_v": _f(wc.discharge_v0[b, i]), "time_s": _f(t),
                     "holds_charge": bool(np.isinf(t))})
    sug = wc.bleeder
    suggestion = None
    if np.isfinite(sug["ohm"][b]):
        suggestion = {"rail": wc.designs[b].rails[0].name, "ohm": _f(sug["ohm"][b]),
                      "power_w": _f(sug["power_w"][b]),
                      "nominal_power_w": _f(sug["nominal_power_w"][b]),
                      "worst_time_s": _f(sug["worst_s"][b])}
    return {"below_v": formulas.SAFE_VOLTAGE_V, "reference_s": formulas.DISCHARGE_TARGET_S,
            "capacitors": caps, "worst_time_s": _f(np.nanmax(wc.discharge_s[b])),
            "suggested_bleeder": suggestion}


def worst_case_json(wc: WorstCases, b: int) -> dict:
    """The worst-case keys of design ``b``'s ``evaluate --json`` object."""
    return {
        "cases": {c.name: _case(wc, b, c.name) for c in WORST_CASES},
        "switch_on": {**_switch_on(wc, b, wc.switch_on),
                      "warm_up": None if wc.warm is None or np.isnan(wc.warm.surge_a[b])
                      else _switch_on(wc, b, wc.warm)},
        "capacitors": _capacitors(wc, b),
        "choke_sections": _choke_sections(wc, b),
        "output_impedance": _impedance(wc, b),
        "choke_input": _choke_input(wc, b),
        "discharge": _discharge(wc, b),
        "checks": [{"level": level, "text": text} for level, text in checks(wc, b)],
        "peak_sources": PEAK_SOURCES,
        "caution": CAUTION_TEXT,
    }
