"""The suite of test briefs (tests/data/suite): each is feasible, proved by a hand design
that ``evaluate`` shows meets it; together they cover the cases the search must handle;
and the search never reports two designs identical in every part.

The briefs and hand designs are invented scenarios (demo catalog parts), used here only
as inputs, never as check values of the physics. The full acceptance run of the search
on this suite (default budget, ten times the evaluations) is a benchmark:
``python3 benchmarks/synth_front.py``.
"""

from __future__ import annotations

import itertools
import json
from pathlib import Path

import numpy as np
import pytest

from supplydesign.cli import main
from supplydesign.io.designfile import load_design
from supplydesign.io.tomlwrite import dump_design
from supplydesign.parts import load_catalog
from supplydesign.synth.problem import evaluate_population
from supplydesign.synth.run import SynthOptions, _verify, synthesize
from supplydesign.synth.space import KIND_RESISTOR, build_space

SUITE = Path(__file__).parent / "data" / "suite"
BRIEFS = sorted(p for p in SUITE.glob("*.toml") if not p.name.endswith(".hand.toml"))
IDS = [p.stem for p in BRIEFS]


@pytest.fixture(scope="module")
def catalog():
    return load_catalog()


def test_the_suite_covers_every_case(catalog):
    seen = set()
    for path in BRIEFS:
        brief = load_design(path, brief=True, catalog=catalog)
        space = build_space(brief, catalog)
        rects = space.rectifiers
        seen |= {r.kind for r in rects} | {r.arrangement for r in rects}
        seen.add(f"{brief.mains.frequency_hz:g} Hz")
        seen.add(len(brief.rails))
        first = brief.rails[0].link
        seen.add("choke input" if first.kind == "choke" else "capacitor input")
        if any(r.parent not in (None, brief.rails[i - 1].name) for i, r in
               enumerate(brief.rails) if i):
            seen.add("branches")
        if brief.transformer.choose:
            seen.add("transformer choice")
        if brief.rectifier.choose:
            seen.add("rectifier choice")
        if any(r.kind == "valve" and (r.max_reservoir_f or 1.0) <= 20e-6 for r in rects):
            seen.add("tight valve reservoir")
    wanted = {"valve", "silicon", "full-wave", "bridge", "half-wave", "50 Hz", "60 Hz", 2, 7,
              "choke input", "capacitor input", "branches", "transformer choice",
              "rectifier choice", "tight valve reservoir"}
    assert len(BRIEFS) >= 8
    assert wanted <= seen, wanted - seen


TRANSFORMER_FIELDS = ("winding", "open_circuit_v", "resistance_ohm", "leakage_h",
                      "rated_current_a")
RECTIFIER_FIELDS = ("kind", "arrangement", "drop_v", "drop_current_a", "saturation_current_a",
                    "emission", "series_resistance_ohm", "max_peak_current_a", "max_reservoir_f",
                    "max_surge_current_a", "min_source_resistance_ohm")


def _same(a, b, fields) -> bool:
    return all(getattr(a, f) == getattr(b, f) for f in fields)


def _instance_of(design, brief, space) -> None:
    """The hand design is one of the brief's candidates: its choices are allowed, all
    else is the brief's."""
    assert design.mains == brief.mains
    assert any(_same(design.transformer, t, TRANSFORMER_FIELDS) for t in space.transformers)
    assert any(_same(design.rectifier, r, RECTIFIER_FIELDS) for r in space.rectifiers)
    assert len(design.rails) == len(brief.rails)
    for r, b in zip(design.rails, brief.rails, strict=True):
        assert (r.name, r.parent, r.current_a, r.idle_a, r.voltage_v, r.tolerance, r.hum_v) \
            == (b.name, b.parent, b.current_a, b.idle_a, b.voltage_v, b.tolerance, b.hum_v)
        allowed = b.link.among if b.link.kind == "choose" else (b.link.kind,)
        assert r.link.kind in allowed, r.name
        if not b.link.is_open:
            assert r.link == b.link
        assert (r.capacitor is None) == (b.capacitor is None)


@pytest.mark.parametrize("path", BRIEFS, ids=IDS)
def test_a_hand_design_meets_the_brief(path, catalog, tmp_path):
    brief = load_design(path, brief=True, catalog=catalog)
    hand_path = path.with_name(path.stem + ".hand.toml")
    hand = load_design(hand_path, catalog=catalog)
    _instance_of(hand, brief, build_space(brief, catalog))
    # evaluate, as a user runs it: every rail on target and within its hum allowance
    out = tmp_path / "hand.json"
    assert main(["evaluate", str(hand_path), "--json", str(out), "--quiet",
                 "--nominal-only", "--force"]) == 0
    figures = json.loads(out.read_text())
    assert figures["solver"]["converged"]
    for rail, fig in zip(brief.rails, figures["rails"], strict=True):
        if rail.voltage_v is not None:
            assert abs(fig["dc_v"] / rail.voltage_v - 1) <= rail.tolerance, rail.name
        if rail.hum_v is not None:
            assert fig["ripple_rms_v"] <= rail.hum_v, rail.name
    # and every rating the search asks for, through the search's own verification
    _, scores, _, _, _ = _verify(build_space(hand, catalog), np.zeros((1, 0), int), 512)
    unmet = [n for n, g in zip(scores.names, scores.G[0], strict=True) if g > 0]
    assert not unmet


def test_only_a_choke_meets_the_small_reservoir_brief(catalog):
    """No dropping resistor gets the output rail into its DC window with its hum met, for
    any reservoir the valve allows; the hand design with a choke meets it (test above).

    Enumerated over every reservoir the valve allows and every E24 resistor, each with the
    two largest capacitors: a larger capacitor after the resistor only lowers the rail's
    hum [derived: circuit theory, an RC section's gain 1/sqrt(1 + (wRC)^2) falls with C]
    and leaves its DC alone (every stage draws a constant current)."""
    brief = load_design(SUITE / "small-reservoir-choke.toml", brief=True, catalog=catalog)
    space = build_space(brief, catalog)
    out = space.rails[1]
    limit = space.rectifiers[0].max_reservoir_f
    n_caps = len(space.capacitances)
    ranges = []
    for j, var in enumerate(space.variables):
        if j == space.rails[0].var_cap:
            ranges.append(np.flatnonzero(space.capacitances <= limit * (1 + 1e-9)))
        elif j == out.var_kind:
            ranges.append([out.kinds.index(KIND_RESISTOR)])
        elif j == out.var_r:
            ranges.append(range(var.choices))
        elif j == out.var_cap:
            ranges.append([n_caps - 2, n_caps - 1])
        else:  # the choke index (inactive) and the preamp: no effect on the output rail
            ranges.append([0 if j == out.var_choke else var.choices // 2])
    X = np.array(list(itertools.product(*ranges)))
    res = evaluate_population(space, X)
    mine = [k for k, n in enumerate(res.scores.names) if '"output"' in n
            or not n.startswith("rail")]
    assert len(X) >= 4 * 2 * len(space.resistor_values)
    assert not np.any(np.all(res.scores.G[:, mine] <= 0, axis=1))


def _parts_text(design) -> str:
    """The design as a file, comments left out: two designs with the same text are
    identical in every part."""
    return dump_design(design)


@pytest.mark.parametrize("path", BRIEFS, ids=IDS)
def test_no_two_reported_designs_are_the_same(path, catalog):
    brief = load_design(path, brief=True, catalog=catalog)
    res = synthesize(brief, catalog, SynthOptions(seed=2, pop_size=16, generations=3))
    assert res.designs, "a feasible brief must give designs, even at a small budget"
    texts = [_parts_text(c.design) for c in res.designs]
    assert len(set(texts)) == len(texts)
