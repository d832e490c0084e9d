"""Benchmark: a spread of many builds solved as one batch, against the same builds solved
one at a time, measured side by side in one run.

Prints the wall and CPU time of ``run_spread`` for ``--builds`` builds of a design
(default: 2000 builds of the four-rail example examples/pushpull-choke.toml), the
time per build of the same figures for a sample of ``--sample`` builds solved one
build at a time through the same public calls (``evaluate`` at full signal and at
idle current, and the switch-on surge run on a batch of one), the estimate for all
builds from that sample, and their ratio; with the machine's load average.

    python3 benchmarks/spread.py [--builds 2000] [--sample 20] [--design FILE]
"""

from __future__ import annotations

import argparse
import os
import resource
import sys
import time

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.dirname(HERE))

from supplydesign.evaluation import spread as spread_mod  # noqa: E402
from supplydesign.evaluation.analysis import IDLE, evaluate  # noqa: E402
from supplydesign.evaluation.spread import run_spread, summarise  # noqa: E402
from supplydesign.evaluation.tolerances import (  # noqa: E402
    build_designs,
    factors,
    multipliers,
    unit_sample,
)
from supplydesign.io import load_design  # noqa: E402
from supplydesign.parts import load_catalog  # noqa: E402

DEFAULT_DESIGN = os.path.join(os.path.dirname(HERE), "examples", "pushpull-choke.toml")


def one_at_a_time(design, catalog, sample: int, seed: int) -> float:
    """Wall time [s] of the spread's figures for ``sample`` builds, one build at a time."""
    fs = factors(design, catalog)
    m = multipliers(fs, unit_sample(len(fs), sample, seed))
    own = build_designs(design, fs, m)
    high = build_designs(design, fs, m, mains_factor=1.0 + design.mains.high)
    idle = any(r.idle_a != r.current_a for r in design.rails)
    t0 = time.perf_counter()
    for d, h in zip(own, high, strict=True):
        evaluate([d])
        if idle:
            evaluate([d], IDLE)
        spread_mod._surge([h])
    return time.perf_counter() - t0


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--builds", type=int, default=2000)
    ap.add_argument("--sample", type=int, default=20, help="builds solved one at a time")
    ap.add_argument("--design", default=DEFAULT_DESIGN)
    ap.add_argument("--seed", type=int, default=1)
    args = ap.parse_args()

    design = load_design(args.design)
    catalog = load_catalog()
    run_spread(design, catalog, builds=4, seed=args.seed)  # imports and caches warm
    load0 = os.getloadavg()
    w0, c0 = time.perf_counter(), time.process_time()
    sp = run_spread(design, catalog, builds=args.builds, seed=args.seed)
    wall, cpu = time.perf_counter() - w0, time.process_time() - c0
    s = summarise(sp)
    single = one_at_a_time(design, catalog, args.sample, args.seed)
    load1 = os.getloadavg()
    per = single / args.sample
    name = os.path.basename(args.design)
    print(f"spread of {args.builds} builds of {name} ({len(design.rails)} rails): "
          f"{wall:.1f} s wall, {cpu:.1f} s CPU, {1e3 * wall / args.builds:.2f} ms per build; "
          f"{s.converged}/{s.builds} settled; yield {100 * s.yield_:.1f} %; "
          f"peak memory {resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024:.0f} MiB")
    print(f"one build at a time (sample of {args.sample}, the same calls): {1e3 * per:.1f} ms "
          f"per build; estimated {per * args.builds:.1f} s for {args.builds} builds")
    print(f"ratio: {per * args.builds / wall:.1f}x faster as one batch")
    print(f"load average (1, 5, 15 min) before {load0[0]:.2f} {load0[1]:.2f} {load0[2]:.2f}, "
          f"after {load1[0]:.2f} {load1[1]:.2f} {load1[2]:.2f}; {os.cpu_count()} CPUs")


if __name__ == "__main__":
    main()
