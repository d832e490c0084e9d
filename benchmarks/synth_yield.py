"""Benchmark: the demo's synthesis with and without ``--yield N``, side by side in one run.

Runs ``supplydesign demo`` (the built-in demo brief) through the command line twice
in this process, once as it is and once with ``--yield N`` (default 500), and prints
both wall and CPU times, their ratio (the goal: at most 2), how many shown designs
got a yield, and the machine's load average.

    python3 benchmarks/synth_yield.py [--builds 500] [--repeat 1]
"""

from __future__ import annotations

import argparse
import contextlib
import io
import json
import os
import sys
import tempfile
import time

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.dirname(HERE))

from supplydesign.cli import main as cli  # noqa: E402


def timed(args: list[str]) -> tuple[float, float, dict]:
    """(wall s, CPU s, pareto.json) of one demo run with ``args``."""
    with tempfile.TemporaryDirectory() as out:
        w0, c0 = time.perf_counter(), time.process_time()
        with contextlib.redirect_stdout(io.StringIO()):
            code = cli(["demo", "--out", out, "--no-report", *args])
        wall, cpu = time.perf_counter() - w0, time.process_time() - c0
        if code != 0:
            raise SystemExit(f"demo {' '.join(args)} exited with {code}")
        with open(os.path.join(out, "pareto.json"), encoding="utf-8") as fh:
            return wall, cpu, json.load(fh)


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--builds", type=int, default=500)
    ap.add_argument("--repeat", type=int, default=1)
    args = ap.parse_args()
    load0 = os.getloadavg()
    plain, with_yield = [], []
    for _ in range(args.repeat):
        plain.append(timed([]))
        with_yield.append(timed(["--yield", str(args.builds)]))
    load1 = os.getloadavg()
    p = min(plain, key=lambda r: r[0])
    y = min(with_yield, key=lambda r: r[0])
    measured = sum("yield" in d for d in y[2]["designs"])
    print(f"demo: {p[0]:.1f} s wall, {p[1]:.1f} s CPU, {len(p[2]['designs'])} designs")
    print(f"demo --yield {args.builds}: {y[0]:.1f} s wall, {y[1]:.1f} s CPU; {measured} shown "
          f"designs with a yield ({measured * args.builds} builds)")
    print(f"ratio: {y[0] / p[0]:.2f} wall, {y[1] / p[1]:.2f} CPU (goal: at most 2)")
    print(f"load average (1, 5, 15 min) before {load0[0]:.2f} {load0[1]:.2f} {load0[2]:.2f}, "
          f"after {load1[0]:.2f} {load1[1]:.2f} {load1[2]:.2f}; {os.cpu_count()} CPUs")


if __name__ == "__main__":
    main()
