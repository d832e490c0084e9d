"""Operating cases at the limits of the mains: steady states of whole batches.

Each design carries its own mains limits (``[mains] low/high``), so a case is
named by *which* limit it takes (``"nominal"``, ``"high"``, ``"low"``) and
which load the stages draw (``"full"``, ``"idle"``, ``"none"``: valves cold).
The circuit of a case is built as in :mod:`supplydesign.circuit.netlist`, with
each design's winding emfs scaled by its own mains factor.

With no load the periodic steady state is nearly singular (the rectifier
conducts for an instant per cycle, to replace what the junction conductances
leak), and the default starting guess of a choke-input filter (the mean of the
rectified sine) is far from it (the crest). The no-load case therefore starts
Newton from every capacitor at the crest. A choke input without load may still
not converge (the choke rings with the stray capacitances between the brief
conduction instants); :mod:`supplydesign.evaluation.worstcase` then bounds its figures.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from ..circuit.netlist import Circuit, OperatingCase, build, solving_groups, with_load
from ..circuit.statespace import build_state_space
from ..circuit.steady import (
    STEPS_PER_PERIOD,
    WarmStart,
    initial_guess,
    periodic_steady_states,
)
from ..design import Design
from .analysis import FigureArrays, Solved, figure_arrays, figures_from_arrays
from .figures import Figures


@dataclass(frozen=True)
class Case:
    """An operating case: which mains limit and which stage load."""

    name: str
    mains: str  # "nominal", "high" or "low"
    load: str  # "full", "idle" or "none"


#: Newton iterations at most without load (see solve_circuit)
NO_LOAD_ITERATIONS = 20

NOMINAL = Case("nominal", "nominal", "full")
IDLE = Case("idle", "nominal", "idle")
HIGH_MAINS_NO_LOAD = Case("high_mains_no_load", "high", "none")
HIGH_MAINS_IDLE = Case("high_mains_idle", "high", "idle")
LOW_MAINS_FULL_LOAD = Case("low_mains_full_load", "low", "full")
#: the heaviest running load on the windings, for fuses
HIGH_MAINS_FULL_LOAD = Case("high_mains_full_load", "high", "full")
#: the cases of the shared contract's "cases" object, in its order
WORST_CASES = (HIGH_MAINS_NO_LOAD, HIGH_MAINS_IDLE, LOW_MAINS_FULL_LOAD)


def mains_factors(designs: Sequence[Design], mains: str) -> np.ndarray:
    """Each design's open-circuit voltage factor at a mains limit, shape (B,)."""
    if mains == "nominal":
        return np.ones(len(designs))
    if mains == "high":
        return np.array([1.0 + d.mains.high for d in designs])
    if mains == "low":
        return np.array([1.0 - d.mains.low for d in designs])
    raise ValueError(f"unknown mains limit {mains!r}")


def case_circuit(designs: Sequence[Design], case: Case, base: Circuit | None = None) -> Circuit:
    """The batched circuit of designs of one topology in ``case``; from ``base``, the
    same designs' circuit at nominal mains, when given (only the loads and the winding
    emfs differ)."""
    if base is None:
        circuit = build(list(designs), OperatingCase(case.name, 1.0, case.load))
    else:
        circuit = with_load(base, case.load)
    factor = mains_factors(designs, case.mains)
    for e in circuit.topology.of_kind("W"):
        circuit.values[e.name] = {**circuit.values[e.name],
                                  "emf": circuit.values[e.name]["emf"] * factor}
    return circuit


def crest_guess(circuit: Circuit, ss=None) -> np.ndarray:
    """A no-load starting state: the DC estimate, scaled so that its highest node
    voltage is the crest of the emf. Shape (B, nx)."""
    ss = build_state_space(circuit) if ss is None else ss
    x0 = initial_guess(ss)
    top = np.max(x0[:, : ss.n_dynamic_nodes], axis=1)
    emf = np.max(np.stack([circuit.value(e.name, "emf")
                           for e in circuit.topology.of_kind("W")]), axis=0)
    scale = np.where(top > 0, emf / np.where(top > 0, top, 1.0), 1.0)
    return x0 * scale[:, None]


def solve_circuit(circuit: Circuit, steps: int = STEPS_PER_PERIOD,
                  x0: np.ndarray | None = None) -> Solved:
    """Periodic steady state of a built circuit (crest start when no stage draws).

    Without load Newton gets NO_LOAD_ITERATIONS at most: where it has not
    converged by then it rarely does later, and the caller bounds the figures.
    """
    return solve_circuits([circuit], [steps], [x0])[0]


def solve_circuits(circuits: Sequence[Circuit], steps: Sequence[int],
                   x0s: Sequence[np.ndarray | None] | None = None,
                   near: Sequence[WarmStart | None] | None = None) -> list[Solved]:
    """:func:`solve_circuit` of several circuits (any topologies), solved together as far
    as :func:`~supplydesign.circuit.steady.periodic_steady_states` can; ``near`` as
    there."""
    x0s = [None] * len(circuits) if x0s is None else list(x0s)
    near = [None] * len(circuits) if near is None else list(near)
    models = [build_state_space(c) for c in circuits]
    out: list = [None] * len(circuits)
    for cold in (False, True):
        which = [i for i, c in enumerate(circuits) if _no_load(c) == cold]
        if not which:
            continue
        starts = [x0s[i] if x0s[i] is not None or near[i] is not None or not cold
                  else crest_guess(circuits[i], models[i]) for i in which]
        iterations = {"max_iter": NO_LOAD_ITERATIONS} if cold else {}
        steadies = periodic_steady_states([models[i] for i in which], [steps[i] for i in which],
                                          x0s=starts, near=[near[i] for i in which],
                                          **iterations)
        for i, st in zip(which, steadies, strict=True):
            out[i] = Solved(circuits[i], st)
    return out


def _no_load(circuit: Circuit) -> bool:
    for e in circuit.topology.elements:
        if e.role and e.role[0] == "load":
            p = "i" if e.kind == "J" else "r"
            idle = circuit.value(e.name, p)
            if np.any(idle != (0.0 if p == "i" else np.inf)):
                return False
    return True


@dataclass
class Batch:
    """Designs ``idx`` (indices into the caller's list) of one topology in one case,
    held as rows ``rows`` of a solved batch that may carry other cases too."""

    idx: list[int]
    solved: Solved
    rows: np.ndarray

    @property
    def circuit(self) -> Circuit:
        return self.solved.circuit.subset(self.rows)

    @property
    def converged(self) -> np.ndarray:
        return self.solved.steady.converged[self.rows]

    def node_v(self, node: str) -> np.ndarray:
        """Voltage of ``node`` over the period [V], (K+1, len(idx))."""
        return self.solved.node_v(node)[:, self.rows]


@dataclass
class CaseResult:
    """One case for designs of any topologies: figure arrays in design order, and the
    solved batches for reading waveforms."""

    case: Case
    arrays: FigureArrays
    batches: list[Batch]

    def figures(self) -> list[Figures]:
        """The figures of every design as :class:`~supplydesign.evaluation.figures.Figures`."""
        out: list = [None] * len(self.arrays.converged)
        for b in self.batches:
            idx = np.asarray(b.idx)
            R = len(b.solved.circuit.topology.rail_names)
            arrays = FigureArrays(**{k: getattr(self.arrays, k)[idx][:, :R] if
                                     getattr(self.arrays, k).ndim == 2 else
                                     getattr(self.arrays, k)[idx]
                                     for k in FigureArrays.__dataclass_fields__})
            every = figures_from_arrays(arrays, [b.solved.circuit.designs[r] for r in b.rows],
                                        b.solved.circuit.topology.rail_names, self.case.name)
            for i, fig in zip(b.idx, every, strict=True):
                out[i] = fig
        return out


def concatenate(circuits: Sequence[Circuit]) -> Circuit:
    """One batch of several circuits of one topology, in order."""
    first = circuits[0]
    values = {name: {p: np.concatenate([c.values[name][p] for c in circuits])
                     for p in params} for name, params in first.values.items()}
    return Circuit(first.topology, values,
                   np.concatenate([c.frequency_hz for c in circuits]),
                   tuple(d for c in circuits for d in c.designs))


def solve_cases(designs: Sequence[Design], cases: Sequence[Case],
                steps: int = STEPS_PER_PERIOD,
                adjust=None) -> dict[str, CaseResult]:
    """Steady state of every design in every case, per topology.

    The first case is solved first; every other case of a design starts from it (its
    final state, node voltages scaled by the ratio of the mains factors, and its
    monodromy matrix: see :meth:`~supplydesign.circuit.steady.SteadyState.warm_start`),
    all of them as one batch per topology.

    ``adjust(case, circuit)``, when given, may change a case's circuit values in
    place before the solve (such as loads scaled for a slope).
    """
    parts: dict[str, list] = {c.name: [] for c in cases}
    groups = solving_groups(designs, steps)
    per_case = []
    for idx, _n_steps in groups:
        sub = [designs[i] for i in idx]
        circuits = []
        base = build(sub)
        for c in cases:
            circuit = case_circuit(sub, c, base)
            if adjust is not None:
                adjust(c, circuit)
            circuits.append(circuit)
        per_case.append(circuits)
    n_steps = [n for _, n in groups]
    leads = solve_circuits([cs[0] for cs in per_case], n_steps)
    solved_rest = [None] * len(groups)
    if len(cases) > 1:
        starts = []
        for (idx, _), lead in zip(groups, leads, strict=True):
            sub = [designs[i] for i in idx]
            first = mains_factors(sub, cases[0].mains)
            parts_of = [lead.steady.warm_start(np.arange(len(idx)),
                                               mains_factors(sub, c.mains) / first)
                        for c in cases[1:]]
            starts.append(WarmStart(*(np.concatenate(a) for a in zip(*parts_of, strict=True))))
        solved_rest = solve_circuits([concatenate(cs[1:]) for cs in per_case], n_steps,
                                     near=starts)
    for (idx, _n_steps), lead, rest in zip(groups, leads, solved_rest, strict=True):
        n = len(idx)
        arrays = figure_arrays(lead)
        parts[cases[0].name].append((Batch(idx, lead, np.arange(n)), arrays))
        if rest is None:
            continue
        arrays = figure_arrays(rest)
        for k, c in enumerate(cases[1:]):
            rows = np.arange(k * n, (k + 1) * n)
            parts[c.name].append((Batch(idx, rest, rows), _rows(arrays, rows)))
    return {c.name: CaseResult(c, _stack(parts[c.name], len(designs)),
                               [b for b, _ in parts[c.name]]) for c in cases}


def solve_case(designs: Sequence[Design], case: Case,
               steps: int = STEPS_PER_PERIOD) -> CaseResult:
    """Steady state of every design in ``case``, one batch per topology."""
    return solve_cases(designs, [case], steps)[case.name]


def _rows(arrays: FigureArrays, rows: np.ndarray) -> FigureArrays:
    return FigureArrays(**{k: getattr(arrays, k)[rows] for k in FigureArrays.__dataclass_fields__})


def _stack(parts: list[tuple[Batch, FigureArrays]], n: int) -> FigureArrays:
    """Figure arrays of several batches in design order; per-rail arrays padded with
    NaN to the largest rail count."""
    out = {}
    for name in FigureArrays.__dataclass_fields__:
        refs = [getattr(fa, name) for _, fa in parts]
        width = max(r.shape[1:] for r in refs)
        fill = np.nan if refs[0].dtype.kind == "f" else 0
        arr = np.full((n, *width), fill, dtype=refs[0].dtype)
        for (b, _), ref in zip(parts, refs, strict=True):
            arr[(np.asarray(b.idx), *(slice(0, k) for k in ref.shape[1:]))] = ref
        out[name] = arr
    return FigureArrays(**out)


def node_dc(result: CaseResult, node_of) -> np.ndarray:
    """Mean voltage over the period of one node per design, (B,); ``node_of(topology)``
    names the node."""
    from .analysis import detrended, mean

    out = np.full(len(result.arrays.converged), np.nan)
    for b in result.batches:
        out[np.asarray(b.idx)] = mean(detrended(b.node_v(node_of(b.solved.circuit.topology))))
    return out
