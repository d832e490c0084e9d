"""Robustness count: random designs over the whole range, converged or told why.

    python3 benchmarks/robustness.py [--count 10000] [--seed 7]

Prints how many converged, how many did not and for which reasons, and the time.
"""

from __future__ import annotations

import argparse
import collections
import math
import os
import sys
import time

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))

from designs import random_designs  # noqa: E402

from supplydesign.analysis import evaluate  # noqa: E402

#: the circumstances analysis.settling_hint names, as counted here
HINTS = (("critical inductance", "choke input below critical"),
         ("that rings", "ringing LC section"),
         ("rings with the capacitor", "choke ringing with the capacitor before it"))


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--count", type=int, default=10000)
    ap.add_argument("--seed", type=int, default=7)
    ap.add_argument("--list", action="store_true",
                    help="also print the index and note of every design that did not converge")
    args = ap.parse_args()
    designs = random_designs(args.count, args.seed)
    t0 = time.perf_counter()
    figs = evaluate(designs)
    elapsed = time.perf_counter() - t0
    reasons = collections.Counter()
    silent = 0
    for f in figs:
        if not f.converged:
            head = f.note.split(";")[0].split(":")[0].split(" after ")[0]
            hints = [name for key, name in HINTS if key in f.note]
            reasons[head + (f" ({', '.join(hints)})" if hints else "")] += 1
            silent += not f.note
        else:
            values = [r.dc_v for r in f.rails] + [r.ripple_rms_v for r in f.rails]
            values += [f.rectifier.peak_a]
            silent += not all(math.isfinite(v) for v in values)
    ok = sum(f.converged for f in figs)
    print(f"{args.count} random designs in {elapsed:.1f} s ({1e3 * elapsed / args.count:.2f} ms "
          f"each): {ok} converged, {args.count - ok} not converged")
    for why, n in reasons.most_common():
        print(f"  {n:6d}  {why}")
    print(f"silent failures (no reason, or non-finite figures when converged): {silent}")
    if args.list:
        for k, f in enumerate(figs):
            if not f.converged:
                print(f"  design {k}: {f.note}")


if __name__ == "__main__":
    main()
