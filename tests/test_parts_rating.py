"""Rating choice: cheapest adequate parts against hand-computed stresses.

The test catalog below is invented test data (not the demo catalogs), so every
expected choice can be worked out by hand from the rules: capacitor rating >=
worst peak x 1.1; ripple within the 100 Hz rating (x 0.8 for half-wave ripple,
an assumption of the module); resistor power >= 2 x dissipation [practice:
common derating, no single source] and its voltage limit above the voltage
across it; choke DC rating >= its DC current.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pytest
from designfile_support import significant_figures
from rating_support import ONE_RAIL, PREAMP_RAIL

from supplydesign.design import Capacitor, Design, Link, Mains, Rail, Rectifier, Transformer
from supplydesign.evaluation.analysis import evaluate
from supplydesign.evaluation.figures import (
    Figures,
    RailFigures,
    RectifierFigures,
    TransformerFigures,
)
from supplydesign.io.designfile import load_design
from supplydesign.io.tomlwrite import SIGNIFICANT_FIGURES, dump_design, save_design
from supplydesign.parts import load_catalog
from supplydesign.parts.rating import (
    RatingRules,
    candidate_pool,
    choose_capacitors,
    choose_chokes,
    choose_resistors,
    ripple_factor,
)
from supplydesign.synth.rate import (
    NOT_MET,
    high_mains_no_load,
    rate_design,
    rate_evaluated,
    resistor_voltage,
)

TEST_CATALOG = {
    "capacitors.csv": """# invented test data
id,description,capacitance [uF],voltage [V],esr [ohm],ripple current at 100 Hz [mA],price,currency
T-100-450,t,100,450,1.0,800,4.00,EUR
T-100-500,t,100,500,1.0,800,5.00,EUR
T-100-550,t,100,550,1.0,800,6.00,EUR
T-100-550-HR,t high ripple,100,550,0.5,2000,6.50,EUR
T-100-630,t,100,630,1.0,900,7.00,EUR
T-47-450,t,47,450,2.0,500,2.00,EUR
T-47-600,t,47,600,2.0,500,3.00,EUR
""",
    "chokes.csv": """# invented test data
id,description,inductance [H],dcr [ohm],current [mA],price,currency
T-10H-50,t,10,400,50,9.00,EUR
T-10H-150,t,10,160,150,20.00,EUR
T-10H-250,t,10,100,250,35.00,EUR
T-5H-150,t,5,90,150,14.00,EUR
""",
    "resistors.csv": """# invented test data
id,description,power [W],max voltage [V],min resistance [ohm],max resistance [ohm],price,currency
T-0W5,t,0.5,350,1,1000000,0.10,EUR
T-1W,t,1,250,1,1000000,0.15,EUR
T-2W,t,2,500,1,470000,0.25,EUR
T-5W,t,5,750,1,100000,0.60,EUR
""",
}
RULES = RatingRules(model_parts=False)


@pytest.fixture(scope="module")
def pool(tmp_path_factory):
    d = tmp_path_factory.mktemp("ratingcat")
    for name, text in TEST_CATALOG.items():
        (d / name).write_text(text, encoding="utf-8")
    return candidate_pool(load_catalog(directory=d), RULES)


def rf(name, **kw) -> RailFigures:
    base = dict(dc_v=0.0, ripple_rms_v=0.0, ripple_pp_v=0.0, peak_v=0.0, load_a=0.0,
                link_dc_a=0.0, link_power_w=0.0, link_rms_a=0.0, cap_ripple_rms_a=0.0,
                cap_power_w=0.0)
    return RailFigures(name=name, **{**base, **kw})


def figs(case: str, *rails: RailFigures) -> Figures:
    return Figures(case=case, rails=list(rails), rectifier=RectifierFigures(0, 0, 0, 0),
                   transformer=TransformerFigures(0, 0))


def design(arrangement="full-wave", winding="center-tapped", dcr=200.0,
           resistance=10e3) -> Design:
    return Design(
        title="rating test", mains=Mains(50.0, 0.1, 0.1),
        transformer=Transformer(winding=winding, open_circuit_v=300.0, resistance_ohm=50.0),
        rectifier=Rectifier(kind="silicon", arrangement=arrangement),
        rails=(Rail("a", capacitor=Capacitor(100e-6, 1.0)),
               Rail("b", parent="a", link=Link("resistor", resistance_ohm=resistance),
                    capacitor=Capacitor(47e-6, 2.0)),
               Rail("c", parent="b", link=Link("choke", resistance_ohm=dcr, inductance_h=10.0),
                    capacitor=None)))


def stresses(peak_a=400.0, peak_a_cold=452.0, ripple_a=0.5, power_b=0.3, dc_b=380.0,
             choke_dc=0.12):
    nominal = figs("nominal",
                   rf("a", peak_v=peak_a, dc_v=peak_a - 10, cap_ripple_rms_a=ripple_a),
                   rf("b", peak_v=dc_b, dc_v=dc_b, link_power_w=power_b, link_dc_a=0.005),
                   rf("c", peak_v=dc_b - 20, dc_v=dc_b - 20, link_dc_a=choke_dc))
    cold = figs("high_mains_no_load", rf("a", peak_v=peak_a_cold, dc_v=peak_a_cold),
                rf("b", peak_v=peak_a_cold, dc_v=peak_a_cold),
                rf("c", peak_v=peak_a_cold, dc_v=peak_a_cold))
    return nominal, cold


def chosen(rated, rail):
    r = rated.design.rails[rated.design.rail_index(rail)]
    return r.capacitor, r.link


# --------------------------------------------------------------------- per design, by hand


def test_capacitor_rating_follows_the_high_mains_no_load_peak(pool):
    rated = rate_design(design(), *stresses(peak_a=400.0, peak_a_cold=452.0), pool, RULES)
    cap, _ = chosen(rated, "a")
    # 400 V x 1.1 = 440 V would take the 450 V part; 452 V x 1.1 = 497.2 V needs 500 V.
    assert cap.part == "T-100-500" and cap.voltage_rating_v == 500.0
    assert cap.capacitance_f == 100e-6 and cap.price == 5.0 and cap.currency == "EUR"
    reason = rated.reasons[("a", "capacitor")]
    assert reason.startswith("500 V part T-100-500") and "high mains, no load" in reason
    assert "452 V" in reason and "497 V" in reason and "+10 % margin" in reason
    # the 47 uF capacitor of rail b: 452 V x 1.1 = 497.2 V -> 600 V
    assert chosen(rated, "b")[0].part == "T-47-600"


def test_a_switch_on_peak_can_drive_the_capacitor_rating(pool):
    rated = rate_design(design(), *stresses(peak_a_cold=452.0), pool, RULES,
                        extra_peaks={"a": (470.0, "switch-on")})
    # 470 V x 1.1 = 517 V -> 550 V; a lower extra peak changes nothing
    assert chosen(rated, "a")[0].part == "T-100-550"
    assert "470 V peak at switch-on" in rated.reasons[("a", "capacitor")]
    rated = rate_design(design(), *stresses(peak_a_cold=452.0), pool, RULES,
                        extra_peaks={"a": (300.0, "switch-on")})
    assert chosen(rated, "a")[0].part == "T-100-500"


def test_an_unconverged_no_load_case_is_bounded_by_the_crest(pool):
    nominal, cold = stresses(peak_a_cold=900.0)  # an unconverged solution's figure
    cold.converged = False
    rated = rate_design(design(), nominal, cold, pool, RULES)
    # crest: sqrt(2) x 300 V x 1.1 = 466.7 V; x 1.1 = 513.4 V -> 550 V (its 900 V is left out)
    assert chosen(rated, "a")[0].part == "T-100-550"
    assert "467 V peak" in rated.reasons[("a", "capacitor")]
    assert "did not converge" in rated.reasons[("a", "capacitor")]


def test_margin_is_a_rule(pool):
    rated = rate_design(design(), *stresses(peak_a_cold=452.0), pool,
                        replace(RULES, voltage_margin=0.0))
    assert chosen(rated, "a")[0].part == "T-100-500"  # 452 V
    rated = rate_design(design(), *stresses(peak_a_cold=420.0), pool,
                        replace(RULES, voltage_margin=0.0))
    assert chosen(rated, "a")[0].part == "T-100-450"  # 420 V


def test_ripple_current_raises_the_choice(pool):
    rated = rate_design(design(), *stresses(ripple_a=1.2), pool, RULES)
    # >= 497.2 V and >= 1.2 A at 100 Hz: only the high-ripple 550 V part
    assert chosen(rated, "a")[0].part == "T-100-550-HR"
    assert chosen(rated, "a")[0].esr_ohm == 0.5  # the chosen part's ESR comes with it


def test_half_wave_ripple_is_derated(pool):
    d = design(arrangement="half-wave", winding="single")
    full = rate_design(design(), *stresses(ripple_a=0.7), pool, RULES)
    half = rate_design(d, *stresses(ripple_a=0.7), pool, RULES)
    # full-wave (100 Hz ripple): 800 mA >= 700 mA -> T-100-500
    assert chosen(full, "a")[0].part == "T-100-500"
    # half-wave (50 Hz ripple): 800 mA x 0.8 = 640 mA < 700 mA; 2 A x 0.8 passes
    assert chosen(half, "a")[0].part == "T-100-550-HR"
    assert "x 0.8 at 50 Hz" in half.reasons[("a", "capacitor")]


def test_ripple_factor_by_arrangement_and_frequency():
    got = ripple_factor([50, 60, 50, 60, 50], ["full-wave", "full-wave", "half-wave",
                                               "half-wave", "bridge"])
    np.testing.assert_array_equal(got, [1.0, 1.0, 0.8, 0.8, 1.0])


def test_resistor_power_is_twice_the_dissipation(pool):
    rated = rate_design(design(), *stresses(power_b=0.3), pool, RULES)
    assert chosen(rated, "b")[1].part == "T-1W"  # 2 x 0.3 W = 0.6 W: 0.5 W is too small
    assert chosen(rated, "b")[1].power_w == 1.0
    assert chosen(rated, "b")[1].resistance_ohm == 10e3  # the value stays
    rated = rate_design(design(), *stresses(power_b=0.2), pool, RULES)
    assert chosen(rated, "b")[1].part == "T-0W5"  # 0.4 W
    assert "2 x 200 mW" in rated.reasons[("b", "link")]


def test_resistor_voltage_limit(pool):
    d = design()
    nominal, cold = stresses(power_b=0.3, dc_b=150.0, peak_a=400.0)
    # across b: 400 V peak upstream - 150 V = 250 V -> the 1 W class (250 V) still fits
    assert resistor_voltage(d, d.rails[1], nominal) == pytest.approx(250.0)
    assert chosen(rate_design(d, nominal, cold, pool, RULES), "b")[1].part == "T-1W"
    nominal, cold = stresses(power_b=0.3, dc_b=100.0, peak_a=400.0)
    # 300 V across: the 1 W class's 250 V limit fails -> 2 W (500 V)
    assert chosen(rate_design(d, nominal, cold, pool, RULES), "b")[1].part == "T-2W"


def test_resistor_value_outside_every_class_is_not_met(pool):
    rated = rate_design(design(resistance=2.2e6), *stresses(), pool, RULES)
    assert ("b", "link") in rated.unmet
    assert rated.reasons[("b", "link")].startswith(NOT_MET)
    assert chosen(rated, "b")[1] == design(resistance=2.2e6).rails[1].link  # left as given


def test_choke_current_rating_and_dcr(pool):
    rated = rate_design(design(dcr=200.0), *stresses(choke_dc=0.12), pool, RULES)
    link = chosen(rated, "c")[1]
    # 10 H, DCR <= 200 ohm, >= 120 mA: T-10H-150 (the 50 mA one is too small)
    assert link.part == "T-10H-150" and link.current_rating_a == 0.15
    assert link.resistance_ohm == 160.0 and link.inductance_h == 10.0
    rated = rate_design(design(dcr=120.0), *stresses(choke_dc=0.12), pool, RULES)
    assert chosen(rated, "c")[1].part == "T-10H-250"  # 160 ohm is above the design's DCR
    rated = rate_design(design(), *stresses(choke_dc=0.3), pool, RULES)
    assert ("c", "link") in rated.unmet


def test_a_stated_adequate_rating_is_kept_when_the_catalog_has_nothing(pool):
    d = design()
    d = d.with_rails([*d.rails[:2], replace(d.rails[2], link=replace(
        d.rails[2].link, inductance_h=7.0, current_rating_a=0.2))])
    rated = rate_design(d, *stresses(choke_dc=0.12), pool, RULES)
    # no 7 H choke in the catalog; the design's own 200 mA rating covers 120 mA
    assert ("c", "link") not in rated.unmet
    assert rated.reasons[("c", "link")].startswith("kept as given (200 mA)")
    assert chosen(rated, "c")[1] == d.rails[2].link
    rated = rate_design(d, *stresses(choke_dc=0.25), pool, RULES)
    assert ("c", "link") in rated.unmet  # 250 mA exceeds its own rating
    # a capacitor value the catalog lacks, with stated ratings: kept only if they suffice
    d = design()
    own = Capacitor(82e-6, 1.0, voltage_rating_v=500.0, ripple_rating_a=1.0)
    d = d.with_rails([replace(d.rails[0], capacitor=own), *d.rails[1:]])
    assert ("a", "capacitor") not in rate_design(d, *stresses(peak_a_cold=452.0), pool,
                                                 RULES).unmet  # 497.2 V <= 500 V
    assert ("a", "capacitor") in rate_design(d, *stresses(peak_a_cold=460.0), pool,
                                             RULES).unmet  # 506 V > 500 V


def test_price_sums_the_chosen_parts_and_comments_group_by_rail(pool):
    rated = rate_design(design(), *stresses(), pool, RULES)
    assert not rated.unmet
    assert rated.price == pytest.approx(5.00 + 3.00 + 0.15 + 20.00)
    comments = rated.comments()
    assert set(comments) == {"a", "b", "c"}
    assert comments["b"].splitlines()[0].startswith("capacitor rating: ")
    assert comments["b"].splitlines()[1].startswith("link rating: ")


def test_model_parts_compete_without_catalog_ids(tmp_path):
    (tmp_path / "capacitors.csv").write_text(TEST_CATALOG["capacitors.csv"].replace(
        "T-47-600,t,47,600,2.0,500,3.00", "T-47-600,t,47,600,2.0,500,300.00"), encoding="utf-8")
    pool = candidate_pool(load_catalog(directory=tmp_path), RatingRules(model_parts=True))
    rated = rate_design(design(), *stresses(), pool, RatingRules(model_parts=True))
    cap = chosen(rated, "b")[0]  # the 600 V catalog part is dear: a model part wins
    assert cap.part is None and cap.price < 300.0 and cap.voltage_rating_v >= 497.2
    assert "demo price model" in rated.reasons[("b", "capacitor")]


# --------------------------------------------------------------------- vectorised form


def brute_force(table, ok_row):
    best, idx = np.inf, -1
    for j in range(len(table["price"])):
        if ok_row(j) and table["price"][j] < best:
            best, idx = table["price"][j], j
    return idx


def test_array_choices_equal_a_row_by_row_search(pool):
    rng = np.random.default_rng(7)
    n = 300
    caps, chokes, res = pool.capacitor, pool.choke, pool.resistor
    c = rng.choice([47e-6, 100e-6, 22e-6], n)
    v, i, k = rng.uniform(300, 700, n), rng.uniform(0, 2.5, n), rng.choice([1.0, 0.8], n)
    picks = choose_capacitors(caps, c, v, i, k)
    for m in range(n):
        want = brute_force(caps, lambda j, m=m: (
            abs(caps["capacitance_f"][j] - c[m]) <= 1e-9 * c[m]
            and caps["voltage_rating_v"][j] >= v[m] and caps["ripple_rating_a"][j] * k[m] >= i[m]))
        assert picks.index[m] == want
        assert (np.isnan(picks.price[m]) if want < 0 else picks.price[m] == caps["price"][want])
    L, r, dc = rng.choice([5.0, 10.0], n), rng.uniform(50, 500, n), rng.uniform(-0.3, 0.3, n)
    picks = choose_chokes(chokes, L, r, dc)
    for m in range(n):
        assert picks.index[m] == brute_force(chokes, lambda j, m=m: (
            chokes["inductance_h"][j] == L[m] and chokes["resistance_ohm"][j] <= r[m]
            and chokes["current_rating_a"][j] >= abs(dc[m])))
    R, p, u = rng.uniform(10, 2e6, n), rng.uniform(0, 6, n), rng.uniform(0, 800, n)
    picks = choose_resistors(res, R, p, u)
    for m in range(n):
        assert picks.index[m] == brute_force(res, lambda j, m=m: (
            res["power_w"][j] >= p[m] and res["max_voltage_v"][j] >= u[m]
            and res["min_resistance_ohm"][j] <= R[m] <= res["max_resistance_ohm"][j]))
    assert (picks.found == (picks.index >= 0)).all() and (~picks.found).any()


def test_array_choice_of_an_empty_table_finds_nothing(pool):
    empty = {k: v[:0] for k, v in pool.choke.items()}
    picks = choose_chokes(empty, [10.0, 5.0], [500.0, 500.0], [0.1, 0.1])
    assert picks.index.tolist() == [-1, -1] and np.isnan(picks.price).all()


# --------------------------------------------------------------------- with the evaluator


def one_rail(tmp_path) -> Design:
    path = tmp_path / "one.toml"
    path.write_text(ONE_RAIL, encoding="utf-8")
    return load_design(path)


def test_fine_at_nominal_but_not_at_high_mains_no_load_gets_a_higher_rating(tmp_path, pool):
    d = one_rail(tmp_path)
    nominal = evaluate([d])[0]
    cold = evaluate([d], high_mains_no_load(d))[0]
    assert cold.case == "high_mains_no_load"
    # the premise: a 450 V part is adequate at nominal mains and full load ...
    assert nominal.rails[0].peak_v * 1.1 <= 450.0
    # ... but not at high mains with the valves cold (about 1.1 x sqrt(2) x 300 V)
    assert cold.rails[0].peak_v * 1.1 > 450.0
    rated = rate_design(d, nominal, cold, pool, RULES)
    cap = rated.design.rails[0].capacitor
    assert cap.voltage_rating_v > 450.0
    assert cap.voltage_rating_v >= 1.1 * cold.rails[0].peak_v
    cheaper = [p for p, v, c in zip(pool.capacitor["price"], pool.capacitor["voltage_rating_v"],
                                    pool.capacitor["capacitance_f"], strict=True)
               if c == 100e-6 and v >= 1.1 * cold.rails[0].peak_v and p < cap.price]
    assert not cheaper


def test_rate_evaluated_settles_on_parts_adequate_for_their_own_figures(tmp_path, pool):
    d = one_rail(tmp_path)
    rated, nominal, cold = rate_evaluated(d, pool, RULES, steps=256)
    new = rated.design
    again = evaluate([new], steps=256)[0], evaluate([new], high_mains_no_load(d), steps=256)[0]
    assert again[0].as_dict() == nominal.as_dict() and again[1].as_dict() == cold.as_dict()
    cap = new.rails[0].capacitor
    assert cap.voltage_rating_v >= 1.1 * max(nominal.rails[0].peak_v, cold.rails[0].peak_v)
    assert cap.ripple_rating_a >= nominal.rails[0].cap_ripple_rms_a


def test_rated_file_is_readable_and_evaluates_to_the_rated_figures(tmp_path):
    """A transformer stated to seven figures and model capacitors with computed ESR: the file
    carries at most four figures per value and evaluates to the figures rate found."""
    path = tmp_path / "awkward.toml"
    path.write_text((ONE_RAIL + PREAMP_RAIL).replace('"300 V"', '"300.1234 V"')
                    .replace('"60 ohm"', '"60.04321 ohm"'), encoding="utf-8")
    demo = candidate_pool(load_catalog(), RatingRules())
    rated, nominal, _ = rate_evaluated(load_design(path), demo, RatingRules(), steps=256)
    out = tmp_path / "rated.toml"
    save_design(rated.design, out, comments=rated.comments())
    text = out.read_text(encoding="utf-8")
    assert max(significant_figures(text)) <= SIGNIFICANT_FIGURES, text
    assert '"300.1 V"' in text and '"60.04 ohm"' in text
    again = evaluate([load_design(out)], steps=256)[0]
    # the same circuit solved again: equal to the solver's own precision, far inside the
    # 0.1 % the file promises (an unrounded solve differs by up to 5e-4 here)
    for got, want in zip(again.rails, nominal.rails, strict=True):
        assert got.dc_v == pytest.approx(want.dc_v, rel=1e-9)
        assert got.ripple_rms_v == pytest.approx(want.ripple_rms_v, rel=1e-6)
    assert again.rectifier.peak_a == pytest.approx(nominal.rectifier.peak_a, rel=1e-6)


CHOKE_INPUT = ONE_RAIL.replace('link = "wire"', 'link = { kind = "choke", inductance = "10 H", '
                                                 'resistance = "100 ohm" }')


def test_a_choke_input_is_rated_at_least_for_its_no_load_crest(tmp_path, pool):
    path = tmp_path / "ci.toml"
    path.write_text(CHOKE_INPUT.replace('"100 uF"', '"47 uF"'), encoding="utf-8")
    d = load_design(path)
    rated, _, cold = rate_evaluated(d, pool, RULES, steps=256)
    cap = rated.design.rails[0].capacitor
    # a choke-input filter with no load charges its capacitor to (nearly) the crest
    # sqrt(2) x 300 V x 1.1 = 466.7 V, whether or not the no-load solution converges
    assert cap.voltage_rating_v >= 1.1 * 0.99 * 466.69
    if cold.converged:
        assert cap.voltage_rating_v >= 1.1 * cold.rails[0].peak_v
    else:
        assert "crest" in rated.reasons[("plates", "capacitor")]


def test_rated_design_is_written_with_its_reasons_and_reads_back(tmp_path, pool):
    rated = rate_design(design(), *stresses(), pool, RULES)
    text = dump_design(rated.design, comments=rated.comments())
    assert "# capacitor rating: 500 V part T-100-500" in text
    assert '# link rating: 150 mA part T-10H-150' in text
    path = tmp_path / "rated.toml"
    path.write_text(text, encoding="utf-8")
    back = load_design(path)
    assert back.rails[0].capacitor == rated.design.rails[0].capacitor
    assert back.rails[2].link == rated.design.rails[2].link


def test_rate_design_refuses_a_brief(pool):
    brief = design()
    brief = brief.with_rails([replace(brief.rails[0], capacitor=Capacitor()), *brief.rails[1:]])
    with pytest.raises(ValueError, match="complete design"):
        rate_design(brief, *stresses(), pool, RULES)
