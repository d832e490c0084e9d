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
from ..circuit.steady import periodic_steady_state
from ..evaluation.analysis import FigureArrays, Solved, figure_arrays, stack_rows
from .score import OBJECTIVES, Scores, choose_capacitors, score
from .space import KIND_WIRE, RESISTOR_AS_CHOKE_H, Decoded, SearchSpace, decode, template

IDLE_CASE = OperatingCase("idle", 1.0, "idle")
#: steps per mains period during the search (the reported designs are re-evaluated
#: with the default 512): DC within about 0.05 %, ripple 0.3 %, peak current 1-3 %
SEARCH_STEPS = 128
#: Newton iterations of a candidate's steady state in the search, in one attempt: a
#: candidate that has not settled by then counts as infeasible
SEARCH_ITERATIONS = 25


@dataclass
class PopulationResult:
    dec: Decoded
    scores: Scores
    full: FigureArrays
    idle: FigureArrays
    dec_X: np.ndarray | None = None  # the integer variables evaluated


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
    for g, row_key in enumerate(uniq):
        rows = np.flatnonzero(group.ravel() == g)
        w = tuple(bool(x) for x in row_key[1:])
        circuit = _group_circuit(space, dec, esr, rows, w)
        steady = periodic_steady_state(build_state_space(circuit), steps=steps,
                                       max_iter=SEARCH_ITERATIONS, fallback_periods=0)
        fa = figure_arrays(Solved(circuit, steady))
        m = len(rows)
        half = {k: getattr(fa, k) for k in fa.__dataclass_fields__}
        full_parts.append((rows, FigureArrays(**{k: v[:m] for k, v in half.items()})))
        idle_parts.append((rows, FigureArrays(**{k: v[m:] for k, v in half.items()})))
    full, idle = stack_rows(full_parts, n), stack_rows(idle_parts, n)
    return PopulationResult(dec, score(space, dec, caprow, full, idle), full, idle)


def make_problem(space: SearchSpace, objectives: tuple[str, ...] = OBJECTIVES,
                 steps: int = SEARCH_STEPS, pool=None, workers: int = 1):
    """The pymoo Problem: integer variables, the chosen objectives, named constraints."""
    from pymoo.core.problem import Problem

    cols = [OBJECTIVES.index(o) for o in objectives]
    xl, xu = space.bounds()
    probe = evaluate_population(space, np.zeros((1, space.n_var)), steps)

    class SupplyProblem(Problem):
        def __init__(self):
            super().__init__(n_var=space.n_var, n_obj=len(cols),
                             n_ieq_constr=probe.scores.G.shape[1], xl=xl, xu=xu, vtype=int)
            self.constraint_names = probe.scores.names
            self.history: list[PopulationResult] = []
            self.objective_columns = cols

        def _evaluate(self, X, out, *args, **kwargs):
            res = _evaluate_parallel(space, X, steps, pool, workers)
            res.dec_X = np.rint(X).astype(int)
            self.history.append(res)
            out["F"] = res.scores.F[:, self.objective_columns]
            out["G"] = res.scores.G

    return SupplyProblem()


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
