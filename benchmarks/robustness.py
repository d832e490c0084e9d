"""Robustness count: random designs over the whole range, converged or told why.

    python3 benchmarks/robustness.py [--count 10000] [--seed 7]

Prints how many settled to a working steady state, how many settled with a rail at
0 V or below (designs that cannot carry their stage currents: the random values
include loads no transformer could give), how many did not settle and for which
reasons, how many failed silently (must be 0), and the time.
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

from supplydesign.circuit.steady import SHOOTING_TOLERANCE  # noqa: E402
from supplydesign.evaluation.analysis import evaluate  # noqa: E402

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
    silent = working = unworkable = 0
    for f in figs:
        settled = f.residual <= SHOOTING_TOLERANCE  # the shooting met its tolerance
        if f.converged:
            values = [r.dc_v for r in f.rails] + [r.ripple_rms_v for r in f.rails]
            values += [f.rectifier.peak_a]
            silent += not all(math.isfinite(v) for v in values)
            silent += any(r.dc_v <= 0.0 for r in f.rails)
            working += 1
            continue
        silent += not f.note
        if settled:
            unworkable += 1
            silent += not f.note.startswith("the supply cannot carry")
            continue
        head = f.note.split(";")[0].split(":")[0].split(" after ")[0]
        hints = [name for key, name in HINTS if key in f.note]
        reasons[head + (f" ({', '.join(hints)})" if hints else "")] += 1
    unsettled = args.count - working - unworkable
    print(f"{args.count} random designs in {elapsed:.1f} s ({1e3 * elapsed / args.count:.2f} ms "
          f"each)")
    print(f"  {working:6d}  settled to a working steady state")
    print(f"  {unworkable:6d}  settled with a rail at 0 V or below: the supply cannot carry the "
          f"stage currents (flagged)")
    print(f"  {unsettled:6d}  did not settle (flagged, with the reason):")
    for why, n in reasons.most_common():
        print(f"  {n:12d}  {why}")
    print(f"silent failures (no reason, non-finite figures, or a rail at 0 V or below without "
          f"a flag): {silent}")
    if args.list:
        for k, f in enumerate(figs):
            if not f.converged:
                print(f"  design {k}: {f.note}")


if __name__ == "__main__":
    main()
