"""The synthesis runner: search, verification, Pareto set, picks, comparison.

Reads like pymoo: a search space from the brief, a problem that evaluates whole
populations, an algorithm (NSGA-II on integer variables) and a termination,
joined by one ``minimize`` call. Every candidate ever evaluated is kept; the
feasible non-dominated ones are re-evaluated with the accurate evaluator (the
same path as ``evaluate``), and only those that still meet every constraint are
reported.

References
----------
.. [1] K. Deb, A. Pratap, S. Agarwal, T. Meyarivan, "A fast and elitist
   multiobjective genetic algorithm: NSGA-II", IEEE Trans. Evol. Comput. 6(2),
   182-197 (2002).
.. [2] J. Blank, K. Deb, "pymoo: Multi-objective optimization in Python", IEEE
   Access 8, 89497-89509 (2020).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..circuit.netlist import OperatingCase
from ..design import Design
from ..evaluation.analysis import FigureArrays, evaluate_arrays
from ..io.tomlwrite import readable
from .budget import front as _front
from .score import OBJECTIVES, Scores, choose_capacitors, resolved, score
from .space import (
    KIND_CHOKE,
    KIND_RESISTOR,
    SearchSpace,
    build_space,
    canonical,
    decode,
    rows_in,
    to_design,
)

IDLE = OperatingCase("idle", 1.0, "idle")


@dataclass
class SynthOptions:
    """How a search runs.

    ``generations`` None (the default) stops when the feasible front settles
    (:mod:`supplydesign.synth.budget`), within ``time_limit_s`` (default
    ``budget.TIME_LIMIT_S``); a number of generations, or of distinct candidates
    (``evaluations``), is a fixed budget, capped only by a time limit given here.
    """

    seed: int = 1
    pop_size: int = 96
    generations: int | None = None
    workers: int = 1
    objectives: tuple[str, ...] = OBJECTIVES
    verify_steps: int = 512
    time_limit_s: float | None = None
    evaluations: int | None = None


@dataclass
class Candidate:
    """One reported design with its verified figures."""

    design: Design
    objectives: dict[str, float]
    cost: float
    feasible: bool
    notation: str  # the trade's notation of the filter, e.g. "CRC" or "CLCRCRC"
    chokes: int
    resistor_heat_w: float
    choke_mass_kg: float
    margins: dict[str, float]  # constraint name -> value (<= 0 met)
    full: dict  # per rail arrays of the verified full-load figures (dc_v, ripple_rms_v, ...)
    regulation: list[float]
    columns: dict[str, float] = field(default_factory=dict)  # score.COLUMNS -> value


@dataclass
class SynthResult:
    brief: Design
    designs: list[Candidate]  # verified Pareto set, cheapest first
    picks: dict[str, tuple[int, str]]  # pick name -> (index into designs, why)
    comparison: dict | None  # choke against resistor
    explanation: list[str]  # why nothing was feasible (empty when designs exist)
    evaluations: int = 0
    generations: int = 0
    currency: str | None = None
    objectives: tuple[str, ...] = OBJECTIVES
    archive_feasible: int = 0
    extra: dict = field(default_factory=dict)
    # the cheapest candidate left out for heat and life alone (synth.exclusion), or None
    heat_exclusion: dict | None = None


def notation(design: Design) -> str:
    """The trade's notation of the filter along its main chain: C for a capacitor,
    R a resistor, L a choke (branches are listed after a '+')."""
    out = []
    for r in design.rails:
        link = {"resistor": "R", "choke": "L"}.get(r.link.kind, "")
        out.append(link + ("C" if r.capacitor is not None else ""))
    return "".join(out)


def _verify(space: SearchSpace, X: np.ndarray, steps: int):
    """Re-evaluate rows with the accurate evaluator through real Design objects.

    The resistor power classes do not change the circuit, so the designs are solved
    with a placeholder class, then scored, then rebuilt with the classes chosen from
    the verified dissipation. Each design is taken as its file will hold it (every
    value to the file's significant figures, :func:`~supplydesign.io.tomlwrite.readable`),
    so the reported figures are those of the written file."""
    dec = decode(space, X)
    caprow, _ = choose_capacitors(space, dec)
    cls = np.full(caprow.shape, int(np.argmax(space.resistor_classes["power_w"])))

    def solve(rows, caps):
        designs = [readable(to_design(space, dec, j, {"capacitor": caps,
                                                      "resistor_class": cls})) for j in rows]
        return evaluate_arrays(designs, steps=steps), evaluate_arrays(designs, IDLE, steps=steps)

    full, idle = solve(range(len(X)), caprow)
    # score() may choose another capacitor for the ripple current found (its rating or
    # life at the air temperature); such rows are solved again with it, twice at most
    for _ in range(2):
        chosen = score(space, dec, caprow, full, idle).capacitor
        again = np.flatnonzero(np.any(chosen != caprow, axis=1))
        if not again.size:
            break
        caprow = chosen
        sub_full, sub_idle = solve(again, caprow)
        for whole, part in ((full, sub_full), (idle, sub_idle)):
            for name in whole.__dataclass_fields__:
                getattr(whole, name)[again] = getattr(part, name)
    verified = score(space, dec, caprow, full, idle, choose=False)
    designs = [readable(to_design(space, dec, j, verified.parts())) for j in range(len(X))]
    return dec, verified, designs, full, idle


def _candidate(space, dec, sc: Scores, j: int, design: Design, full: FigureArrays,
               idle: FigureArrays, objectives) -> Candidate:
    kinds = dec.kind[j]
    chokes = int(np.sum(kinds == KIND_CHOKE))
    heat = float(np.sum(np.where(kinds == KIND_RESISTOR, full.link_power_w[j], 0.0)))
    mass = 0.0
    if "mass_kg" in space.chokes:
        rows = dec.choke[j][kinds == KIND_CHOKE]
        mass = float(np.nansum(space.chokes["mass_kg"][rows])) if len(rows) else 0.0
    reg = list(100.0 * (idle.dc_v[j] - full.dc_v[j]) / full.dc_v[j])
    return Candidate(
        design=design,
        objectives={o: float(sc.F[j, OBJECTIVES.index(o)]) for o in OBJECTIVES},
        cost=float(sc.cost[j]), feasible=bool(sc.feasible[j]), notation=notation(design),
        chokes=chokes, resistor_heat_w=heat, choke_mass_kg=mass,
        margins=dict(zip(sc.names, map(float, sc.G[j]), strict=True)),
        full={"dc_v": full.dc_v[j].tolist(), "ripple_rms_v": full.ripple_rms_v[j].tolist(),
              "ripple_pp_v": full.ripple_pp_v[j].tolist(), "peak_a": float(full.rect_peak_a[j]),
              "link_power_w": full.link_power_w[j].tolist()},
        regulation=reg, columns={k: float(v[j]) for k, v in sc.columns.items()})


def _picks(cands: list[Candidate]) -> dict[str, tuple[int, str]]:
    if not cands:
        return {}
    F = np.array([[c.objectives[o] for o in OBJECTIVES] for c in cands])
    cost, hum, reg = F[:, 3], F[:, 0], F[:, 1]
    picks = {}
    i = int(np.argmin(cost))
    picks["cheapest"] = (i, f"lowest parts cost of the set ({cost[i]:.2f})")
    i = int(np.argmin(hum))
    picks["quietest"] = (i, f"least hum over all rails ({hum[i]:+.1f} dB summed against "
                            f"the allowances; worst rail "
                            f"{cands[i].columns['hum_margin_db']:.1f} dB below its own)")
    i = int(np.argmin(reg))
    picks["stiffest"] = (i, f"smallest idle-to-full DC change ({reg[i]:.1f} %)")
    span = np.ptp(F, axis=0)
    norm = (F - F.min(axis=0)) / np.where(span > 0, span, 1.0)
    i = int(np.argmin(np.linalg.norm(norm, axis=1)))
    picks["balanced"] = (i, "closest to the best of every objective at once "
                            "(objectives scaled to the set's range)")
    return picks


def _comparison(cands: list[Candidate]) -> dict | None:
    """Best all-resistor design against the best with chokes at comparable hum."""
    resistive = [c for c in cands if c.chokes == 0 and "R" in c.notation]
    choked = [c for c in cands if c.chokes > 0]
    if not resistive or not choked:
        return None
    r = min(resistive, key=lambda c: c.cost)
    comparable = [c for c in choked if c.objectives["hum_db"] <= r.objectives["hum_db"] + 1.0]
    ch = min(comparable or choked, key=lambda c: (c.cost if comparable else
                                                 c.objectives["hum_db"]))
    return {"resistor": r, "choke": ch, "comparable_hum": bool(comparable)}


def synthesize(brief: Design, catalog, options: SynthOptions | None = None,
               progress=None) -> SynthResult:
    """Search ``brief`` for its Pareto set of buildable designs (see module docstring).

    ``progress(status)`` is called after every generation with a
    :class:`supplydesign.synth.budget.Status` (what the search is doing, the best
    value of each searched objective among feasible candidates so far, or None).
    """
    from .explain import explain
    from .problem import init_worker

    opt = options or SynthOptions()
    space = build_space(brief, catalog)
    cols = [OBJECTIVES.index(o) for o in opt.objectives]
    pool = None
    if opt.workers > 1 and space.n_var > 0:
        import multiprocessing as mp
        from concurrent.futures import ProcessPoolExecutor

        pool = ProcessPoolExecutor(opt.workers, mp_context=mp.get_context("fork"),
                                   initializer=init_worker, initargs=(space,))
    try:
        if space.n_var == 0:
            X_all = np.zeros((1, 0), dtype=int)
            F_all, G_all = np.zeros((1, len(OBJECTIVES))), np.zeros((1, 1))
            status = None
        else:
            problem, status = _search(space, opt, cols, pool, progress)
            ev = problem.evaluated
            X_all, F_all, G_all = ev.X, ev.F, ev.G
    finally:
        if pool is not None:
            pool.shutdown()
    feasible = np.all(G_all <= 0, axis=1)
    result = SynthResult(brief=brief, designs=[], picks={}, comparison=None, explanation=[],
                         evaluations=len(X_all), generations=status.generation if status else 0,
                         currency=space.currency, objectives=opt.objectives,
                         archive_feasible=int(feasible.sum()),
                         extra={"interrupted": bool(status and status.reason == "interrupted"),
                                "stopped": status.summary() if status else "",
                                "stop_reason": status.reason if status else ""})
    if not feasible.any() and space.n_var > 0:
        result.explanation = explain(space, X_all, F_all, G_all)
        return result
    rows = np.flatnonzero(feasible) if space.n_var > 0 else np.array([0])
    front = rows[_front(resolved(F_all[rows][:, cols], opt.objectives))]
    # the choke-against-resistor comparison wants the best of both kinds, on the front
    # or not: add the cheapest feasible all-resistor and with-choke candidates
    extra = _best_of_kinds(space, X_all, F_all, rows)
    chosen = np.unique(np.concatenate([front, extra]))
    dec, sc, designs, full, idle = _verify(space, X_all[chosen], opt.verify_steps)
    cands = [_candidate(space, dec, sc, j, designs[j], full, idle, opt.objectives)
             for j in range(len(chosen))]
    ok = _worst_case_check([c for c in cands if c.feasible], opt.verify_steps)
    if not ok:
        result.explanation = ["Candidates met the brief in the fast search but none held "
                              "when re-evaluated accurately; try a larger search."]
        return result
    Fv = np.array([[c.objectives[o] for o in opt.objectives] for c in ok])
    front_v = set(_front(resolved(Fv, opt.objectives)).tolist())
    on_front = [c for k, c in enumerate(ok) if k in front_v]
    on_front.sort(key=lambda c: c.cost)
    result.designs = on_front
    result.extra["X"] = [X_all[chosen][k] for k, c in enumerate(cands)
                         if c.feasible and any(c is d for d in on_front)]
    result.picks = _picks(on_front)
    result.comparison = _comparison(ok)
    if space.n_var > 0:
        from .exclusion import heat_exclusion

        ev = problem.evaluated
        result.heat_exclusion = heat_exclusion(space, ev.X, ev.G, ev.base_cost,
                                               ev.base_heat_fail, ev.names, on_front[0].cost,
                                               space.currency)
    return result


def _search(space: SearchSpace, opt: SynthOptions, cols: list[int], pool, progress):
    """NSGA-II from constructive starting designs, generation by generation (pymoo's
    ask and tell), until the budget says stop. Returns the problem (whose archive
    holds every candidate evaluated) and the last status."""
    import time

    from pymoo.algorithms.moo.nsga2 import NSGA2
    from pymoo.core.termination import NoTermination
    from pymoo.operators.crossover.sbx import SBX
    from pymoo.operators.mutation.pm import PM
    from pymoo.operators.repair.rounding import RoundingRepair

    from .budget import Budget
    from .problem import make_problem, make_repair
    from .seed import starting_designs

    start = time.perf_counter()
    problem = make_problem(space, opt.objectives, pool=pool, workers=opt.workers)
    budget = Budget(opt.generations, opt.time_limit_s, opt.evaluations)
    # starting designs of every topology, solved once so that the repair learns the
    # rectifier output's DC of each, then offered (repaired) with random ones
    seeds = starting_designs(space, problem.chain, limit=2 * opt.pop_size)
    problem.evaluate_rows(seeds)
    rng = np.random.default_rng(opt.seed)
    _, xu = space.bounds()
    fill = max(opt.pop_size - len(seeds), opt.pop_size // 4)
    randoms = rng.integers(0, xu.astype(int) + 1, size=(fill, space.n_var))
    algorithm = NSGA2(
        pop_size=opt.pop_size, sampling=np.concatenate([seeds, randoms]),
        crossover=SBX(prob=0.9, eta=15, vtype=float, repair=RoundingRepair()),
        mutation=PM(eta=20, vtype=float, repair=RoundingRepair()),
        repair=make_repair(), eliminate_duplicates=True)
    algorithm.setup(problem, termination=NoTermination(), seed=opt.seed, verbose=False)
    problem.objective_columns = cols
    ev = problem.evaluated
    generation = 0

    def update(reason: str = ""):
        status = budget.update(generation, resolved(ev.F[:, cols], opt.objectives),
                               ev.feasible, time.perf_counter() - start)
        status.reason = reason or status.reason
        return status

    try:
        while True:
            pop = algorithm.ask()
            if pop is None or len(pop) == 0:  # every offspring was evaluated before
                status = update("exhausted")
                break
            _move_near_front(problem, pop, budget.front_rows, rng)
            algorithm.evaluator.eval(problem, pop, algorithm=algorithm)
            algorithm.tell(infills=pop)
            generation += 1
            status = update()
            if progress is not None:
                progress(status)
            if status.done:
                break
    except KeyboardInterrupt:  # keep what was found so far
        if len(ev) == 0:
            raise
        status = update("interrupted")
    return problem, status


#: share of each generation's offspring taken one step from the feasible front (the rest
#: come from NSGA-II's crossover and mutation)
LOCAL_SHARE = 0.25


def _move_near_front(problem, pop, front_rows: np.ndarray, rng) -> None:
    """Replace up to LOCAL_SHARE of the offspring by untried candidates one step from
    the feasible front (:func:`supplydesign.synth.seed.neighbours`, repaired), drawn at
    random. Before anything is feasible the offspring stay as they are."""
    from .seed import neighbours, repair

    if len(front_rows) == 0:
        return
    space = problem.space
    near = neighbours(space, problem.evaluated.X[front_rows])
    near = near[problem.evaluated.find(near) < 0]
    want = int(LOCAL_SHARE * len(pop))
    if len(near) > 4 * want:  # a random few, before the (costlier) repair
        near = near[np.sort(rng.choice(len(near), size=4 * want, replace=False))]
    near = repair(space, problem.chain, near, problem.output)
    offspring = canonical(space, pop.get("X"))
    keep = (problem.evaluated.find(near) < 0) & ~rows_in(near, offspring)
    near = np.unique(near[keep], axis=0)
    k = min(len(near), want)
    if k == 0:
        return
    X = offspring.copy()
    X[len(X) - k:] = near[rng.choice(len(near), size=k, replace=False)]
    pop.set("X", X)


def _worst_case_check(cands: list[Candidate], steps: int) -> list[Candidate]:
    """Reject choke-input candidates whose worst cases exceed a rating: capacitor voltage
    in any steady case or at switch-on (a lightly loaded choke input overshoots the
    crest), the rectifier's switch-on surge and its peak current in any case.

    A capacitor input needs no transient for this: its capacitors never rise above
    the no-load crest and its surge is the crest over the source resistance, both
    already constraints of the search (:mod:`supplydesign.synth.score`)."""
    chokes = [c for c in cands if c.design.rails[0].link.kind == "choke"]
    if not chokes:
        return cands
    from ..evaluation.stress import constraints
    from ..evaluation.worstcase import analyse

    cons = constraints(analyse([c.design for c in chokes], steps=steps))
    for k, c in enumerate(chokes):
        for name, values in cons.items():
            v = float(values[k])
            if np.isfinite(v):
                c.margins[f"worst case {name.replace('_', ' ')}"] = v
                c.feasible = c.feasible and v <= 0.0
    return [c for c in cands if c.feasible]


def _best_of_kinds(space: SearchSpace, X: np.ndarray, F: np.ndarray,
                   rows: np.ndarray) -> np.ndarray:
    if len(rows) == 0 or space.n_var == 0:
        return np.array([], dtype=int)
    dec = decode(space, X[rows])
    has_choke = np.any(dec.kind == KIND_CHOKE, axis=1)
    cost = F[rows, OBJECTIVES.index("cost")]
    out = []
    for mask in (has_choke, ~has_choke):
        if mask.any():
            out.append(rows[mask][np.argmin(cost[mask])])
    return np.array(out, dtype=int)
