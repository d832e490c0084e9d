"""SPICE netlist export: the circuit our solver solves, as text any SPICE reads.

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
settle; :func:`supplydesign.circuit.ngspice.measure_steady` compares two windows
half a second apart to tell whether it has.

Caution: the circuits described carry lethal voltages. A simulation says nothing
about the safety of a build (stored charge, bleeders, isolation, fusing); follow
local codes and licensed practice.
"""

from __future__ import annotations

import math
import re
from collections.abc import Sequence
from pathlib import Path

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
from .transient import settle_time_estimate

#: default largest time step of a reference run [s]
DEFAULT_STEP_S = 20e-6
#: default relative tolerance of a reference run (see tests/data/spice/README.md)
DEFAULT_RELTOL = 1e-4

CAUTION = ("CAUTION: this supply carries lethal voltages. A simulation says nothing about "
           "the safety of a build; follow local codes and licensed practice.")



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
    source = design.file_name if design is not None else "<unknown>"
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
        Run length [s]; default
        :func:`~supplydesign.circuit.transient.settle_time_estimate` (at least 2 s).
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


