"""Benchmark: ``supplydesign evaluate`` at the command line against ngspice, in one run.

Writes two populations of design files (invented, demo only; see designs.py):
``--designs`` variants of one five-rail valve-rectifier topology, and as many
designs spread over 34 distinct topologies. Times the command as a user runs it,
on one file and on the whole population, with and without the worst cases:

    supplydesign evaluate FILES --nominal-only --quiet --json OUT
    supplydesign evaluate FILES --quiet --json OUT

The marginal cost per design is (time of N files - time of 1 file) / (N - 1):
start-up and imports cancel. First, one design is run with an empty numba cache (the
first run after an install, compiling the solver's inner loop) and again with that
cache filled; both wall times are printed. ngspice runs a sample of the same designs from rest
until DC and ripple stop moving (spice_reference.settled_run) at ``--reltol``;
the ratio is ngspice's mean time per design over our marginal time per design.
The load average of the machine is printed before and after.

    python3 benchmarks/cli_speed.py [--designs 200] [--spice 3] [--reltol 2e-4]
    python3 benchmarks/cli_speed.py --save-figures ref.json.gz   # keep every figure
    python3 benchmarks/cli_speed.py --check-figures ref.json.gz  # compare at 1e-4

benchmarks/data/figures-before-issue16.json.gz holds the figures of main at
49e8eab, before the evaluator's speed work, saved with --save-figures (200 designs).

``--check-figures`` compares every number of the JSON output (nominal and worst
cases) with figures saved by ``--save-figures`` from an earlier version, at
``--rtol`` relative (1e-4) with an absolute floor of ``--atol`` (1e-9) in the
figure's own unit (1 uV for voltages, below the shooting's own tolerance), and
prints the worst deviations. The solver's own counters
(iterations, residual) are not figures and are skipped; keys the saved file lacks
(figures added later) are ignored. The differing figures are listed per design,
noting the designs that now settle a case the saved run could not.

``--old-exponential`` runs every command with scipy.linalg.expm in place of the
evaluator's own matrix exponential (the one the saved figures were computed
with): what still differs then comes from the solver, not the exponential.
"""

from __future__ import annotations

import argparse
import gzip
import json
import os
import re
import subprocess
import sys
import tempfile
import time

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, HERE)

from designs import five_rail_valve_batch, mixed_topologies  # noqa: E402
from spice_reference import settled_run  # noqa: E402

from supplydesign.io.tomlwrite import save_design  # noqa: E402

#: the solver's counters in the JSON output: not figures, they may change
SOLVER_KEYS = {"iterations", "residual"}
#: output-impedance curves, left out of the saved figures to keep the file small (their
#: peak, its frequency and the source resistance they follow from are kept)
CURVE_KEYS = {"freq_hz", "ohm"}


def saved_form(obj):
    """The figures as saved: without CURVE_KEYS, numbers to 9 significant figures."""
    if isinstance(obj, dict):
        return {k: saved_form(v) for k, v in obj.items() if k not in CURVE_KEYS}
    if isinstance(obj, list):
        return [saved_form(v) for v in obj]
    if isinstance(obj, float):
        return float(f"{obj:.9g}")
    return obj


def _load() -> str:
    one, five, fifteen = os.getloadavg()
    return f"load average {one:.2f}, {five:.2f}, {fifteen:.2f} on {os.cpu_count()} CPUs"


def _write(designs, folder: str) -> list[str]:
    os.makedirs(folder, exist_ok=True)
    paths = []
    for i, d in enumerate(designs):
        path = os.path.join(folder, f"design-{i:04d}.toml")
        save_design(d, path)
        paths.append(path)
    return paths


#: the command run in place of ``-m supplydesign`` by --old-exponential
OLD_EXPONENTIAL = ("import scipy.linalg, supplydesign.circuit.statespace as s; "
                   "s.expm_batched = scipy.linalg.expm; from supplydesign.cli import main; "
                   "raise SystemExit(main())")


def _run(files: list[str], worst: bool, out: str, old_exponential: bool = False,
         cache_dir: str | None = None) -> float:
    """Wall time of one ``supplydesign evaluate`` process [s]; ``cache_dir``: numba's cache
    folder (an empty one: the first run after an install, compilation included)."""
    entry = ["-c", OLD_EXPONENTIAL] if old_exponential else ["-m", "supplydesign"]
    cmd = [sys.executable, *entry, "evaluate", *files, "--quiet", "--json", out, "--force"]
    if not worst:
        cmd.append("--nominal-only")
    env = dict(os.environ)
    # one BLAS thread, as ngspice runs on one core (on a loaded machine more threads only
    # fight over the cores)
    env.setdefault("OPENBLAS_NUM_THREADS", "1")
    if cache_dir is not None:
        env["NUMBA_CACHE_DIR"] = cache_dir
    root = os.path.dirname(HERE)
    env["PYTHONPATH"] = root + os.pathsep + env.get("PYTHONPATH", "")
    t0 = time.perf_counter()
    proc = subprocess.run(cmd, env=env, capture_output=True, text=True, check=False, cwd=root)
    elapsed = time.perf_counter() - t0
    if proc.returncode not in (0, 1):  # 1: some design did not settle (counted below)
        raise SystemExit(f"evaluate failed ({proc.returncode}): {proc.stderr[-2000:]}")
    return elapsed


def _flatten(obj, path: str, out: dict) -> None:
    if isinstance(obj, dict):
        for k, v in obj.items():
            if k not in SOLVER_KEYS:
                _flatten(v, f"{path}.{k}", out)
    elif isinstance(obj, list):
        for i, v in enumerate(obj):
            _flatten(v, f"{path}[{i}]", out)
    else:
        out[path] = obj


#: voltages closer than this count as equal [V]: the shooting stops at a residual of
#: 1e-9 of the state, spread over the period, so the ripple of an unloaded rail (tens of
#: microvolts on hundreds of volts) moves by up to 1e-7 V between two runs that both
#: meet the tolerance
VOLTAGE_FLOOR_V = 1e-6


def compare(saved: dict, now: dict, rtol: float, atol: float) -> list[str]:
    """Lines describing every figure of ``saved`` that ``now`` does not reproduce within
    ``rtol`` relative, or ``atol`` absolute (``VOLTAGE_FLOOR_V`` for voltages)."""
    a, b = {}, {}
    _flatten(saved, "", a)
    _flatten(now, "", b)
    bad, worst = [], (0.0, "")
    for key, ref in a.items():
        if key not in b:
            bad.append(f"missing {key}")
            continue
        new = b[key]
        if isinstance(ref, bool) or not isinstance(ref, (int, float)) or ref is None:
            if ref != new:
                bad.append(f"{key}: {ref!r} -> {new!r}")
            continue
        if not isinstance(new, (int, float)):
            bad.append(f"{key}: {ref!r} -> {new!r}")
            continue
        dev = abs(new - ref)
        scale = max(abs(ref), abs(new))
        rel = dev / scale if scale > 0 else 0.0
        floor = max(atol, VOLTAGE_FLOOR_V) if key.endswith("_v") else atol
        if dev > floor and rel > worst[0]:
            worst = (rel, key)
        if dev > rtol * scale + floor:
            bad.append(f"{key}: {ref!r} -> {new!r} ({rel:.1e} relative)")
    print(f"  {len(a)} saved figures compared; largest relative deviation "
          f"{worst[0]:.1e} ({worst[1] or 'none'})")
    return bad


def _summarise(bad: list[str]) -> None:
    """Print the differing figures per design, saying which designs now settle a case
    that the saved run could not settle."""
    per: dict[str, list[str]] = {}
    for line in bad:
        found = re.match(r"(?:missing )?\[(\d+)\]", line)
        per.setdefault(found.group(1) if found else "?", []).append(line)
    for design, lines in per.items():
        settles = sorted({ln.split(".")[1] for ln in lines if "converged: False -> True" in ln})
        why = f" (now settles {', '.join(settles)})" if settles else ""
        print(f"    design {design}: {len(lines)} figures{why}, e.g. {lines[0]}")


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--designs", type=int, default=200)
    ap.add_argument("--spice", type=int, default=3, help="designs per population run in ngspice")
    ap.add_argument("--reltol", type=float, default=2e-4, help="ngspice's RELTOL")
    ap.add_argument("--repeat", type=int, default=1, help="runs of each command (best kept)")
    ap.add_argument("--only", choices=["nominal", "worst"], help="time one mode only")
    ap.add_argument("--save-figures", metavar="FILE.json.gz")
    ap.add_argument("--check-figures", metavar="FILE.json.gz")
    ap.add_argument("--rtol", type=float, default=1e-4)
    ap.add_argument("--atol", type=float, default=1e-9)
    ap.add_argument("--old-exponential", action="store_true",
                    help="run evaluate with scipy.linalg.expm, the matrix exponential of "
                         "before: tells apart the figures that moved with the exponential")
    args = ap.parse_args()

    print(f"start: {_load()}")
    populations = {
        "one topology": five_rail_valve_batch(args.designs),
        "mixed topologies": mixed_topologies(args.designs),
    }
    modes = [m for m in ("nominal", "worst") if args.only in (None, m)]
    figures: dict = {}
    ours: dict = {}
    with tempfile.TemporaryDirectory(prefix="supplydesign-bench-") as tmp:
        # the solver's compiled code: built on the first run after an install, then loaded
        # from numba's cache (an empty cache folder stands for a fresh install)
        files = _write(populations["one topology"][:1], os.path.join(tmp, "first"))
        out = os.path.join(tmp, "out.json")
        cold_cache = os.path.join(tmp, "numba-cache")
        cold = _run(files, False, out, args.old_exponential, cold_cache)
        warm = _run(files, False, out, args.old_exponential, cold_cache)
        print(f"one design, --nominal-only: first run after install {cold:.2f} s (compiling "
              f"the solver's inner loop), then {warm:.2f} s (compiled code from the cache)")
        for name, designs in populations.items():
            files = _write(designs, os.path.join(tmp, name.replace(" ", "-")))
            for mode in modes:
                worst = mode == "worst"
                t1 = min(_run(files[:1], worst, out, args.old_exponential)
                         for _ in range(args.repeat))
                tn = min(_run(files, worst, out, args.old_exponential)
                         for _ in range(args.repeat))
                with open(out, encoding="utf-8") as fh:
                    data = json.load(fh)
                figures.setdefault(name, {})[mode] = data
                settled = sum(d["solver"]["converged"] for d in data)
                per = (tn - t1) / (len(files) - 1)
                ours[(name, mode)] = per
                label = "with worst cases" if worst else "--nominal-only"
                print(f"{name}, {label}: 1 file {t1:.2f} s, {len(files)} files {tn:.2f} s: "
                      f"marginal {1e3 * per:.2f} ms per design ({settled}/{len(files)} "
                      f"settled)")
    spice: dict = {}
    for name, designs in populations.items():
        if args.spice <= 0:
            break
        pick = sorted({round(k * (len(designs) - 1) / max(args.spice - 1, 1))
                       for k in range(args.spice)})
        times = []
        for i in pick:
            elapsed, t_stop, _ = settled_run(designs[i], reltol=args.reltol)
            times.append(elapsed)
            print(f"ngspice, {name}, design {i}: {t_stop:.1f} s of circuit time in "
                  f"{elapsed:.2f} s (reltol {args.reltol:g})")
        spice[name] = sum(times) / len(times)
        print(f"ngspice, {name}: {spice[name]:.2f} s per design (mean of {len(times)})")
    for (name, mode), per in ours.items():
        if name in spice:
            label = "with worst cases" if mode == "worst" else "steady state (--nominal-only)"
            print(f"ratio ngspice steady state / evaluate {label}, {name}: "
                  f"{spice[name] / per:.0f}x")
    print(f"end: {_load()}")

    if args.save_figures:
        with gzip.open(args.save_figures, "wt", encoding="utf-8") as fh:
            json.dump({"designs": args.designs, "figures": saved_form(figures)}, fh,
                      separators=(",", ":"))
        print(f"figures saved to {args.save_figures}")
    if args.check_figures:
        with gzip.open(args.check_figures, "rt", encoding="utf-8") as fh:
            saved = json.load(fh)
        if saved["designs"] != args.designs:
            raise SystemExit(f"{args.check_figures} holds {saved['designs']} designs per "
                             f"population; run with --designs {saved['designs']}")
        failed = 0
        for name, per_mode in saved["figures"].items():
            for mode, data in per_mode.items():
                if mode not in figures.get(name, {}):
                    continue
                print(f"figures of {name}, {mode}, against {args.check_figures}:")
                bad = compare(data, figures[name][mode], args.rtol, args.atol)
                failed += len(bad)
                _summarise(bad)
        print(f"figures beyond {args.rtol:g} relative: {failed}")
        if failed:
            sys.exit(1)


if __name__ == "__main__":
    main()
