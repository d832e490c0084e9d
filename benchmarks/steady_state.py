"""Benchmark: batched steady state against ngspice on the same circuits, in one run.

Prints the cost per design of ``analysis.evaluate`` on a batch of four-rail
designs, the cost per design of ngspice on a sample of the same circuits (run
from rest long enough to settle, the way a SPICE user finds a steady state), the
ratio, the agreement of the figures, and the peak memory of the batch.

    python3 benchmarks/steady_state.py [--batch 200] [--spice 3] [--kind silicon|valve]
"""

from __future__ import annotations

import argparse
import os
import sys
import time
import tracemalloc

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))

from designs import four_rail_batch  # noqa: E402
from spice_reference import settled_change, settled_run  # noqa: E402

from supplydesign.evaluation.analysis import evaluate  # noqa: E402


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--batch", type=int, default=200)
    ap.add_argument("--spice", type=int, default=3, help="designs of the batch run in ngspice")
    ap.add_argument("--kind", default="silicon", choices=["silicon", "valve"])
    ap.add_argument("--repeat", type=int, default=2)
    args = ap.parse_args()

    designs = four_rail_batch(args.batch, kind=args.kind)
    evaluate(designs[:2])  # warm up imports and caches
    walls, cpus = [], []
    for _ in range(args.repeat):
        w0, c0 = time.perf_counter(), time.process_time()
        figs = evaluate(designs)
        walls.append(time.perf_counter() - w0)
        cpus.append(time.process_time() - c0)
    tracemalloc.start()
    evaluate(designs)
    _, peak_bytes = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    ours = min(walls) / args.batch
    conv = sum(f.converged for f in figs)
    print(f"supplydesign: {args.batch} four-rail {args.kind} designs in {min(walls):.3f} s wall "
          f"({min(cpus):.3f} s CPU): {1e3 * ours:.2f} ms per design; "
          f"converged {conv}/{args.batch}; "
          f"Newton iterations at most {max(f.iterations for f in figs)}; "
          f"peak traced memory {peak_bytes / 2**20:.1f} MiB")

    spice_times = []
    worst = {"dc": 0.0, "ripple": 0.0, "peak": 0.0}
    for i in range(min(args.spice, args.batch)):
        elapsed, t_stop, m = settled_run(designs[i])
        moving = settled_change(m)
        spice_times.append(elapsed)
        f = figs[i]
        for ours_r, sp in zip(f.rails, m["rails"], strict=True):
            worst["dc"] = max(worst["dc"], abs(ours_r.dc_v / sp["dc_v"] - 1))
            if ours_r.ripple_rms_v > 1e-3:
                worst["ripple"] = max(worst["ripple"],
                                      abs(ours_r.ripple_rms_v / sp["ripple_rms_v"] - 1))
        worst["peak"] = max(worst["peak"], abs(f.rectifier.peak_a / m["rectifier"]["peak_a"] - 1))
        print(f"ngspice design {i}: {t_stop:.1f} s of circuit time in {spice_times[-1]:.2f} s "
              f"(figures moved {moving:.1e} over the last 0.5 s)")
    if spice_times:
        sp = sum(spice_times) / len(spice_times)
        print(f"ngspice: {sp:.2f} s per design (mean of {len(spice_times)})")
        print(f"ratio ngspice / supplydesign per design: {sp / ours:.0f}x")
        print(f"agreement (worst of the sample): DC {100 * worst['dc']:.3f} %, ripple rms "
              f"{100 * worst['ripple']:.2f} % (rails above 1 mV), rectifier peak "
              f"{100 * worst['peak']:.2f} %")


if __name__ == "__main__":
    main()
