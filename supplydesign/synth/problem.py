"""Whole populations through the batched evaluator, and the pymoo problem around it.

A population is split by search topology (rectifier law, winding, which rails
have a wire), never per candidate: within one topology every candidate's
transformer, rectifier, links and capacitors are just different values of the
same arrays. Each topology runs as one batch holding every candidate twice, at
full-signal and at idle current.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..circuit.netlist import (
    NOMINAL,
    Circuit,
    OperatingCase,
    element_values,
    signature,
    topology_of,
)
from ..circuit.statespace import build_state_space
from ..circuit.steady import periodic_steady_states
from ..evaluation.analysis import FigureArrays, Solved, figure_arrays, stack_rows
from .score import OBJECTIVES, Scores, choose_capacitors, resolved, score
from .space import (
    KIND_WIRE,
    RESISTOR_AS_CHOKE_H,
    Decoded,
    SearchSpace,
    canonical,
    decode,
    template,
)

IDLE_CASE = OperatingCase("idle", 1.0, "idle")
#: steps per mains period during the search (the reported designs are re-evaluated
#: with the default 512): DC within about 0.05 %, ripple 0.3 %, peak current 1-3 %
SEARCH_STEPS = 128
#: Newton iterations of a candidate's steady state in the search, in one attempt (a large
#: choke input takes about 26 from the initial guess): a
#: candidate that has not settled by then counts as infeasible
SEARCH_ITERATIONS = 40


@dataclass
class PopulationResult:
    dec: Decoded
    scores: Scores
    full: FigureArrays
    idle: FigureArrays


def _group_circuit(space: SearchSpace, dec: Decoded, esr: np.ndarray, rows: np.ndarray,
                   wires: tuple[bool, ...]) -> Circuit:
    """One batch: rows at full load followed by the same rows at idle current."""
    t0, r0 = int(dec.transformer[rows[0]]), int(dec.rectifier[rows[0]])
    topo = topology_of(template(space, t0, r0, wires))
    m = len(rows)
    values = {e.name: {} for e in topo.elements}
    # values of transformer, rectifier and loads: from the netlist's own rules, for
    # each (transformer, rectifier, case) that occurs
    pairs = {(int(dec.transformer[j]), int(dec.rectifier[j])) for j in rows}
    for case_no, case in enumerate((NOMINAL, IDLE_CASE)):
        for t, r in pairs:
            base = element_values(template(space, t, r, wires), topo, case)
            sel = np.flatnonzero((dec.transformer[rows] == t) & (dec.rectifier[rows] == r))
            sel = sel + case_no * m
            for name, params in base.items():
                for p, v in params.items():
                    values[name].setdefault(p, np.zeros(2 * m))[sel] = v
    # the searched links and capacitors
    for i, rs in enumerate(space.rails):
        if rs.fixed_link is None and not wires[i]:
            link = topo.by_role("link", i)
            ind = dec.inductance[rows, i]
            values[link.name]["l"] = np.tile(np.where(ind > 0, ind, RESISTOR_AS_CHOKE_H), 2)
            values[link.name]["r"] = np.tile(dec.resistance[rows, i], 2)
        if rs.cap_open:
            values[topo.by_role("cap", i).name]["c"] = np.tile(dec.capacitance[rows, i], 2)
            values[topo.by_role("esr", i).name]["r"] = np.tile(esr[rows, i], 2)
    freq = np.full(2 * m, float(space.brief.mains.frequency_hz))
    return Circuit(topo, values, freq, ())


def evaluate_population(space: SearchSpace, X: np.ndarray,
                        steps: int = SEARCH_STEPS) -> PopulationResult:
    """Decode, choose capacitor parts, solve every candidate at full and idle load, score."""
    dec = decode(space, X)
    caprow, esr = choose_capacitors(space, dec)
    n = dec.n
    wires = dec.kind == KIND_WIRE
    # group by search topology: the (transformer, rectifier) pair's netlist signature
    # and which rails have a wire, as one integer matrix (no loop over candidates)
    sig_ids: dict[tuple, int] = {}
    pair_sig = np.zeros((len(space.transformers), len(space.rectifiers)), dtype=int)
    for t in range(len(space.transformers)):
        for r in range(len(space.rectifiers)):
            sig = signature(template(space, t, r, (False,) * len(space.rails)))
            pair_sig[t, r] = sig_ids.setdefault(sig, len(sig_ids))
    key = np.column_stack([pair_sig[dec.transformer, dec.rectifier], wires.astype(int)])
    uniq, group = np.unique(key, axis=0, return_inverse=True)
    full_parts, idle_parts = [], []
    members = [np.flatnonzero(group.ravel() == g) for g in range(len(uniq))]
    circuits = [_group_circuit(space, dec, esr, rows, tuple(bool(x) for x in row_key[1:]))
                for rows, row_key in zip(members, uniq, strict=True)]
    # every search topology in one call: those of one junction law and arrangement are
    # stepped as one batch
    steadies = periodic_steady_states([build_state_space(c) for c in circuits], steps=steps,
                                      max_iter=SEARCH_ITERATIONS, fallback_periods=0)
    for rows, circuit, steady in zip(members, circuits, steadies, strict=True):
        fa = figure_arrays(Solved(circuit, steady))
        m = len(rows)
        half = {k: getattr(fa, k) for k in fa.__dataclass_fields__}
        full_parts.append((rows, FigureArrays(**{k: v[:m] for k, v in half.items()})))
        idle_parts.append((rows, FigureArrays(**{k: v[m:] for k, v in half.items()})))
    full, idle = stack_rows(full_parts, n), stack_rows(idle_parts, n)
    return PopulationResult(dec, score(space, dec, caprow, full, idle), full, idle)


class Evaluated:
    """Every candidate a run has evaluated, once each: its canonical variables, its
    objectives (all of ``OBJECTIVES``), its named constraints and reported columns.

    Rows are kept in the order they were first evaluated; :meth:`find` looks rows
    up without a loop over candidates (rows compared as raw bytes).
    """

    def __init__(self, n_var: int, names: list[str]):
        self.names = list(names)
        self.X = np.zeros((0, n_var), dtype=np.int64)
        self.F = np.zeros((0, len(OBJECTIVES)))
        self.G = np.zeros((0, len(names)))
        self.columns: dict[str, np.ndarray] = {}
        # each candidate with the capacitors it was solved with (the cheapest for their
        # voltage): its cost, and whether those parts miss a heat or life rule
        self.base_cost = np.zeros(0)
        self.base_heat_fail = np.zeros(0, dtype=bool)
        self._sorted = np.zeros(0, dtype=np.dtype((np.void, 8 * n_var)))
        self._order = np.zeros(0, dtype=int)

    def __len__(self) -> int:
        return len(self.X)

    def _keys(self, X: np.ndarray) -> np.ndarray:
        X = np.ascontiguousarray(np.asarray(X, dtype=np.int64))
        return X.view(self._sorted.dtype).ravel()

    def find(self, X: np.ndarray) -> np.ndarray:
        """Row of each candidate in the archive, -1 where it was never evaluated."""
        if len(self._sorted) == 0 or len(X) == 0:
            return np.full(len(X), -1)
        keys = self._keys(X)
        at = np.minimum(np.searchsorted(self._sorted, keys), len(self._sorted) - 1)
        return np.where(self._sorted[at] == keys, self._order[at], -1)

    def add(self, X: np.ndarray, scores: Scores) -> None:
        """Append new candidates (not evaluated before, each once) with their scores."""
        self.X = np.concatenate([self.X, np.asarray(X, dtype=np.int64)])
        self.F = np.concatenate([self.F, scores.F])
        self.G = np.concatenate([self.G, scores.G])
        for k, v in scores.columns.items():
            self.columns[k] = np.concatenate([self.columns.get(k, np.zeros(0)), v])
        self.base_cost = np.concatenate([self.base_cost, scores.base_cost])
        self.base_heat_fail = np.concatenate([self.base_heat_fail, scores.base_heat_fail])
        keys = self._keys(self.X)
        self._order = np.argsort(keys, kind="stable")
        self._sorted = keys[self._order]

    @property
    def feasible(self) -> np.ndarray:
        return np.all(self.G <= 0.0, axis=1)


def make_problem(space: SearchSpace, objectives: tuple[str, ...] = OBJECTIVES,
                 steps: int = SEARCH_STEPS, pool=None, workers: int = 1):
    """The pymoo Problem: integer variables, the chosen objectives, named constraints.

    The problem keeps every candidate it evaluated (``problem.evaluated``, an
    :class:`Evaluated`), solves each distinct candidate once, and learns the
    rectifier output's DC of each kind of candidate (``problem.output``) for the
    dropping-resistor repair (:func:`supplydesign.synth.seed.repair`).
    """
    from pymoo.core.problem import Problem

    from .seed import OutputDC, chain_of

    cols = [OBJECTIVES.index(o) for o in objectives]
    xl, xu = space.bounds()
    probe = evaluate_population(space, np.zeros((1, space.n_var)), steps)

    class SupplyProblem(Problem):
        def __init__(self):
            super().__init__(n_var=space.n_var, n_obj=len(cols),
                             n_ieq_constr=probe.scores.G.shape[1], xl=xl, xu=xu, vtype=int)
            self.space = space
            self.chain = chain_of(space)
            self.output = OutputDC(space, self.chain)
            self.constraint_names = probe.scores.names
            self.evaluated = Evaluated(space.n_var, probe.scores.names)
            self.objective_columns = cols
            self.objectives = tuple(objectives)

        def evaluate_rows(self, X: np.ndarray) -> np.ndarray:
            """Rows of ``self.evaluated`` for canonical candidates X, solving the new ones."""
            X = np.asarray(X, dtype=np.int64)
            at = self.evaluated.find(X)
            new = np.flatnonzero(at < 0)
            if len(new):
                _, first = np.unique(X[new], axis=0, return_index=True)
                new = new[np.sort(first)]
                res = _evaluate_parallel(space, X[new], steps, pool, workers)
                self.output.learn(X[new], res.dec, res.full.dc_v, res.full.converged)
                self.evaluated.add(X[new], res.scores)
                at = self.evaluated.find(X)
            return at

        def _evaluate(self, X, out, *args, **kwargs):
            at = self.evaluate_rows(canonical(space, X))
            out["F"] = resolved(self.evaluated.F[at][:, self.objective_columns],
                                self.objectives)
            out["G"] = self.evaluated.G[at]

    return SupplyProblem()


def make_repair():
    """The pymoo repair operator: canonical variables, droppers moved onto their DC
    targets (:func:`supplydesign.synth.seed.repair`), with what the problem has learnt."""
    from pymoo.core.repair import Repair

    from .seed import repair

    class DropperRepair(Repair):
        def _do(self, problem, X, **kwargs):
            return repair(problem.space, problem.chain, X, problem.output)

    return DropperRepair()


def _evaluate_parallel(space, X, steps, pool, workers) -> PopulationResult:
    if pool is None or workers <= 1 or len(X) < 2 * workers:
        return evaluate_population(space, X, steps)
    chunks = np.array_split(np.arange(len(X)), workers)
    results = list(pool.map(_worker_eval, [(X[c], steps) for c in chunks]))
    dec = decode(space, X)
    full = stack_rows([(c, r.full) for c, r in zip(chunks, results, strict=True)], len(X))
    idle = stack_rows([(c, r.idle) for c, r in zip(chunks, results, strict=True)], len(X))
    caprow, _ = choose_capacitors(space, dec)
    return PopulationResult(dec, score(space, dec, caprow, full, idle), full, idle)


_WORKER_SPACE: SearchSpace | None = None


def init_worker(space: SearchSpace) -> None:
    """Process-pool initialiser: every worker keeps its own copy of the space."""
    global _WORKER_SPACE
    _WORKER_SPACE = space


def _worker_eval(args):
    X, steps = args
    return evaluate_population(_WORKER_SPACE, X, steps)
