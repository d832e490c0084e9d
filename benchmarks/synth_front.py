"""Benchmark: how much of the true Pareto front synth's default budget finds.

On a brief small enough to enumerate its whole discrete space, every candidate
is evaluated with the same batched evaluator synth uses; the feasible
non-dominated set of that enumeration is the true front. The script prints the
hypervolume of synth's front over the true one (objectives scaled between the
true front's ideal and nadir points, reference point 1.1 in every objective)
and the time of both.

    python3 benchmarks/synth_front.py [--seed 1] [--brief PATH]
"""

from __future__ import annotations

import argparse
import itertools
import os
import time

import numpy as np

from supplydesign.io.designfile import load_design
from supplydesign.parts import load_catalog
from supplydesign.synth.problem import evaluate_population
from supplydesign.synth.run import SynthOptions, synthesize
from supplydesign.synth.space import build_space

HERE = os.path.dirname(os.path.abspath(__file__))
DEFAULT_BRIEF = os.path.join(HERE, "..", "tests", "data", "briefs", "small-crc.toml")


def nondominated(F: np.ndarray) -> np.ndarray:
    from pymoo.util.nds.non_dominated_sorting import NonDominatedSorting

    return NonDominatedSorting().do(F, only_non_dominated_front=True)


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--brief", default=DEFAULT_BRIEF)
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--chunk", type=int, default=1500)
    args = ap.parse_args()
    catalog = load_catalog()
    brief = load_design(args.brief, brief=True, catalog=catalog)
    space = build_space(brief, catalog)
    sizes = [v.choices for v in space.variables]
    total = int(np.prod(sizes))
    print(f"brief {os.path.basename(args.brief)}: {len(sizes)} variables, {total} candidates")

    t0 = time.perf_counter()
    X = np.array(list(itertools.product(*[range(s) for s in sizes])), dtype=int)
    Fs, Gs = [], []
    for start in range(0, total, args.chunk):
        res = evaluate_population(space, X[start:start + args.chunk])
        Fs.append(res.scores.F)
        Gs.append(res.scores.G)
    F, G = np.concatenate(Fs), np.concatenate(Gs)
    t_enum = time.perf_counter() - t0
    ok = np.all(G <= 0, axis=1)
    true_front = F[ok][nondominated(F[ok])]
    print(f"enumeration: {t_enum:.1f} s, {ok.sum()} feasible, true front {len(true_front)} points")

    t0 = time.perf_counter()
    result = synthesize(brief, catalog, SynthOptions(seed=args.seed))
    t_synth = time.perf_counter() - t0
    # synth's front at search accuracy: look its reported designs up in the enumeration
    # through their variables (the archive holds them)
    from pymoo.indicators.hv import HV

    found = np.array([[c.objectives[o] for o in result.objectives] for c in result.designs])
    # compare like with like: the enumeration's search-accuracy objectives of the same rows
    idx = {tuple(x): k for k, x in enumerate(X)}
    rows = [idx[tuple(x)] for x in result.extra.get("X", [])]
    synth_F = F[rows] if rows else found
    ideal, nadir = true_front.min(axis=0), true_front.max(axis=0)
    span = np.where(nadir > ideal, nadir - ideal, 1.0)
    hv = HV(ref_point=np.full(F.shape[1], 1.1))
    hv_true = hv((true_front - ideal) / span)
    hv_synth = hv((synth_F[nondominated(synth_F)] - ideal) / span)
    print(f"synth (default budget, seed {args.seed}): {t_synth:.1f} s, "
          f"{result.evaluations} evaluations, {len(result.designs)} designs reported")
    print(f"hypervolume ratio synth / true front: {hv_synth / hv_true:.4f}")


if __name__ == "__main__":
    main()
