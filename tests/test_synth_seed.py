"""Starting designs, the dropper repair, canonical variables and the adaptive budget."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from supplydesign.io.designfile import load_design
from supplydesign.parts import load_catalog
from supplydesign.synth import budget, seed
from supplydesign.synth.problem import evaluate_population
from supplydesign.synth.space import KIND_CHOKE, KIND_RESISTOR, build_space, canonical, decode

SUITE = Path(__file__).parent / "data" / "suite"


@pytest.fixture(scope="module")
def catalog():
    return load_catalog()


@pytest.fixture(scope="module")
def demo(catalog):
    from importlib.resources import files

    brief = load_design(str(files("supplydesign") / "data" / "demo-brief.toml"), brief=True,
                        catalog=catalog)
    return build_space(brief, catalog)


def test_inactive_variables_never_make_two_candidates(demo):
    screens = demo.rails[1]
    X = np.zeros((3, demo.n_var), int)
    X[:, screens.var_kind] = demo.rails[1].kinds.index(KIND_CHOKE)
    X[:, screens.var_choke] = 4
    X[0, screens.var_r], X[1, screens.var_r], X[2, screens.var_r] = 0, 17, 60
    C = canonical(demo, X)
    assert (C == C[0]).all()
    # ... while an active variable still tells candidates apart
    X[:, screens.var_kind] = demo.rails[1].kinds.index(KIND_RESISTOR)
    C = canonical(demo, X)
    assert len(np.unique(C, axis=0)) == 3 and (C[:, screens.var_choke] == 0).all()


def test_the_chain_carries_every_stage_below_a_link(catalog):
    brief = load_design(SUITE / "stereo-branches.toml", brief=True, catalog=catalog)
    chain = seed.chain_of(build_space(brief, catalog))
    # plates 150, screens 14, two drivers 3 each, two preamps 1 each [mA]
    assert chain.through_a == pytest.approx([0.172, 0.022, 0.004, 0.004, 0.001, 0.001])
    assert list(chain.parent) == [-1, 0, 1, 1, 2, 3]


def test_starting_designs_seed_every_topology(demo):
    X = seed.starting_designs(demo, seed.chain_of(demo), limit=200)
    dec = decode(demo, X)
    seen = {(int(t), int(r), int(k)) for t, r, k in
            zip(dec.transformer, dec.rectifier, dec.kind[:, 1], strict=True)}
    assert len(seen) == len(demo.transformers) * len(demo.rectifiers) * 2
    assert len(np.unique(X, axis=0)) == len(X)


def test_starting_droppers_put_their_rails_near_target(demo):
    """Once the rectifier output's DC is known, the repaired droppers put every rail with
    a resistor within its tolerance, as the solver finds it."""
    chain = seed.chain_of(demo)
    X = seed.starting_designs(demo, chain, limit=200)
    first = evaluate_population(demo, X)
    known = seed.OutputDC(demo, chain)
    known.learn(X, first.dec, first.full.dc_v, first.full.converged)
    res = evaluate_population(demo, seed.repair(demo, chain, X, known))
    brief = demo.brief
    settled = res.full.converged
    assert settled.mean() > 0.9
    for i in (2, 3):  # driver and preamp: always a resistor
        rail = brief.rails[i]
        off = np.abs(res.full.dc_v[settled, i] / rail.voltage_v - 1)
        # whatever the parent's DC, unless the parent is too low for any resistor
        parent_ok = res.full.dc_v[settled, i - 1] > rail.voltage_v * (1 - rail.tolerance)
        assert np.all(off[parent_ok] <= rail.tolerance), rail.name


def test_repair_moves_only_resistors_outside_their_window(demo):
    chain = seed.chain_of(demo)
    X = seed.starting_designs(demo, chain, limit=12)
    res = evaluate_population(demo, X)
    known = seed.OutputDC(demo, chain)
    known.learn(X, res.dec, res.full.dc_v, res.full.converged)
    rail, var = demo.brief.rails[3], demo.rails[3].var_r
    band = seed.REPAIR_SHARE * rail.tolerance * rail.voltage_v

    def estimate(X):
        return seed.rail_dc_v(chain, decode(demo, X), known.estimate(X))

    # every preamp resistor set to each E24 value in turn: those whose rail lands inside
    # the window stay, the others are moved inside it
    for k in range(0, len(demo.resistor_values), 7):
        trial = X.copy()
        trial[:, var] = k
        v = estimate(trial)
        inside = np.abs(v[:, 3] - rail.voltage_v) <= band
        fixed = seed.repair(demo, chain, trial, known)
        assert (fixed[inside, var] == k).all()
        reachable = v[:, 2] - rail.voltage_v > band  # the parent is high enough
        moved = ~inside & reachable
        assert np.all(np.abs(estimate(fixed)[moved, 3] - rail.voltage_v) <= band)


def _front(*points):
    return np.array(points, dtype=float)


def test_the_budget_stops_when_the_front_stops_growing():
    b = budget.Budget()
    F = np.zeros((0, 2))
    status = None
    for gen in range(1, 60):
        # a front that improves for 15 generations, then stays put
        step = min(gen, 15)
        F = np.concatenate([F, _front([1.0 / step, 1.0], [1.0, 1.0 / step])])
        status = b.update(gen, F, np.ones(len(F), bool), elapsed_s=0.1 * gen)
        if status.done:
            break
    assert status.reason == "settled"
    assert status.generation == 15 + budget.SETTLE_WINDOW


def test_the_budget_searches_on_while_nothing_is_feasible_until_the_time_limit():
    b = budget.Budget(time_limit_s=5.0)
    F = np.ones((10, 2))
    for gen in range(1, 100):
        status = b.update(gen, F, np.zeros(10, bool), elapsed_s=0.1 * gen)
        if status.done:
            break
    assert status.reason == "time limit" and status.generation == 50
    assert "searching on" in b.update(1, F, np.zeros(10, bool), 0.0).text()


def test_a_fixed_budget_runs_its_generations():
    b = budget.Budget(generations=7)
    F = _front([1.0, 1.0])
    reasons = [b.update(g, F, np.ones(1, bool), 0.0).reason for g in range(1, 8)]
    assert reasons == [""] * 6 + ["generations"]


def test_front_gain_of_a_known_front():
    # two fronts in the unit square scaled by the present one; ref 1.1:
    # present {(0, 1), (1, 0)}: 1.1 * 0.1 * 2 + 0.1 * 0.1... computed by hand as the union of
    # the boxes [0, 1.1] x [1, 1.1] and [1, 1.1] x [0, 1.1]: 0.11 + 0.11 - 0.01 = 0.21;
    # earlier {(1, 1)}: 0.01 [derived: arithmetic]
    gain = budget.front_gain(_front([1.0, 1.0]), _front([0.0, 1.0], [1.0, 0.0]))
    assert gain == pytest.approx(1 - 0.01 / 0.21)


def test_neighbours_are_one_step_away(demo):
    x = seed.starting_designs(demo, seed.chain_of(demo), limit=1)
    near = seed.neighbours(demo, x)
    assert len(np.unique(near, axis=0)) == len(near)
    assert (canonical(demo, near) == near).all()
    screens = demo.rails[1]
    changed = near != x
    plain = ~changed[:, screens.var_kind]
    # one variable, one step; switching the screens' link kind also sets the variables of
    # the kind it leaves to 0 (canonical)
    assert (changed[plain].sum(axis=1) == 1).all()
    assert (np.abs(near - x)[plain].sum(axis=1) == 1).all()
    assert (~plain).sum() == 1


def test_objectives_are_compared_at_their_resolution():
    from supplydesign.synth.score import resolved

    F = np.array([[-3.1, 4.02, 0.50, 100.0],
                  [-3.2, 4.09, 0.502, 100.4],  # within every step of the first
                  [-3.6, 4.02, 0.50, 102.5]])  # 0.5 dB quieter, 2.5 % dearer
    R = resolved(F)
    assert (R[0] == R[1]).all()
    assert R[2, 0] < R[0, 0] and R[2, 3] > R[0, 3]
    assert len(budget.front(R)) == 2  # the two equal rows count once
