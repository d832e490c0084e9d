"""SPICE netlist export and an ngspice runner used as an outside reference.

The netlist is written element by element from the batched element netlist of
:mod:`supplydesign.circuit.netlist`, never re-derived from the design, so that
ngspice solves exactly the circuit our own solver solves, including the tiny
junction capacitance and conductance and the node capacitances added there.

Translation of the element kinds (names get a kind prefix, ``R_rl2``, ``V_w1``):

===== ===================================================================
``R``  resistor (omitted when open, ``r = inf``; a 0 V source when ``r = 0``)
``C``  capacitor, starting discharged (``ic=0``)
``L``  inductor plus its DC resistance through an internal node
``W``  SIN voltage source (phase in degrees) in series with ``r`` and, if
       ``l > 0``, the leakage inductance
``J``  DC current source from a to b
``D``  0 V probe source in series with the junction: valve as a behavioural
       current source ``I = K*pow(max(V,0),1.5)``, silicon as a diode model
       with ``IS``, ``N``, ``RS=0`` and ``CJO=0`` (the series resistance and the
       junction capacitance are separate elements already)
===== ===================================================================

The transient run starts from rest (``uic``, every capacitor discharged and
every inductor without current), so it also shows how long a design takes to
settle; :func:`measure_steady` compares two windows half a second apart to tell
whether it has.

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
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..design import Design
from ..writefiles import write_text_atomic
from .netlist import (
    GROUND,
    NOMINAL,
    THERMAL_VOLTAGE_27C,
    Circuit,
    Element,
    OperatingCase,
    build,
)

#: default largest time step of a reference run [s]
DEFAULT_STEP_S = 20e-6
#: default relative tolerance of a reference run (see tests/data/spice/README.md)
DEFAULT_RELTOL = 1e-4
#: time between the two windows of the settle check [s]
SETTLE_SHIFT_S = 0.5
#: whole mains periods in each measuring window
WINDOW_PERIODS = 10

CAUTION = ("CAUTION: this supply carries lethal voltages. A simulation says nothing about "
           "the safety of a build; follow local codes and licensed practice.")


class NgspiceError(RuntimeError):
    """ngspice could not be run, failed, or wrote output that cannot be read."""


class NgspiceNotFound(NgspiceError):
    """The ``ngspice`` program is not on the PATH."""


# --------------------------------------------------------------------------- names


_UNSAFE = re.compile(r"[^a-z0-9_]")


def spice_name(name: str) -> str:
    """A node or element name SPICE reads unchanged: lower case, letters, digits, ``_``."""
    if name == GROUND:
        return GROUND
    clean = _UNSAFE.sub("_", name.lower())
    return clean or "_"


def _num(x: float) -> str:
    """A float in a form every SPICE reads (no unit suffix, 12 significant digits)."""
    return f"{float(x):.12g}"


class _Nodes:
    """Sanitised node names of one netlist, with collision-free internal nodes."""

    def __init__(self, circuit: Circuit):
        self.map: dict[str, str] = {GROUND: GROUND}
        used = {GROUND}
        for n in circuit.topology.nodes:
            base = spice_name(n)
            name = base
            k = 1
            while name in used:
                k += 1
                name = f"{base}_{k}"
            self.map[n] = name
            used.add(name)
        self.used = used

    def __getitem__(self, node: str) -> str:
        return self.map[node]

    def internal(self, base: str) -> str:
        name = f"x_{spice_name(base)}"
        k = 1
        while name in self.used:
            k += 1
            name = f"x_{spice_name(base)}_{k}"
        self.used.add(name)
        return name


# --------------------------------------------------------------------------- netlist


def probe_vectors(circuit: Circuit) -> dict[str, dict[str, str]]:
    """The SPICE vectors that carry the figures of a circuit.

    Returns
    -------
    dict
        ``{"rails": {rail name: "v(node)"}, "anodes": {D element: "i(v_d1)"},
        "windings": {W element: "i(v_w1)"}}``. The anode probe current flows
        from anode to cathode; the winding source current is the negative of the
        winding current a -> b (SPICE counts source current from + to -).
    """
    topo = circuit.topology
    nodes = _Nodes(circuit)
    rails = {name: f"v({nodes[node]})" for name, node in zip(topo.rail_names, topo.rail_nodes,
                                                             strict=True)}
    anodes = {e.name: f"i(v_{spice_name(e.name)})" for e in topo.of_kind("D")}
    windings = {e.name: f"i(v_{spice_name(e.name)})" for e in topo.of_kind("W")}
    return {"rails": rails, "anodes": anodes, "windings": windings}


def _element_lines(e: Element, p: dict[str, float], nodes: _Nodes, law: str,
                   frequency_hz: float, start_phase_deg: float = 0.0) -> list[str]:
    """SPICE lines of one element of the element netlist."""
    a, b = nodes[e.a], nodes[e.b]
    tag = spice_name(e.name)
    if e.kind == "R":
        r = p["r"]
        if math.isinf(r):
            return [f"* R_{tag} {a} {b}: open, omitted"]
        if r == 0:
            return [f"V_{tag} {a} {b} 0 ; zero resistance"]
        return [f"R_{tag} {a} {b} {_num(r)}"]
    if e.kind == "C":
        if p["c"] == 0:
            return [f"* C_{tag} {a} {b}: zero capacitance, omitted"]
        return [f"C_{tag} {a} {b} {_num(p['c'])} ic=0"]
    if e.kind == "L":
        lines = []
        if p["r"] > 0:
            mid = nodes.internal(tag)
            lines.append(f"L_{tag} {a} {mid} {_num(p['l'])} ic=0")
            lines.append(f"R_{tag} {mid} {b} {_num(p['r'])}")
        else:
            lines.append(f"L_{tag} {a} {b} {_num(p['l'])} ic=0")
        return lines
    if e.kind == "W":
        # V(source +) - V(a) = emf sin(wt + phase); then r and l on to b. The
        # leakage may also be a separate L element of the netlist (then no "l").
        p = {"l": 0.0, **p}
        chain = [nodes.internal(f"{tag}_emf")]
        if p["r"] > 0 and p["l"] > 0:
            chain.append(nodes.internal(f"{tag}_r"))
        chain.append(b)
        phase_deg = (math.degrees(e.phase) + start_phase_deg) % 360.0
        lines = [f"V_{tag} {chain[0]} {a} SIN(0 {_num(p['emf'])} {_num(frequency_hz)} 0 0 "
                 f"{_num(phase_deg)})"]
        k = 0
        if p["r"] > 0:
            lines.append(f"R_{tag} {chain[k]} {chain[k + 1]} {_num(p['r'])}")
            k += 1
        if p["l"] > 0:
            lines.append(f"L_{tag} {chain[k]} {chain[k + 1]} {_num(p['l'])} ic=0")
            k += 1
        if k == 0:  # an ideal source: join its + terminal to b
            lines.append(f"V_{tag}_join {chain[0]} {b} 0")
        return lines
    if e.kind == "J":
        return [f"I_{tag} {a} {b} DC {_num(p['i'])}"]
    if e.kind == "D":
        inner = nodes.internal(tag)
        lines = [f"V_{tag} {a} {inner} 0 ; probe: anode current"]
        if law == "valve":
            lines.append(f"B_{tag} {inner} {b} I = {_num(p['k'])}*pow(max(V({inner},{b}),0),1.5)")
        else:
            n = p["nvt"] / THERMAL_VOLTAGE_27C
            lines.append(f"D_{tag} {inner} {b} dm_{tag}")
            lines.append(f".model dm_{tag} D(IS={_num(p['isat'])} N={_num(n)} RS=0 CJO=0 TT=0)")
        return lines
    raise ValueError(f"unknown element kind {e.kind!r}")


def netlist(circuit: Circuit, index: int = 0, *, t_stop_s: float, t_step_s: float,
            reltol: float = DEFAULT_RELTOL, title: str | None = None,
            save: Sequence[str] | None = None, t_save_s: float = 0.0,
            method: str = "gear", start_phase_deg: float = 0.0) -> str:
    """A Berkeley-SPICE netlist of design ``index`` of a batched circuit.

    Parameters
    ----------
    circuit : Circuit
        The batched element netlist (:func:`supplydesign.circuit.netlist.build`).
    index : int
        Which design of the batch.
    t_stop_s : float
        Length of the transient run from rest [s].
    t_step_s : float
        Output step and largest time step of the run [s].
    reltol : float
        SPICE relative tolerance.
    title : str, optional
        Title line; default the design's title.
    save : sequence of str, optional
        Vectors for a ``.save`` line (``"v(rect)"``, ``"i(v_d1)"``); default: none,
        so ngspice keeps every node voltage and source current.
    t_save_s : float
        Start of the kept output [s] (the TSTART of ``.tran``).
    method : str
        Integration method, ``"gear"`` (default) or ``"trap"``.
    start_phase_deg : float
        Mains phase at t = 0 [degrees], added to every winding's phase: 90 starts
        at the crest of the first winding (the switch-on case).

    Returns
    -------
    str
        The netlist, ending in ``.end`` and a newline.
    """
    topo = circuit.topology
    if not 0 <= index < circuit.size:
        raise IndexError(f"design {index} of a batch of {circuit.size}")
    design = circuit.designs[index] if circuit.designs else None
    if title is None:
        title = design.title if design is not None else "supplydesign circuit"
    source = design.source if design is not None else "<unknown>"
    freq = float(circuit.frequency_hz[index])
    nodes = _Nodes(circuit)

    out = [
        _title_line(title),
        f"* design file: {source}",
        f"* written by supplydesign: {topo.law} rectifier, {topo.arrangement}, "
        f"{topo.winding} winding, {freq:g} Hz mains",
        f"* {CAUTION}",
        "* Runs from rest (uic): every capacitor discharged, every inductor without current.",
        "* To run: ngspice -b -r out.raw THIS.cir (or ngspice THIS.cir, then: run, plot v(rect))",
        *_model_element_lines(topo),
        "*",
    ]
    for e in topo.elements:
        p = {k: float(v[index]) for k, v in circuit.values[e.name].items()}
        out.extend(_element_lines(e, p, nodes, topo.law, freq, start_phase_deg))
    out.append("*")
    out.append(f".options temp=27 tnom=27 reltol={_num(reltol)} method={method}")
    if save:
        out.append(".save " + " ".join(save))
    out.append(f".tran {_num(t_step_s)} {_num(t_stop_s)} {_num(t_save_s)} {_num(t_step_s)} uic")
    out.append(".end")
    return "\n".join(out) + "\n"


#: the netlist's model elements that are no part of the build, by role, and what they are
MODEL_ELEMENTS = (
    ("junction_c", "C_cj*", "capacitance across each junction"),
    ("junction_g", "R_rj*", "conductance across each junction"),
    ("node_c", "C_cp_*", "capacitance to ground at a node that would float"),
    ("leakage_damping", "R_rs*", "damping across the leakage inductance"),
    ("choke_damping", "R_rp*", "damping across a choke input's choke (its iron losses)"),
)


def _model_element_lines(topo) -> list[str]:
    """Comment lines naming the model elements present (no part of the build)."""
    roles = {e.role[0] for e in topo.elements if e.role}
    found = [f"{name} {what}" for role, name, what in MODEL_ELEMENTS if role in roles]
    if not found:
        return []
    return ["* Model elements, not parts to buy (supplydesign.circuit.netlist explains them):",
            *(f"*   {line}" for line in found)]


def _title_line(title: str) -> str:
    """The title line: one line, no leading dot or star that a reader could misread."""
    line = " ".join(str(title).split()) or "supplydesign circuit"
    return line.lstrip(".*") or "supplydesign circuit"


# --------------------------------------------------------------------------- run length


def settle_time_estimate(circuit: Circuit, index: int = 0) -> float:
    """A run length [s] after which a switch-on run should have settled.

    Sums, along each path from the rectifier to a rail, a time constant per
    section: reservoir ``5 R_s C`` (source resistance over a conduction fraction
    of about a fifth), resistor ``R C`` and choke ``2 L / (R_dcr + R_s)`` (the
    envelope decay of an LC section without load damping), where ``C`` is all
    the capacitance at and beyond that rail and ``R_s`` the winding (and diode)
    resistance. Returns 8 times the slowest path plus
    1 s, between 2 s and 60 s, rounded up to half a second. An estimate: check
    the settle figures of :func:`measure_steady`.
    """
    topo = circuit.topology

    def val(name: str, param: str) -> float:
        return float(circuit.values[name][param][index])

    windings = topo.of_kind("W")
    r_source = sum(val(w.name, "r") for w in windings) / max(len(windings), 1)
    for e in topo.elements:
        if e.role and e.role[0] == "diode_r":
            r_source += val(e.name, "r")
            break
    n = len(topo.rail_nodes)
    parent = [-1] * n
    link = {}
    for e in topo.elements:
        if e.role and e.role[0] == "link":
            link[e.role[1]] = e
    for i in range(n):
        up = link[i].a if i in link else topo.rectifier_node
        parent[i] = max((j for j in range(i) if topo.rail_nodes[j] == up), default=-1)
    cap = [0.0] * n
    for e in topo.elements:
        if e.kind == "C" and e.role and e.role[0] == "cap":
            cap[e.role[1]] = val(e.name, "c")
    below = cap[:]
    for i in reversed(range(n)):
        if parent[i] >= 0:
            below[parent[i]] += below[i]
    tau = [0.0] * n
    for i in range(n):
        e = link.get(i)
        if e is None:
            own = 5.0 * r_source * below[i]
        elif e.kind == "R":
            own = val(e.name, "r") * below[i]
            own = 0.0 if math.isinf(own) else own
        else:
            own = 2.0 * val(e.name, "l") / max(val(e.name, "r") + r_source, 1.0)
        tau[i] = own + (tau[parent[i]] if parent[i] >= 0 else 0.0)
    t = 8.0 * max(tau, default=0.0) + 1.0
    return min(max(math.ceil(2.0 * t) / 2.0, 2.0), 60.0)


# --------------------------------------------------------------------------- writing


def write_spice(what: Design | Sequence[Design] | Circuit, path: str | Path, *, index: int = 0,
                case: OperatingCase = NOMINAL, t_stop_s: float | None = None,
                t_step_s: float = DEFAULT_STEP_S, reltol: float = DEFAULT_RELTOL,
                force: bool = False) -> Path:
    """Write the SPICE netlist of a design (or of design ``index`` of a circuit).

    Parameters
    ----------
    what : Design, sequence of Design, or Circuit
        A complete design, designs sharing one topology, or a batched circuit;
        ``index`` picks the design of a sequence or circuit.
    path : str or Path
        The file to write (``.cir``).
    case : OperatingCase
        Operating case used to build the circuit of a design (default nominal).
    t_stop_s : float, optional
        Run length [s]; default :func:`settle_time_estimate` (at least 2 s).
    t_step_s : float
        Largest time step [s], default 20 µs.
    reltol : float
        SPICE relative tolerance, default 1e-4.
    force : bool
        Replace an existing file (otherwise a :class:`~supplydesign.errors.UserError`).

    Returns
    -------
    Path
        The path written (atomically, through a temporary file).
    """
    if isinstance(what, Design):
        circuit, index = build([what], case), 0
    elif isinstance(what, Circuit):
        circuit = what
    else:
        circuit = build(list(what), case)
    if t_stop_s is None:
        t_stop_s = settle_time_estimate(circuit, index)
    text = netlist(circuit, index, t_stop_s=t_stop_s, t_step_s=t_step_s, reltol=reltol)
    write_text_atomic(path, text, force=force)
    return Path(path)


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
