"""The ngspice runner: the outside reference simulator of the cross-checks.

:func:`run_ngspice` writes the netlist of :mod:`supplydesign.circuit.spice`, runs
``ngspice -b`` from rest and reads its binary raw file back; :func:`measure_steady`
takes the steady-state figures over the last mains periods of a run and checks
that the run has settled.

Caution: the circuits described carry lethal voltages. A simulation says nothing
about the safety of a build (stored charge, bleeders, isolation, fusing); follow
local codes and licensed practice.
"""

from __future__ import annotations

import math
import re
import shutil
import subprocess
import tempfile
import time
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from .netlist import Circuit
from .spice import DEFAULT_RELTOL, DEFAULT_STEP_S, netlist, probe_vectors

#: time between the two windows of the settle check [s]
SETTLE_SHIFT_S = 0.5
#: whole mains periods in each measuring window
WINDOW_PERIODS = 10


class NgspiceError(RuntimeError):
    """ngspice could not be run, failed, or wrote output that cannot be read."""


class NgspiceNotFound(NgspiceError):
    """The ``ngspice`` program is not on the PATH."""


# --------------------------------------------------------------------------- running


@dataclass
class SpiceResult:
    """Waveforms of one ngspice transient run (arrays over the kept time points).

    Currents follow the element netlist's direction: anode current from anode to
    cathode, winding current from node a to node b of the winding.
    """

    t_s: np.ndarray  # (N,) uneven SPICE time points [s]
    rail_v: dict[str, np.ndarray]  # rail name -> voltage [V]
    anode_a: dict[str, np.ndarray]  # D element name -> junction current [A]
    winding_a: dict[str, np.ndarray]  # W element name -> winding current [A]
    netlist: str
    runtime_s: float  # wall time of the ngspice process [s]
    log: str = ""


def ngspice_path() -> str:
    """Path of the ``ngspice`` program; raises :class:`NgspiceNotFound` if it is missing."""
    exe = shutil.which("ngspice")
    if exe is None:
        raise NgspiceNotFound("ngspice is not installed or not on the PATH "
                              "(Debian/Ubuntu: apt-get install ngspice)")
    return exe


def read_raw(path: str | Path) -> dict[str, np.ndarray]:
    """Read a binary ngspice raw file of one real (transient) plot into named arrays.

    Names are as ngspice writes them, lower case (``"time"``, ``"v(rect)"``,
    ``"i(v_d1)"``).
    """
    data = Path(path).read_bytes()
    marker = b"Binary:\n"
    at = data.find(marker)
    if at < 0:
        raise NgspiceError(f"{path}: not a binary ngspice raw file")
    header = data[:at].decode("ascii", errors="replace").splitlines()
    names: list[str] = []
    reading = False
    for line in header:
        if line.startswith("Flags:") and "complex" in line:
            raise NgspiceError(f"{path}: complex data, expected a transient run")
        if line.startswith("Variables:"):
            reading = True
            continue
        if reading:
            parts = line.split()
            if len(parts) >= 2 and parts[0].isdigit():
                names.append(parts[1].lower())
    if not names:
        raise NgspiceError(f"{path}: no variables in the raw file header")
    body = np.frombuffer(data[at + len(marker):], dtype="<f8")
    points = body.size // len(names)
    table = body[: points * len(names)].reshape(points, len(names))
    return {name: table[:, j].copy() for j, name in enumerate(names)}


def run_ngspice(circuit: Circuit, index: int = 0, *, t_stop_s: float,
                t_step_s: float = DEFAULT_STEP_S, reltol: float = DEFAULT_RELTOL,
                timeout_s: float = 120.0, t_save_s: float = 0.0,
                method: str = "gear", start_phase_deg: float = 0.0) -> SpiceResult:
    """Run design ``index`` of ``circuit`` through ``ngspice -b`` from rest.

    Parameters
    ----------
    circuit, index, t_stop_s, t_step_s, reltol, method, start_phase_deg
        As for :func:`netlist`.
    timeout_s : float
        Wall-clock limit of the ngspice process [s].
    t_save_s : float
        Keep output from this time on [s] (saves memory on long runs).

    Returns
    -------
    SpiceResult
        Rail voltages, anode currents and winding currents.

    Raises
    ------
    NgspiceNotFound
        If ngspice is not installed.
    NgspiceError
        If ngspice fails, times out or stops before ``t_stop_s``.
    """
    exe = ngspice_path()
    probes = probe_vectors(circuit)
    save = [*dict.fromkeys(probes["rails"].values()), *probes["anodes"].values(),
            *probes["windings"].values()]
    text = netlist(circuit, index, t_stop_s=t_stop_s, t_step_s=t_step_s, reltol=reltol,
                   save=save, t_save_s=t_save_s, method=method,
                   start_phase_deg=start_phase_deg)
    with tempfile.TemporaryDirectory(prefix="supplydesign-spice-") as tmp:
        cir, raw, log = Path(tmp, "circuit.cir"), Path(tmp, "out.raw"), Path(tmp, "ngspice.log")
        cir.write_text(text, encoding="utf-8")
        start = time.perf_counter()
        try:
            proc = subprocess.run([exe, "-b", "-r", str(raw), "-o", str(log), str(cir)],
                                  cwd=tmp, capture_output=True, text=True, timeout=timeout_s,
                                  check=False)
        except subprocess.TimeoutExpired:
            raise NgspiceError(f"ngspice did not finish within {timeout_s:g} s "
                               f"({t_stop_s:g} s of circuit time)") from None
        runtime = time.perf_counter() - start
        log_text = log.read_text(errors="replace") if log.exists() else ""
        log_text += proc.stdout + proc.stderr
        errors = [ln.strip() for ln in log_text.splitlines()
                  if re.match(r"\s*(error|fatal)", ln, re.IGNORECASE)]
        if proc.returncode != 0 or errors or not raw.exists():
            detail = "; ".join(errors[:5]) or log_text.strip()[-500:]
            raise NgspiceError(f"ngspice failed (exit status {proc.returncode}): {detail}")
        vectors = read_raw(raw)
    missing = [v for v in ["time", *save] if v not in vectors]
    if missing:
        raise NgspiceError(f"ngspice output lacks {', '.join(missing)}")
    t = vectors["time"]
    if t.size < 2 or t[-1] < t_stop_s * (1 - 1e-9):
        reached = t[-1] if t.size else 0.0
        raise NgspiceError(f"ngspice stopped at {reached:g} s of {t_stop_s:g} s: {log_text[-500:]}")
    return SpiceResult(
        t_s=t,
        rail_v={name: vectors[v] for name, v in probes["rails"].items()},
        anode_a={name: vectors[v] for name, v in probes["anodes"].items()},
        winding_a={name: -vectors[v] for name, v in probes["windings"].items()},
        netlist=text,
        runtime_s=runtime,
        log=log_text,
    )


# --------------------------------------------------------------------------- measuring


def _window(t: np.ndarray, y: np.ndarray, t0: float, t1: float) -> tuple[np.ndarray, np.ndarray]:
    """The samples of ``y`` inside [t0, t1], with the ends interpolated in."""
    inside = (t > t0) & (t < t1)
    tt = np.concatenate(([t0], t[inside], [t1]))
    yy = np.concatenate(([np.interp(t0, t, y)], y[inside], [np.interp(t1, t, y)]))
    return tt, yy


def _mean(t: np.ndarray, y: np.ndarray) -> float:
    """Mean of the piecewise-linear interpolant of (t, y) over [t[0], t[-1]]."""
    h = np.diff(t)
    return float(np.sum(h * (y[:-1] + y[1:])) / 2.0 / (t[-1] - t[0]))


def _mean_square(t: np.ndarray, y: np.ndarray) -> float:
    """Mean square of the piecewise-linear interpolant (exact on each segment)."""
    h = np.diff(t)
    a, b = y[:-1], y[1:]
    return float(np.sum(h * (a * a + a * b + b * b)) / 3.0 / (t[-1] - t[0]))


def _figures(result: SpiceResult, t0: float, t1: float) -> dict:
    t = result.t_s
    rails = []
    for name, v in result.rail_v.items():
        tt, vv = _window(t, v, t0, t1)
        dc = _mean(tt, vv)
        rails.append({"name": name, "dc_v": dc,
                      "ripple_rms_v": math.sqrt(max(_mean_square(tt, vv - dc), 0.0)),
                      "ripple_pp_v": float(vv.max() - vv.min()), "peak_v": float(vv.max())})
    anodes = []
    for name, i in result.anode_a.items():
        tt, ii = _window(t, i, t0, t1)
        anodes.append({"name": name, "peak_a": float(ii.max()),
                       "rms_a": math.sqrt(_mean_square(tt, ii)), "avg_a": _mean(tt, ii)})
    windings = []
    for name, i in result.winding_a.items():
        tt, ii = _window(t, i, t0, t1)
        windings.append({"name": name, "rms_a": math.sqrt(_mean_square(tt, ii)),
                         "avg_a": _mean(tt, ii)})
    return {
        "window_s": [t0, t1],
        "rails": rails,
        "anodes": anodes,
        "rectifier": {k: max(a[k] for a in anodes) for k in ("peak_a", "rms_a", "avg_a")},
        "windings": windings,
        "transformer": {"rms_a": max(w["rms_a"] for w in windings)},
    }


def _flat(fig: dict) -> dict[str, float]:
    out = {}
    for group in ("rails", "anodes", "windings"):
        for item in fig[group]:
            for k, v in item.items():
                if k != "name":
                    out[f"{group}.{item['name']}.{k}"] = v
    return out


def measure_steady(result: SpiceResult, frequency_hz: float, window_periods: int = WINDOW_PERIODS,
                   shift_s: float = SETTLE_SHIFT_S) -> dict:
    """Steady-state figures over the last whole mains periods of a run, and a settle check.

    Means and rms values are exact integrals of the piecewise-linear
    interpolant of the uneven SPICE samples over the window (the limit of
    resampling onto an ever finer uniform grid); peaks and peak-to-peak values
    are taken over the samples themselves.

    Parameters
    ----------
    result : SpiceResult
        A run of :func:`run_ngspice`.
    frequency_hz : float
        Mains frequency [Hz].
    window_periods : int
        Whole mains periods in each window.
    shift_s : float
        How much earlier the second window lies [s], rounded to whole periods.

    Returns
    -------
    dict
        JSON-ready: ``rails`` (per rail ``name``, ``dc_v``, ``ripple_rms_v``,
        ``ripple_pp_v``, ``peak_v``), ``anodes`` (per junction ``peak_a``,
        ``rms_a``, ``avg_a``), ``rectifier`` (the largest of the anodes),
        ``windings`` (``rms_a``, ``avg_a``), ``transformer`` (the largest), ``window_s``;
        ``earlier``: the same over the earlier window; ``change``: relative
        change of every figure between the windows (``"rails.B+.dc_v"`` keys);
        ``dc_change_rel``: the largest relative change of a rail DC.
    """
    period = 1.0 / frequency_hz
    t = result.t_s
    t1 = float(t[-1])
    t0 = t1 - window_periods * period
    shift = max(round(shift_s * frequency_hz), 1) * period
    if t0 - shift < t[0] - 1e-12:
        raise ValueError(f"run keeps {t1 - t[0]:.3g} s; the settle check needs "
                         f"{window_periods * period + shift:.3g} s")
    now = _figures(result, t0, t1)
    earlier = _figures(result, t0 - shift, t1 - shift)
    a, b = _flat(now), _flat(earlier)
    change = {k: abs(a[k] - b[k]) / max(abs(a[k]), 1e-30) for k in a}
    now["earlier"] = earlier
    now["change"] = change
    now["dc_change_rel"] = max((change[k] for k in change if k.endswith(".dc_v")), default=0.0)
    return now
