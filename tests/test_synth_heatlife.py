"""Heat and life in synthesis: capacitors, resistors and the winding at the air temperature,
the least capacitor life a brief asks, and the cheaper design those rules leave out.

The demo brief and catalogs are invented; these tests check the rules are kept, not
any value of them.
"""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest

from supplydesign.design import Transformer
from supplydesign.evaluation.analysis import evaluate_arrays
from supplydesign.evaluation.heatlife import heat_life
from supplydesign.io.designfile import load_design
from supplydesign.parts import derating, load_catalog
from supplydesign.parts.pricing import eseries_capacitors, model_resistor_classes
from supplydesign.parts.rating import choose_capacitors, choose_resistors
from supplydesign.synth.run import SynthOptions, synthesize
from supplydesign.synth.score import winding_rms_ratings
from supplydesign.synth.space import build_space

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "supplydesign" / "data" / "demo-brief.toml"
MIN_LIFE_H = 10000.0


@pytest.fixture(scope="module")
def catalog():
    return load_catalog()


def _hot_brief(tmp_path_factory, catalog):
    text = DEMO.read_text().replace(
        '[[rail]]\nname = "plates"',
        '[chassis]\nambient = "55 degC"\nmin_life = "10000 h"\n\n[[rail]]\nname = "plates"', 1)
    path = tmp_path_factory.mktemp("hot") / "hot-demo.toml"
    path.write_text(text)
    return load_design(path, brief=True, catalog=catalog)


@pytest.fixture(scope="module")
def hot_run(tmp_path_factory, catalog):
    brief = _hot_brief(tmp_path_factory, catalog)
    return brief, synthesize(brief, catalog, SynthOptions(seed=1, pop_size=32, generations=12))


def test_hot_demo_designs_all_meet_the_least_life(hot_run):
    brief, result = hot_run
    assert brief.chassis.min_life_h == MIN_LIFE_H and brief.ambient_c(0) == 55.0
    assert result.designs
    designs = [c.design for c in result.designs]
    hl = heat_life(designs, evaluate_arrays(designs))  # evaluated again, apart from the search
    has_cap = np.array([[r.capacitor is not None for r in d.rails] for d in designs])
    assert np.all(hl.cap_life_h[has_cap] >= MIN_LIFE_H)
    assert np.all(~(hl.cap_ripple_a[has_cap] > hl.cap_allowed_a[has_cap]))
    assert np.all(hl.winding_rms_a <= hl.winding_allowed_a)
    for c, life in zip(result.designs, hl.shortest_life_h(), strict=True):
        assert c.columns["shortest_life_h"] == pytest.approx(life, rel=0.05)


def test_hot_demo_says_why_a_cheaper_design_was_left_out(hot_run):
    _, result = hot_run
    ex = result.heat_exclusion
    assert ex is not None and ex["cost"] < result.designs[0].cost
    assert "cheaper design" in ex["text"][0] and len(ex["text"]) > 1
    assert any("below the 10 000 h asked" in t for t in ex["text"][1:])
    # the design left out does miss the rule, evaluated again
    d = ex["design"]
    hl = heat_life([d], evaluate_arrays([d]))
    assert np.nanmin(hl.cap_life_h) < MIN_LIFE_H


def test_hot_demo_report_shows_the_exclusion(hot_run, tmp_path):
    from supplydesign.report.html import synth_report_html
    from supplydesign.synth.files import write_run

    _, result = hot_run
    page = synth_report_html(result, {}, {})
    assert "Left out for heat and life" in page and "10 000 h asked" in page
    write_run(result, str(tmp_path))
    import json

    doc = json.loads((tmp_path / "pareto.json").read_text())
    assert doc["heat_and_life_exclusion"]["cost"] == pytest.approx(result.heat_exclusion["cost"])
    assert all(e["shortest_life_h"] >= MIN_LIFE_H for e in doc["designs"])


def test_life_and_ambient_choose_the_longer_lived_grade():
    caps = eseries_capacitors("E6", 100e-6, 100e-6, voltages_v=[450.0])
    plain = choose_capacitors(caps, 100e-6, 450.0, 0.3)
    hot = choose_capacitors(caps, 100e-6, 450.0, 0.3, ambient_c=55.0, min_life_h=MIN_LIFE_H)
    assert caps["rated_temperature_c"][plain.index[0]] == 85.0  # the cheaper grade
    assert caps["rated_temperature_c"][hot.index[0]] == 105.0
    # the 85 degC grade at 55 degC: 1000 h x 2^(30 K / 10 K) = 8000 h at most [derived]
    cheap = plain.index[0]
    _, _, life = derating.capacitor_heat(0.3, caps["esr_ohm"][cheap], caps["diameter_m"][cheap],
                                         caps["height_m"][cheap], 1000.0, 85.0, 55.0)
    assert life < 8000.0
    # above the rated temperature the ripple rating is gone: nothing of 85 degC qualifies
    grade85 = {k: v[caps["rated_temperature_c"] == 85.0] for k, v in caps.items()}
    assert not choose_capacitors(grade85, 100e-6, 450.0, 0.3, ambient_c=95.0).found[0]


def test_resistor_class_follows_its_derated_power():
    classes = model_resistor_classes()  # 0.5 ... 10 W, upper temperature 155 degC (default)
    # 1.2 W: twice that, 2.4 W, asks the 3 W class; at 140 degC a class keeps
    # (155 - 140) / (155 - 70) = 17.6 % of its power (IEC 60115-1): 1.2 W asks 6.8 W: 7 W
    cool = choose_resistors(classes, 1e3, 2.4, 100.0)
    hot = choose_resistors(classes, 1e3, 2.4, 100.0, dissipation_w=1.2, ambient_c=140.0)
    assert classes["power_w"][cool.index[0]] == 3.0
    assert classes["power_w"][hot.index[0]] == 7.0


def test_winding_rms_rating_per_transformer_and_rectifier(tmp_path_factory, catalog):
    space = build_space(_hot_brief(tmp_path_factory, catalog), catalog)
    ratings = winding_rms_ratings(space)
    parts = [t.part for t in space.transformers]
    # TRF-CT-2X300-150 states 200 mA rms, TRF-CT-2X350-200 260 mA rms (both beside a DC
    # rating, which then does not count)
    np.testing.assert_allclose(ratings[parts.index("TRF-CT-2X300-150")], 0.2)
    np.testing.assert_allclose(ratings[parts.index("TRF-CT-2X350-200")], 0.26)
    # a DC rating alone for a capacitor input: 250 mA x 1.2247 (the form factor the rule
    # assumes) for every rectifier
    space = build_space(replace(space.brief, transformer=Transformer(
        choose=("TRF-CT-2X380-250",))), catalog)
    np.testing.assert_allclose(winding_rms_ratings(space), 0.25 * np.sqrt(6) / 2)
