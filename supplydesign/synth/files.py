"""Writing a synthesis run: DIR/pareto.json, DIR/pareto.csv and DIR/designs/NN.toml.

Every file is written atomically; an existing file is replaced only with
``force``. Each design file is a complete design that ``evaluate`` reproduces,
with the brief's targets kept and comments saying why each part was chosen.
"""

from __future__ import annotations

import csv
import io
import json
import math
import os

from ..cautions import CAUTION_LINES
from ..errors import UserError
from ..io.tomlwrite import dump_design
from ..units import format_si
from ..writefiles import write_text_atomic
from .run import Candidate, SynthResult
from .score import CAP_VOLTAGE_MARGIN, COLUMNS, RESISTOR_POWER_FACTOR


def _finite(columns: dict[str, float]) -> dict[str, float]:
    """The reported columns that have a value (JSON has no NaN)."""
    return {k: v for k, v in columns.items() if math.isfinite(v)}


def _comments(c: Candidate) -> dict[str, str]:
    d = c.design
    crest_v = math.sqrt(2.0) * d.transformer.open_circuit_v * (1.0 + d.mains.high)
    out = {}
    for i, rail in enumerate(c.design.rails):
        lines = []
        if rail.capacitor is not None and rail.capacitor.voltage_rating_v is not None:
            lines.append(f"capacitor rated {format_si(rail.capacitor.voltage_rating_v, 'V')}: "
                         f"no-load crest at high mains {format_si(crest_v, 'V')} "
                         f"+{100 * CAP_VOLTAGE_MARGIN:.0f} % margin")
        if rail.link.kind == "resistor" and rail.link.power_w is not None:
            heat = format_si(c.full["link_power_w"][i], "W")
            lines.append(f"resistor rated {format_si(rail.link.power_w, 'W')}: at least "
                         f"{RESISTOR_POWER_FACTOR:g} x its {heat} dissipation (common practice)")
        lines.append(f"figures: {format_si(c.full['dc_v'][i], 'V', 4)} DC, "
                     f"{format_si(c.full['ripple_rms_v'][i], 'V')} rms hum, "
                     f"{c.regulation[i]:+.1f} % from full signal to idle")
        out[rail.name] = "\n".join(lines)
    return out


def write_run(result: SynthResult, out_dir: str, *, force: bool = False,
              seed: int | None = None) -> list[str]:
    """Write the run's files into ``out_dir``; returns the paths written."""
    width = max(2, len(str(len(result.designs))))
    targets = [os.path.join(out_dir, f"designs/{k:0{width}d}.toml")
               for k in range(1, len(result.designs) + 1)]
    targets += [os.path.join(out_dir, "pareto.json"), os.path.join(out_dir, "pareto.csv")]
    if not force:  # refuse before writing anything, so a folder never mixes two runs
        for path in targets:
            if os.path.exists(path):
                raise UserError("exists already; give --force to overwrite it (or another "
                                "--out folder)", file=path)
    os.makedirs(os.path.join(out_dir, "designs"), exist_ok=True)
    written = []
    entries = []
    for k, c in enumerate(result.designs, start=1):
        rel = f"designs/{k:0{width}d}.toml"
        header = "\n".join([f"Design {k} of a supplydesign synthesis of: {result.brief.title}",
                            f"Filter {c.notation}; parts cost {c.cost:.2f} {result.currency or ''}",
                            *CAUTION_LINES])
        text = dump_design(c.design, comments=_comments(c), header=header, base_dir=out_dir)
        path = os.path.join(out_dir, rel)
        write_text_atomic(path, text, force=force)
        written.append(path)
        entries.append({
            "file": rel, "cost": c.cost, "feasible": c.feasible, "objectives": c.objectives,
            **_finite(c.columns), "notation": c.notation,
            "picks": [name for name, (i, _) in result.picks.items() if i == k - 1],
            "rails": [{"name": r.name, "dc_v": c.full["dc_v"][i],
                       "ripple_rms_v": c.full["ripple_rms_v"][i],
                       "regulation_pct": c.regulation[i]}
                      for i, r in enumerate(c.design.rails)],
            "rectifier": {"peak_a": c.full["peak_a"]},
        })
    doc = {"designs": entries, "brief": result.brief.title,
           "brief_file": result.brief.file_name, "currency": result.currency,
           "seed": seed, "evaluations": result.evaluations,
           "picks": {n: {"design": i + 1, "why": why} for n, (i, why) in result.picks.items()},
           "explanation": result.explanation, "caution": " ".join(CAUTION_LINES)}
    if result.heat_exclusion:
        ex = result.heat_exclusion
        doc["heat_and_life_exclusion"] = {"cost": ex["cost"], "notation": ex["notation"],
                                          "text": ex["text"]}
    if result.comparison:
        idx = {id(c): k for k, c in enumerate(result.designs, start=1)}
        doc["choke_vs_resistor"] = {
            side: {"design": idx.get(id(c)), "cost": c.cost, "hum_db": c.objectives["hum_db"],
                   "regulation_pct": c.objectives["regulation_pct"], **_finite(c.columns),
                   "resistor_heat_w": c.resistor_heat_w, "choke_mass_kg": c.choke_mass_kg,
                   "notation": c.notation}
            for side, c in (("resistor", result.comparison["resistor"]),
                            ("choke", result.comparison["choke"]))}
    path = os.path.join(out_dir, "pareto.json")
    write_text_atomic(path, json.dumps(doc, indent=2) + "\n", force=force)
    written.append(path)
    buf = io.StringIO()
    w = csv.writer(buf)
    rails = [r.name for r in result.brief.rails]
    # reported columns that only some runs give (the yield of synth --yield), after the rest
    more = [k for k in dict.fromkeys(k for c in result.designs for k in c.columns)
            if k not in COLUMNS]
    w.writerow(["file", "notation", "cost", *result.objectives, *COLUMNS, *more, "transformer",
                "rectifier",
                *[f"{r} dc [V]" for r in rails], *[f"{r} hum [V]" for r in rails]])
    for e, c in zip(entries, result.designs, strict=True):
        w.writerow([e["file"], c.notation, f"{c.cost:.2f}",
                    *[f"{c.objectives[o]:.6g}" for o in result.objectives],
                    *[f"{c.columns.get(k, math.nan):.6g}" for k in COLUMNS],
                    *[f"{c.columns.get(k, math.nan):.6g}" for k in more],
                    c.design.transformer.part or "", c.design.rectifier.part or "",
                    *[f"{v:.6g}" for v in c.full["dc_v"]],
                    *[f"{v:.6g}" for v in c.full["ripple_rms_v"]]])
    path = os.path.join(out_dir, "pareto.csv")
    write_text_atomic(path, buf.getvalue(), force=force)
    written.append(path)
    return written
