"""How long a search runs: until its feasible front settles, or a fixed budget.

The default search (no ``generations`` given) stops when the front of feasible
designs found so far has stopped improving: its hypervolume (objectives scaled
between the present front's best and worst values, reference point 1.1 in
each) has grown by less than ``SETTLE_SHARE`` over the last ``SETTLE_WINDOW``
generations, and at least ``MIN_GENERATIONS`` have run. While nothing feasible
has been found it keeps going. A time cap stops it in any case; a search
stopped by the cap depends on the machine's speed, and says so. A fixed budget
(``generations``, or ``evaluations`` from the API) runs exactly that long,
capped only by a time limit given explicitly.

The test only reads the archive of evaluated candidates, so two runs with the
same seed stop at the same generation (unless the time cap stops one).

References
----------
.. [1] E. Zitzler, L. Thiele, "Multiobjective evolutionary algorithms: a
   comparative case study and the strength Pareto approach", IEEE Trans. Evol.
   Comput. 3(4), 257-271 (1999) (the hypervolume indicator).
.. [2] T. Wagner, H. Trautmann, B. Naujoks, "OCD: online convergence detection
   for evolutionary multi-objective algorithms based on statistical testing",
   EMO 2009, LNCS 5467, 198-215 (stopping on a stagnating indicator; from memory).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

#: generations over which the front's gain is measured
SETTLE_WINDOW = 8
#: the default search stops when the front's hypervolume grew by less than this share
#: over the window
SETTLE_SHARE = 0.002
#: generations (the starting population counts as the first) before it may stop
MIN_GENERATIONS = 12
#: time cap of the default search [s]
TIME_LIMIT_S = 45.0


def nondominated(F: np.ndarray) -> np.ndarray:
    """Indices of the non-dominated rows of F (minimisation)."""
    from pymoo.util.nds.non_dominated_sorting import NonDominatedSorting

    if len(F) == 0:
        return np.array([], dtype=int)
    return NonDominatedSorting().do(F, only_non_dominated_front=True)


def front(F: np.ndarray) -> np.ndarray:
    """Indices of the front of F (already at the search's resolution): the non-dominated
    rows, one row for each objective vector that several share (the first)."""
    nd = nondominated(F)
    if len(nd) == 0:
        return nd
    _, first = np.unique(F[nd], axis=0, return_index=True)
    return np.sort(nd[first])


def front_gain(then: np.ndarray, now: np.ndarray) -> float:
    """Share of the present front's hypervolume that the earlier front lacks.

    Both fronts are scaled between the present front's best and worst value of
    each objective (an objective the same for every design scales to 0) and
    measured against the reference point 1.1 in every objective.
    """
    from moocore import hypervolume

    if len(now) == 0:
        return 1.0
    ideal, nadir = now.min(axis=0), now.max(axis=0)
    span = np.where(nadir > ideal, nadir - ideal, 1.0)
    ref = np.full(now.shape[1], 1.1)
    hv_now = float(hypervolume((now - ideal) / span, ref=ref))
    if len(then) == 0 or hv_now <= 0.0:
        return 1.0
    hv_then = float(hypervolume(np.minimum((then - ideal) / span, 1.1), ref=ref))
    return max(0.0, 1.0 - hv_then / hv_now)


@dataclass
class Status:
    """Where a search stands after a generation, for the progress display."""

    generation: int
    evaluations: int
    elapsed_s: float
    feasible: int  # feasible candidates found so far
    front: int  # size of their non-dominated front
    gain: float | None  # front's hypervolume gain over the window (adaptive search)
    best: np.ndarray | None  # best value of each objective among feasible candidates
    fixed: int | None  # the fixed number of generations, if any
    time_limit_s: float | None
    reason: str = ""  # why the search stopped; "" while it runs

    @property
    def done(self) -> bool:
        return bool(self.reason)

    def fraction(self) -> float | None:
        """Share of the budget used: the generations of a fixed budget, else the time
        cap; None when there is neither."""
        if self.fixed:
            return min(self.generation / self.fixed, 1.0)
        if self.time_limit_s:
            return min(self.elapsed_s / self.time_limit_s, 1.0)
        return None

    def text(self) -> str:
        """One line saying what the search is doing."""
        found = (f"{self.front} on the front of {self.feasible} feasible" if self.feasible
                 else "no candidate meets the brief yet")
        if self.fixed:
            return f"generation {self.generation} of {self.fixed} (fixed); {found}"
        if not self.feasible:
            cap = f" (time limit {self.time_limit_s:.0f} s)" if self.time_limit_s else ""
            return f"generation {self.generation}: {found}, searching on{cap}"
        if self.gain is None:
            return f"generation {self.generation}: {found}; front still forming"
        return (f"generation {self.generation}: {found}; front grew {100 * self.gain:.1f} % "
                f"in {SETTLE_WINDOW} generations (stops below {100 * SETTLE_SHARE:.1f} %)")

    def summary(self) -> str:
        """One line on how the search ended, for the report."""
        g = self.generation
        if self.reason == "settled":
            return (f"stopped after {g} generations: the front grew less than "
                    f"{100 * SETTLE_SHARE:.1f} % in the last {SETTLE_WINDOW}")
        if self.reason == "generations":
            return f"ran the fixed budget of {g} generations"
        if self.reason == "evaluations":
            return f"ran the fixed budget of {self.evaluations} evaluations ({g} generations)"
        if self.reason == "exhausted":
            return f"stopped after {g} generations: no new candidate left to try"
        if self.reason == "time limit":
            return (f"stopped at the time limit ({self.time_limit_s:g} s) after {g} "
                    "generations; the result depends on the machine's speed (give "
                    "--generations for a fixed budget)")
        return f"{self.reason} after {g} generations"


class Budget:
    """Decides after each generation whether the search goes on.

    Parameters
    ----------
    generations : int, optional
        A fixed number of generations; None for the adaptive stop.
    time_limit_s : float, optional
        Time cap [s]; None: ``TIME_LIMIT_S`` for the adaptive search, none for a
        fixed budget.
    evaluations : int, optional
        A fixed number of distinct candidates to evaluate (the API's budget).
    """

    def __init__(self, generations: int | None = None, time_limit_s: float | None = None,
                 evaluations: int | None = None):
        self.generations = generations
        self.evaluations = evaluations
        fixed = generations is not None or evaluations is not None
        self.time_limit_s = time_limit_s if (time_limit_s or fixed) else TIME_LIMIT_S
        self.front = np.zeros((0, 0))
        self.front_rows = np.zeros(0, dtype=int)  # rows of the archive on the front
        self.history: list[np.ndarray] = []
        self.seen = 0
        self.feasible = 0

    def update(self, generation: int, F: np.ndarray, feasible: np.ndarray,
               elapsed_s: float) -> Status:
        """The status after ``generation`` from the archive's objectives (only the
        searched ones, at the search's resolution) and feasibility, all rows so far."""
        new = self.seen + np.flatnonzero(feasible[self.seen:])
        self.seen = len(F)
        self.feasible += len(new)
        if len(new):
            rows = np.concatenate([self.front_rows, new])
            self.front_rows = rows[front(F[rows])]
            self.front = F[self.front_rows]
        self.history.append(self.front)
        gain = None
        if self.feasible and len(self.history) > SETTLE_WINDOW:
            gain = front_gain(self.history[-1 - SETTLE_WINDOW], self.front)
        status = Status(generation, len(F), elapsed_s, self.feasible, len(self.front), gain,
                        self.front.min(axis=0) if len(self.front) else None,
                        self.generations, self.time_limit_s)
        if self.generations is not None and generation >= self.generations:
            status.reason = "generations"
        elif self.evaluations is not None and len(F) >= self.evaluations:
            status.reason = "evaluations"
        elif (self.generations is None and self.evaluations is None and gain is not None
              and generation >= MIN_GENERATIONS and gain < SETTLE_SHARE):
            status.reason = "settled"
        elif self.time_limit_s is not None and elapsed_s >= self.time_limit_s:
            status.reason = "time limit"
        return status
