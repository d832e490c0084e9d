"""Benchmark: does the search find? Two tables, measured in one run.

1. The suite (tests/data/suite): for every brief, the default run as a user starts
   it (``supplydesign synth BRIEF --out DIR --seed 1``, a separate process, wall time
   as the user waits), its verified designs, whether any two are identical part for
   part, and the hypervolume of its front over that of a run with ten times the
   evaluations (same seed and population, a fixed budget of distinct candidates).
2. An enumerable brief (benchmarks/data/enumerable.toml, five open variables):
   every candidate is evaluated with the search's own evaluator; the feasible
   non-dominated set is the true front. The default run's reported designs, looked
   up in the enumeration (same accuracy), against it.

Hypervolumes: the verified objectives (all four, minimised) of both fronts scaled
between the ideal and nadir of their union (of the true front in table 2),
reference point 1.1 in every objective.

    python3 benchmarks/synth_front.py                    # both tables
    python3 benchmarks/synth_front.py --only suite --briefs pp30-valve,se-valve
    python3 benchmarks/synth_front.py --only enumerable

Acceptance (issue 12): every brief at least 3 distinct verified designs within 60 s
(goal 20 s); hypervolume ratio >= 0.97 (goal 0.99) against ten times the evaluations,
>= 0.98 against the true front. Write ``uptime``'s load beside the figures.
"""

from __future__ import annotations

import argparse
import itertools
import json
import os
import subprocess
import sys
import tempfile
import time

import numpy as np

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(HERE)
SUITE = os.path.join(ROOT, "tests", "data", "suite")
ENUMERABLE = os.path.join(HERE, "data", "enumerable.toml")


def hypervolume_ratio(F: np.ndarray, ref_F: np.ndarray, bounds: np.ndarray | None = None
                      ) -> float:
    """HV(F) / HV(ref_F), both scaled between the ideal and nadir of ``bounds`` (default:
    the union of both), reference point 1.1."""
    from moocore import hypervolume

    both = np.concatenate([F, ref_F]) if bounds is None else bounds
    ideal, nadir = both.min(axis=0), both.max(axis=0)
    span = np.where(nadir > ideal, nadir - ideal, 1.0)
    ref = np.full(F.shape[1], 1.1)

    def hv(A):
        return float(hypervolume(np.minimum((A - ideal) / span, 1.1), ref=ref))

    return hv(F) / hv(ref_F)


def _strip(text: str) -> str:
    return "\n".join(line for line in text.splitlines() if not line.lstrip().startswith("#"))


def default_run(brief: str, out: str) -> dict:
    """The default run through the command line, as a user starts it."""
    env = dict(os.environ, PYTHONPATH=ROOT + os.pathsep + os.environ.get("PYTHONPATH", ""),
               COLUMNS="80")
    t0 = time.perf_counter()
    proc = subprocess.run([sys.executable, "-m", "supplydesign", "synth", brief, "--out", out,
                           "--seed", "1"], env=env, capture_output=True,
                          text=True)
    wall = time.perf_counter() - t0
    doc = json.loads(open(os.path.join(out, "pareto.json")).read())
    texts = [_strip(open(os.path.join(out, d["file"])).read()) for d in doc["designs"]]
    stopped = next((line for line in proc.stdout.splitlines() if line.startswith("Search ")),
                   "")
    return {"wall_s": wall, "exit": proc.returncode, "designs": len(doc["designs"]),
            "distinct": len(set(texts)), "feasible": all(d["feasible"] for d in doc["designs"]),
            "evaluations": doc["evaluations"], "stopped": stopped,
            "F": np.array([[d["objectives"][o] for o in ("hum_db", "regulation_pct", "peak",
                                                         "cost")] for d in doc["designs"]])}


def suite_table(names: list[str] | None, factor: int) -> None:
    from supplydesign.io.designfile import load_design
    from supplydesign.parts import load_catalog
    from supplydesign.synth.run import SynthOptions, synthesize

    catalog = load_catalog()
    briefs = sorted(f for f in os.listdir(SUITE) if f.endswith(".toml")
                    and not f.endswith(".hand.toml"))
    if names:
        briefs = [f for f in briefs if f[:-5] in names]
    print(f"Suite (load {os.getloadavg()[0]:.2f} at start): default run through the command "
          f"line, then {factor}x its evaluations (fixed budget, same seed)")
    head = (f"{'brief':24s} {'wall s':>7s} {'evals':>6s} {'designs':>7s} {'distinct':>8s} "
            f"{'10x s':>7s} {'10x evals':>9s} {'HV ratio':>8s}")
    print(head)
    print("-" * len(head))
    for f in briefs:
        path = os.path.join(SUITE, f)
        with tempfile.TemporaryDirectory() as tmp:
            d = default_run(path, os.path.join(tmp, "run"))
        brief = load_design(path, brief=True, catalog=catalog)
        t0 = time.perf_counter()
        big = synthesize(brief, catalog, SynthOptions(seed=1,
                                                      evaluations=factor * d["evaluations"]))
        t_big = time.perf_counter() - t0
        F_big = np.array([[c.objectives[o] for o in ("hum_db", "regulation_pct", "peak",
                                                     "cost")] for c in big.designs])
        ratio = (hypervolume_ratio(d["F"], F_big) if len(d["F"]) and len(F_big)
                 else float("nan"))
        flag = "" if d["feasible"] and d["exit"] == 0 else "  (!)"
        print(f"{f[:-5]:24s} {d['wall_s']:7.1f} {d['evaluations']:6d} {d['designs']:7d} "
              f"{d['distinct']:8d} {t_big:7.1f} {big.evaluations:9d} {ratio:8.4f}{flag}")
        if d["stopped"]:
            print(f"{'':24s} {d['stopped']}")
    print(f"load at the end: {os.getloadavg()[0]:.2f}")


def enumerable_table(brief_path: str, chunk: int = 2000) -> None:
    from supplydesign.io.designfile import load_design
    from supplydesign.parts import load_catalog
    from supplydesign.synth.budget import nondominated
    from supplydesign.synth.problem import evaluate_population
    from supplydesign.synth.run import SynthOptions, synthesize
    from supplydesign.synth.space import build_space, canonical

    catalog = load_catalog()
    brief = load_design(brief_path, brief=True, catalog=catalog)
    space = build_space(brief, catalog)
    sizes = [v.choices for v in space.variables]
    X = np.array(list(itertools.product(*[range(s) for s in sizes])), dtype=int)
    X = np.unique(canonical(space, X), axis=0)
    print(f"\nEnumerable brief {os.path.basename(brief_path)} (load {os.getloadavg()[0]:.2f}): "
          f"{len(sizes)} open variables, {len(X)} distinct candidates")
    t0 = time.perf_counter()
    Fs, Gs = [], []
    for start in range(0, len(X), chunk):
        res = evaluate_population(space, X[start:start + chunk])
        Fs.append(res.scores.F)
        Gs.append(res.scores.G)
    F, G = np.concatenate(Fs), np.concatenate(Gs)
    t_enum = time.perf_counter() - t0
    ok = np.all(G <= 0, axis=1)
    true_front = F[ok][nondominated(F[ok])]
    t0 = time.perf_counter()
    result = synthesize(brief, catalog, SynthOptions(seed=1))
    t_synth = time.perf_counter() - t0
    index = {tuple(x): k for k, x in enumerate(X)}
    rows = [index[tuple(x)] for x in result.extra.get("X", [])]
    found = F[rows]
    ratio = hypervolume_ratio(found[nondominated(found)], true_front, bounds=true_front)
    print(f"{'':24s} {'time s':>7s} {'evals':>7s} {'front':>6s} {'HV ratio':>8s}")
    print(f"{'enumeration':24s} {t_enum:7.1f} {len(X):7d} {len(true_front):6d} {1.0:8.4f}")
    print(f"{'default run':24s} {t_synth:7.1f} {result.evaluations:7d} {len(rows):6d} "
          f"{ratio:8.4f}")
    print(f"load at the end: {os.getloadavg()[0]:.2f}")


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--only", choices=("suite", "enumerable"))
    ap.add_argument("--briefs", help="comma-separated suite brief names (default: all)")
    ap.add_argument("--factor", type=int, default=10, help="evaluations of the long run")
    ap.add_argument("--enumerable", default=ENUMERABLE, help="brief to enumerate")
    args = ap.parse_args()
    if args.only != "enumerable":
        suite_table(args.briefs.split(",") if args.briefs else None, args.factor)
    if args.only != "suite":
        enumerable_table(args.enumerable)


if __name__ == "__main__":
    main()
