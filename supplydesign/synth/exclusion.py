"""Why a cheaper design was left out for heat and life.

The heat and life constraints of the search (a capacitor's ripple current and life
at its air temperature, a resistor's derated power, the HT winding's rms current;
:mod:`supplydesign.synth.score`) exclude designs that meet every target of the
brief. Among the candidates evaluated, the cheapest one below the cheapest
reported design that misses nothing but these is described with its figures,
so that a builder sees what the cooler, longer-lived design costs.
"""

from __future__ import annotations

import numpy as np

from ..evaluation.heatlife import findings, heat_life
from .problem import evaluate_population
from .score import choose_capacitors
from .space import SearchSpace, to_design

#: ends of the names of the constraints of heat and life
HEAT_CONSTRAINTS = ("capacitor life", "capacitor ripple current", "resistor rating",
                    "transformer rms current")


def heat_constraints(names: list[str]) -> np.ndarray:
    """Which of the named constraint columns are heat and life constraints."""
    return np.array([any(n.endswith(h) for h in HEAT_CONSTRAINTS) for n in names])


def heat_exclusion(space: SearchSpace, X: np.ndarray, G: np.ndarray, base_cost: np.ndarray,
                   base_heat_fail: np.ndarray, names: list[str], below_cost: float,
                   currency: str | None) -> dict | None:
    """The cheapest design under ``below_cost`` left out for heat and life alone.

    A candidate is such a design when it meets every other constraint and either
    misses a heat or life constraint, or met them only with dearer capacitors than
    the cheapest for their voltage (the search chooses those after the solve): its
    design with the cheapest capacitors is then the one left out.

    Parameters
    ----------
    space : SearchSpace
    X, G : numpy.ndarray
        Every candidate evaluated: variables and constraints (columns named by ``names``).
    base_cost, base_heat_fail : numpy.ndarray
        Each candidate's cost with the cheapest capacitors for their voltage, and whether
        those miss a heat or life constraint (:class:`~supplydesign.synth.score.Scores`).
    below_cost : float
        The cost of the cheapest design reported.

    Returns
    -------
    dict or None
        ``{"cost", "notation", "design", "text": [...]}``: the design left out, its
        cost, and the lines saying why (the warnings of
        :func:`supplydesign.evaluation.heatlife.findings` of the design solved again);
        None when the search evaluated no such design.
    """
    heat = heat_constraints(names)
    if not heat.any() or len(X) == 0:
        return None
    left_out = (np.all(G[:, ~heat] <= 0.0, axis=1)
                & (np.any(G[:, heat] > 0.0, axis=1) | base_heat_fail)
                & (base_cost < below_cost - 0.005))
    if not left_out.any():
        return None
    j = int(np.flatnonzero(left_out)[np.argmin(base_cost[left_out])])
    res = evaluate_population(space, X[j:j + 1])
    solved, _ = choose_capacitors(space, res.dec)  # the parts it was solved with
    design = to_design(space, res.dec, 0, {"capacitor": solved,
                                           "resistor_class": res.scores.resistor_class})
    hl = heat_life([design], res.full)
    from .run import notation

    text = [t for level, t in findings(design, hl, 0) if level == "warning"]
    cur = f" {currency}" if currency else ""
    head = (f"A cheaper design, {base_cost[j]:.2f}{cur} ({notation(design)}, "
            f"{design.transformer.part or 'transformer'} / "
            f"{design.rectifier.part or design.rectifier.kind}), meets every target of the "
            "brief but not the heat and life rules:")
    return {"cost": float(base_cost[j]), "notation": notation(design), "design": design,
            "text": [head, *text]}
