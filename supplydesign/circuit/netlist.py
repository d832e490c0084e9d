"""From designs to a batched element netlist.

The rectifier arrangement, the transformer winding and the filter tree are all
expressed as *data*: a list of two-terminal elements between named nodes, the
same for every design of a batch (the topology), with one array of values per
element parameter (one entry per design). The state-space builder, the SPICE
writer and the figures all read this one description, so a rectifier
arrangement is never coded twice.

Element kinds (current flows from node ``a`` to node ``b`` through the element):

===== ==================================================================
``R``  resistor; param ``r`` [ohm] (``inf`` = open)
``C``  capacitor; param ``c`` [F]
``L``  choke: inductance ``l`` [H] in series with its DC resistance ``r`` [ohm]
``W``  winding half: sine emf of peak ``emf`` [V] and phase ``phase`` [rad]
       (raising the potential from a to b), in series with ``r`` [ohm]; its
       leakage inductance, when given, is a separate ``L`` element
``J``  constant current ``i`` [A] from a to b (a stage drawing current)
``D``  rectifier junction (a = anode): the only nonlinear element; valve
       (Child-Langmuir, param ``k`` [A/V^1.5]) or silicon (Shockley, params
       ``isat`` [A] and ``nvt`` [V])
===== ==================================================================

Two tiny elements make the network regular without changing any figure
measurably (the same ones go into the SPICE netlist, so both simulators solve
the same circuit): a capacitance ``JUNCTION_CAPACITANCE`` and conductance
``JUNCTION_CONDUCTANCE`` across every rectifier junction, and a capacitance
``NODE_CAPACITANCE`` to ground at nodes that would otherwise have no capacitive
path to ground (the node between rectifier and choke of a choke-input filter).

A leakage inductance carries a damping resistance in parallel,
``LEAKAGE_DAMPING * sqrt(l / JUNCTION_CAPACITANCE)``: without it the leakage and
the junction capacitance ring at hundreds of kHz with almost no damping, a
resonance no mains-frequency time step can follow. The parallel resistance
(kilohms) turns it into two fast real decays and takes a current of
L·(di/dt)/R_p, about a milliampere in an ampere pulse.

A choke fed straight from the rectifier (a choke input) carries one too,
``CHOKE_DAMPING * sqrt(l / JUNCTION_CAPACITANCE)``, for the same reason: once its
current falls to zero in a cycle (below the critical inductance) the choke rings
with the junction capacitances at kilohertz, the troughs switch the rectifier on
for a step at a time, and no steady state settles. Real chokes do not ring so: the
iron's losses at kilohertz appear as a resistance across the winding (common
practice in modelling iron-cored inductors). The parallel resistance leaves the
ringing a Q of 4, so it dies within a few cycles. At the ripple frequency it
(0.4 MΩ·sqrt(L/H): 0.4 MΩ at 1 H, 2.2 MΩ at 30 H, against ωL of kilohms) changes
the choke's impedance by well under 1 % (0.2 % on the ripple of a 10 H choke
alone into 3150 Ω), its DC not measurably.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np

from ..design import Design

GROUND = "0"

#: capacitance across each rectifier junction [F] (a few pF to 100 pF is typical
#: of real diodes and valve anode-cathode capacitance)
JUNCTION_CAPACITANCE = 100e-12
#: conductance across each rectifier junction [S] (keeps an off junction defined)
JUNCTION_CONDUCTANCE = 1e-9
#: smallest source resistance modelled [ohm]: every real winding has more, and below
#: it the time constant with the junction capacitance (1e-16 s at 1 µΩ) is too stiff
#: for the exact discretisation to keep its accuracy
MIN_SOURCE_RESISTANCE = 1e-3
#: damping of the leakage inductance, relative to sqrt(l / JUNCTION_CAPACITANCE)
LEAKAGE_DAMPING = 0.5
#: damping of a choke-input choke, relative to sqrt(l / JUNCTION_CAPACITANCE): the Q
#: it leaves the choke's ringing with the junction capacitance
CHOKE_DAMPING = 4.0
#: capacitance to ground at nodes without another capacitive path to ground [F]
NODE_CAPACITANCE = 1e-9

#: thermal voltage kT/q at 27 degC [V] (Shockley 1949; 300.15 K)
THERMAL_VOLTAGE_27C = 1.380649e-23 * 300.15 / 1.602176634e-19


@dataclass(frozen=True)
class Element:
    kind: str  # R C L W J D
    name: str  # unique, SPICE-friendly
    a: str  # node names; GROUND is "0"
    b: str
    role: tuple = ()  # what it is in the design: ("link", i), ("cap", i), ("esr", i), ...
    phase: float = 0.0  # W only: emf phase [rad], part of the topology


@dataclass(frozen=True)
class Topology:
    """Structure shared by every design of a batch."""

    elements: tuple[Element, ...]
    nodes: tuple[str, ...]  # non-ground nodes, in a fixed order
    law: str  # "valve" or "silicon": the junction law of every D element
    rail_nodes: tuple[str, ...]  # node of each rail, in design order
    rail_names: tuple[str, ...]
    rectifier_node: str  # the rectifier output (cathode side) node
    arrangement: str
    winding: str

    def of_kind(self, kind: str) -> list[Element]:
        return [e for e in self.elements if e.kind == kind]

    def by_role(self, *role) -> Element | None:
        for e in self.elements:
            if e.role == tuple(role):
                return e
        return None


@dataclass
class Circuit:
    """A batch of B designs sharing one topology.

    ``values[element_name][param]`` is an array of shape (B,).
    ``frequency_hz`` has shape (B,).
    """

    topology: Topology
    values: dict[str, dict[str, np.ndarray]]
    frequency_hz: np.ndarray
    designs: tuple[Design, ...] = field(default=())

    @property
    def size(self) -> int:
        return int(self.frequency_hz.shape[0])

    def value(self, name: str, param: str) -> np.ndarray:
        return self.values[name][param]

    def subset(self, index) -> Circuit:
        """The designs selected by ``index`` (a boolean mask or an index array)."""
        idx = np.asarray(index)
        vals = {n: {p: v[idx] for p, v in d.items()} for n, d in self.values.items()}
        designs = tuple(np.asarray(self.designs, dtype=object)[idx]) if self.designs else ()
        return Circuit(self.topology, vals, self.frequency_hz[idx], designs)


# --------------------------------------------------------------------------- building


def signature(design: Design) -> tuple:
    """What must be equal for two designs to share a batch (a hashable tuple)."""
    rails = []
    for r in design.rails:
        cap = r.capacitor
        rails.append((
            r.parent,
            r.link.kind,
            None if cap is None else (cap.esr_ohm > 0),
            r.load_resistance_ohm is not None,
            r.bleeder_ohm is not None,
        ))
    rect = design.rectifier
    return (
        design.transformer.winding,
        rect.arrangement,
        rect.kind,
        rect.kind == "silicon" and rect.series_resistance_ohm > 0,
        design.transformer.leakage_h > 0,
        tuple(rails),
    )


@dataclass(frozen=True)
class OperatingCase:
    """How a design is operated: mains factor and which load current the stages draw.

    ``load`` is "full" (``current``), "idle" (``idle_current``) or "none" (valves cold:
    no stage draws anything, resistive loads open).
    """

    name: str = "nominal"
    mains_factor: float = 1.0
    load: str = "full"


NOMINAL = OperatingCase()


def rails_on_output(design: Design) -> list:
    """The rails wired straight to the rectifier output (a chain of wire links from
    the first rail), in file order."""
    at_out: list[bool] = []
    for r in design.rails:
        parent_at_out = r.parent is None or at_out[design.rail_index(r.parent)]
        at_out.append(parent_at_out and r.link.kind == "wire")
    return [r for r, a in zip(design.rails, at_out, strict=True) if a]


def topology_of(design: Design) -> Topology:
    tr, rect = design.transformer, design.rectifier
    winding, arrangement = tr.winding, rect.arrangement
    elements: list[Element] = []
    out = "rect"

    def junction(k: int, anode: str, cathode: str) -> None:
        if rect.kind == "silicon" and rect.series_resistance_ohm > 0:
            j = f"j{k}"
            elements.append(Element("D", f"d{k}", anode, j, ("diode", k)))
            elements.append(Element("R", f"rd{k}", j, cathode, ("diode_r", k)))
            across_b = j
        else:
            elements.append(Element("D", f"d{k}", anode, cathode, ("diode", k)))
            across_b = cathode
        elements.append(Element("C", f"cj{k}", anode, across_b, ("junction_c", k)))
        elements.append(Element("R", f"rj{k}", anode, across_b, ("junction_g", k)))

    def add_winding(k: int, a: str, b: str, phase: float) -> None:
        if tr.leakage_h > 0:
            m = f"m{k}"
            elements.append(Element("W", f"w{k}", a, m, ("winding", k), phase=phase))
            elements.append(Element("L", f"ls{k}", m, b, ("leakage", k)))
            elements.append(Element("R", f"rs{k}", m, b, ("leakage_damping", k)))
        else:
            elements.append(Element("W", f"w{k}", a, b, ("winding", k), phase=phase))

    if arrangement == "full-wave":
        # center-tapped: two halves in antiphase, the tap at ground
        add_winding(1, GROUND, "a1", 0.0)
        add_winding(2, GROUND, "a2", np.pi)
        junction(1, "a1", out)
        junction(2, "a2", out)
    elif arrangement == "half-wave":
        add_winding(1, GROUND, "a1", 0.0)
        junction(1, "a1", out)
    elif arrangement == "bridge":
        # single winding from node b1 to node a1; four junctions
        add_winding(1, "b1", "a1", 0.0)
        junction(1, "a1", out)
        junction(2, "b1", out)
        junction(3, GROUND, "a1")
        junction(4, GROUND, "b1")
    else:  # validated earlier; kept as a guard for programmatic use
        raise ValueError(f"unknown arrangement {arrangement!r}")

    # a choke input: no rail puts a capacitor straight on the rectifier output
    choke_input = not any(r.capacitor is not None for r in rails_on_output(design))

    rail_nodes: list[str] = []
    for i, r in enumerate(design.rails):
        parent_node = out if r.parent is None else rail_nodes[design.rail_index(r.parent)]
        kind = r.link.kind
        if kind == "wire":
            node = parent_node
        else:
            node = f"n{i + 1}"
            if kind == "resistor":
                elements.append(Element("R", f"rl{i + 1}", parent_node, node, ("link", i)))
            elif kind == "choke":
                elements.append(Element("L", f"l{i + 1}", parent_node, node, ("link", i)))
                if parent_node == out and choke_input:
                    elements.append(Element("R", f"rp{i + 1}", parent_node, node,
                                            ("choke_damping", i)))
            else:
                raise ValueError(f"rail {r.name!r}: link {kind!r} is not a built part")
        rail_nodes.append(node)
        cap = r.capacitor
        if cap is not None:
            if cap.esr_ohm > 0:
                inner = f"e{i + 1}"
                elements.append(Element("R", f"re{i + 1}", node, inner, ("esr", i)))
                elements.append(Element("C", f"c{i + 1}", inner, GROUND, ("cap", i)))
            else:
                elements.append(Element("C", f"c{i + 1}", node, GROUND, ("cap", i)))
        if r.bleeder_ohm is not None:
            elements.append(Element("R", f"rb{i + 1}", node, GROUND, ("bleeder", i)))
        if r.load_resistance_ohm is not None:
            elements.append(Element("R", f"rload{i + 1}", node, GROUND, ("load", i)))
        else:
            elements.append(Element("J", f"i{i + 1}", node, GROUND, ("load", i)))

    nodes: list[str] = []
    for e in elements:
        for n in (e.a, e.b):
            if n != GROUND and n not in nodes:
                nodes.append(n)

    _add_node_capacitances(elements, nodes, [out, *rail_nodes])

    return Topology(
        elements=tuple(elements),
        nodes=tuple(nodes),
        law=rect.kind,
        rail_nodes=tuple(rail_nodes),
        rail_names=tuple(r.name for r in design.rails),
        rectifier_node=out,
        arrangement=arrangement,
        winding=winding,
    )


def _spread(elements: list[Element], reached: set[str], kinds: set[str]) -> None:
    """Grow ``reached`` along elements of ``kinds`` until nothing changes."""
    changed = True
    while changed:
        changed = False
        for e in elements:
            if e.kind in kinds and (e.a in reached) != (e.b in reached):
                reached.update((e.a, e.b))
                changed = True


def _add_node_capacitances(elements: list[Element], nodes: list[str],
                           preferred: list[str]) -> None:
    """Add ``NODE_CAPACITANCE`` to ground where the network would be singular.

    A node touched by capacitors must reach ground through capacitors (else the
    capacitor voltages of its group float); a node touched by none is solved
    algebraically and must reach ground or a capacitor node through resistances.
    """
    order = [n for n in preferred if n in nodes] + [n for n in nodes if n not in preferred]
    touched = {n for e in elements if e.kind == "C" for n in (e.a, e.b)} - {GROUND}
    grounded = {GROUND}
    _spread(elements, grounded, {"C"})
    for n in order:
        if n in touched and n not in grounded:
            elements.append(Element("C", f"cp_{n}", n, GROUND, ("node_c", n)))
            grounded.add(n)
            _spread(elements, grounded, {"C"})
    resistive = {"R", "W"}
    anchored = grounded | touched | {GROUND}
    _spread(elements, anchored, resistive)
    for n in order:
        if n not in anchored:
            elements.append(Element("C", f"cp_{n}", n, GROUND, ("node_c", n)))
            anchored.add(n)
            _spread(elements, anchored, resistive)


def element_values(design: Design, topo: Topology, case: OperatingCase) -> dict[str, dict]:
    tr, rect = design.transformer, design.rectifier
    vals: dict[str, dict[str, float]] = {}
    amp = math.sqrt(2.0) * tr.open_circuit_v * case.mains_factor
    for e in topo.elements:
        role = e.role
        if e.kind == "W":
            vals[e.name] = {"emf": amp, "r": max(tr.resistance_ohm, MIN_SOURCE_RESISTANCE)}
        elif role[0] == "leakage":
            vals[e.name] = {"l": tr.leakage_h, "r": 0.0}
        elif role[0] == "leakage_damping":
            vals[e.name] = {"r": LEAKAGE_DAMPING * math.sqrt(tr.leakage_h / JUNCTION_CAPACITANCE)}
        elif role[0] == "diode":
            if rect.kind == "valve":
                vals[e.name] = {"k": rect.perveance}
            else:
                vals[e.name] = {"isat": rect.saturation_current_a,
                                "nvt": rect.emission * THERMAL_VOLTAGE_27C}
        elif role[0] == "diode_r":
            vals[e.name] = {"r": rect.series_resistance_ohm}
        elif role[0] == "junction_c":
            vals[e.name] = {"c": JUNCTION_CAPACITANCE}
        elif role[0] == "junction_g":
            vals[e.name] = {"r": 1.0 / JUNCTION_CONDUCTANCE}
        elif role[0] == "node_c":
            vals[e.name] = {"c": NODE_CAPACITANCE}
        elif role[0] == "choke_damping":
            l_h = design.rails[role[1]].link.inductance_h
            vals[e.name] = {"r": CHOKE_DAMPING * math.sqrt(l_h / JUNCTION_CAPACITANCE)}
        else:
            rail = design.rails[role[1]]
            if role[0] == "link":
                if e.kind == "R":
                    vals[e.name] = {"r": rail.link.resistance_ohm}
                else:
                    vals[e.name] = {"l": rail.link.inductance_h, "r": rail.link.resistance_ohm}
            elif role[0] == "esr":
                vals[e.name] = {"r": rail.capacitor.esr_ohm}
            elif role[0] == "bleeder":  # draws current also with the valves cold
                vals[e.name] = {"r": rail.bleeder_ohm}
            elif role[0] == "cap":
                vals[e.name] = {"c": rail.capacitor.capacitance_f}
            elif role[0] == "load":
                if e.kind == "R":
                    cold = case.load == "none"
                    vals[e.name] = {"r": math.inf if cold else rail.load_resistance_ohm}
                else:
                    loads = {"full": rail.current_a, "idle": rail.idle_a, "none": 0.0}
                    vals[e.name] = {"i": loads[case.load]}
            else:  # pragma: no cover - every role is listed above
                raise AssertionError(role)
    return vals


def build(designs: Sequence[Design], case: OperatingCase = NOMINAL) -> Circuit:
    """Build the batched circuit of ``designs`` (all of one :func:`signature`)."""
    if not designs:
        raise ValueError("no designs")
    sig = signature(designs[0])
    for d in designs[1:]:
        if signature(d) != sig:
            raise ValueError("designs of one batch must share a topology; use group_by_topology")
    topo = topology_of(designs[0])
    per = [element_values(d, topo, case) for d in designs]
    values = {
        name: {p: np.array([v[name][p] for v in per], dtype=float) for p in per[0][name]}
        for name in per[0]
    }
    freq = np.array([d.mains.frequency_hz for d in designs], dtype=float)
    return Circuit(topo, values, freq, tuple(designs))


def with_load(circuit: Circuit, load: str) -> Circuit:
    """``circuit`` (built by :func:`build`) with its stages drawing as in ``load``
    ("full", "idle" or "none", as :class:`OperatingCase`): the load elements' values
    worked out again, every other value shared."""
    values = dict(circuit.values)
    for e in circuit.topology.elements:
        if e.role and e.role[0] == "load":
            rails = [d.rails[e.role[1]] for d in circuit.designs]
            if e.kind == "R":
                r = [math.inf if load == "none" else rail.load_resistance_ohm for rail in rails]
                values[e.name] = {"r": np.array(r, dtype=float)}
            else:
                pick = {"full": lambda rail: rail.current_a, "idle": lambda rail: rail.idle_a,
                        "none": lambda rail: 0.0}[load]
                values[e.name] = {"i": np.array([pick(rail) for rail in rails], dtype=float)}
    return Circuit(circuit.topology, values, circuit.frequency_hz, circuit.designs)


#: most steps per mains period a fast charging loop gets (see steps_needed)
MAX_STEPS_PER_PERIOD = 8192


def charging_time_constant_s(design: Design) -> float:
    """Time constant of the loop that charges a capacitor input's reservoir [s].

    ``(R_winding + R_rectifier + ESR) · C`` over the capacitors straight on the
    rectifier output, or ``sqrt(L_leakage · C)`` when that is longer (the leakage
    then shapes the pulse; circuit theory). R_rectifier is the silicon series
    resistance, or for a valve its slope resistance at the drop point, (2/3)·V/I
    on the 3/2-power law; a bridge has two in the path. ``inf`` for a choke input,
    whose choke smooths the pulse.
    """
    caps = [r.capacitor for r in rails_on_output(design) if r.capacitor is not None]
    if not caps:
        return np.inf
    c_f = sum(c.capacitance_f for c in caps)
    esr = min(c.esr_ohm for c in caps)
    rect = design.rectifier
    if rect.kind == "valve":
        r_rect = 2.0 / 3.0 * rect.drop_v / rect.drop_current_a
    else:
        r_rect = rect.series_resistance_ohm
    if rect.arrangement == "bridge":
        r_rect *= 2.0
    r_loop = max(design.transformer.resistance_ohm, MIN_SOURCE_RESISTANCE) + r_rect + esr
    return max(r_loop * c_f, np.sqrt(design.transformer.leakage_h * c_f))


def steps_needed(design: Design, steps_min: int) -> int:
    """Steps per mains period for ``design``: ``steps_min``, doubled until one step is
    no longer than the charging time constant (:func:`charging_time_constant_s`), at
    most ``MAX_STEPS_PER_PERIOD``.

    The junction currents are linear within a step; a charging pulse much shorter
    than a step (a small reservoir on a stiff winding) is then smeared and its peak
    overstated (17 % at 4.6 time constants per step, 0.02 % at one: the ngspice
    test circuit si_hw_small_reservoir_choke).
    """
    tau = charging_time_constant_s(design)
    steps = steps_min
    while steps < MAX_STEPS_PER_PERIOD and 1.0 / (design.mains.frequency_hz * steps) > tau:
        steps *= 2
    return max(steps, steps_min)


def solving_groups(designs: Sequence[Design], steps_min: int) -> list[tuple[list[int], int]]:
    """Indices of ``designs`` grouped by topology and by :func:`steps_needed`, with the
    steps of each group, groups in order of first appearance."""
    groups: dict[tuple, list[int]] = {}
    steps_of: dict[tuple, int] = {}
    for i, d in enumerate(designs):
        n = steps_needed(d, steps_min)
        key = (signature(d), n)
        groups.setdefault(key, []).append(i)
        steps_of[key] = n
    return [(idx, steps_of[key]) for key, idx in groups.items()]


def group_by_topology(designs: Sequence[Design]) -> list[list[int]]:
    """Indices of ``designs`` grouped by topology, groups in order of first appearance."""
    groups: dict[tuple, list[int]] = {}
    for i, d in enumerate(designs):
        groups.setdefault(signature(d), []).append(i)
    return list(groups.values())
