"""Benchmark: wall time of ``supplydesign demo``, first run after an install and later.

    python3 benchmarks/demo_time.py [--repeat 2]

Runs the demo (the built-in brief: search, verification, picks, report) into a
temporary folder as a user runs it, once with an empty numba cache folder (the first
run after an install: the solver's inner loop is compiled) and ``--repeat`` times with
that cache filled, and prints each wall time and the load average before and after.
Goal (issue 16): under 10 s warm.
"""

from __future__ import annotations

import argparse
import os
import subprocess
import sys
import tempfile
import time

HERE = os.path.dirname(os.path.abspath(__file__))


def _load() -> str:
    one, five, fifteen = os.getloadavg()
    return f"load average {one:.2f}, {five:.2f}, {fifteen:.2f} on {os.cpu_count()} CPUs"


def run_demo(out: str, cache_dir: str) -> float:
    """Wall time of one ``supplydesign demo --out OUT`` process [s]."""
    env = dict(os.environ)
    env["NUMBA_CACHE_DIR"] = cache_dir
    root = os.path.dirname(HERE)
    env["PYTHONPATH"] = root + os.pathsep + env.get("PYTHONPATH", "")
    t0 = time.perf_counter()
    proc = subprocess.run([sys.executable, "-m", "supplydesign", "demo", "--out", out],
                          env=env, capture_output=True, text=True, check=False, cwd=root)
    elapsed = time.perf_counter() - t0
    if proc.returncode != 0:
        raise SystemExit(f"demo failed ({proc.returncode}): {proc.stderr[-2000:]}")
    return elapsed


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--repeat", type=int, default=2, help="warm runs")
    args = ap.parse_args()
    print(f"start: {_load()}")
    with tempfile.TemporaryDirectory(prefix="supplydesign-demo-") as tmp:
        cache = os.path.join(tmp, "numba-cache")
        cold = run_demo(os.path.join(tmp, "cold"), cache)
        print(f"demo, first run after install (compiling the solver's inner loop): "
              f"{cold:.2f} s wall")
        for k in range(args.repeat):
            warm = run_demo(os.path.join(tmp, f"warm{k}"), cache)
            print(f"demo, warm run {k + 1}: {warm:.2f} s wall")
    print(f"end: {_load()}")


if __name__ == "__main__":
    main()
