"""JSON export of evaluations, with exactly the keys of the shared file contract."""

from __future__ import annotations

from ..evaluation.analysis import regulation_pct
from ..evaluation.figures import Figures


def evaluation_json(full: Figures, idle: Figures | None = None,
                    extra_cases: dict | None = None, heat: dict | None = None) -> dict:
    """The ``evaluate --json`` object of one design: SI floats, nominal case first.

    Keys of the contract (``rails[].name/dc_v/ripple_rms_v/ripple_pp_v``,
    ``rectifier.peak_a/rms_a``, ``transformer.rms_a``, ``rails[].regulation_pct``)
    plus the other figures under their own names. ``heat``
    (:func:`supplydesign.report.heatlife.heat_life_json`) adds ``rails[].capacitor``,
    ``rails[].resistor``, further ``transformer`` keys, ``fuses`` and ``chassis``.
    """
    reg = regulation_pct(full, idle) if idle is not None else [None] * len(full.rails)
    rails = []
    for r, g in zip(full.rails, reg, strict=True):
        rails.append({
            "name": r.name,
            "dc_v": r.dc_v,
            "ripple_rms_v": r.ripple_rms_v,
            "ripple_pp_v": r.ripple_pp_v,
            "regulation_pct": g,
            "peak_v": r.peak_v,
            "load_a": r.load_a,
            "link_dc_a": r.link_dc_a,
            "link_rms_a": r.link_rms_a,
            "link_power_w": r.link_power_w,
            "capacitor_ripple_rms_a": r.cap_ripple_rms_a,
            "capacitor_power_w": r.cap_power_w,
        })
    out = {
        "rails": rails,
        "rectifier": {"peak_a": full.rectifier.peak_a, "rms_a": full.rectifier.rms_a,
                      "avg_a": full.rectifier.avg_a, "power_w": full.rectifier.power_w},
        "transformer": {"rms_a": full.transformer.rms_a,
                        "copper_loss_w": full.transformer.power_w},
        "solver": {"converged": full.converged, "iterations": full.iterations,
                   "residual": full.residual, "note": full.note},
    }
    if heat:
        for rail, cap, res in zip(rails, heat["capacitors"], heat["resistors"], strict=True):
            rail["capacitor"] = cap
            if res is not None:
                rail["resistor"] = res
        out["transformer"].update(heat["transformer"])
        out["fuses"] = heat["fuses"]
        out["chassis"] = heat["chassis"]
    if extra_cases:
        out.update(extra_cases)
    return out
