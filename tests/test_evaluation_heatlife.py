"""Heat and life: capacitor heating and life, resistor derating, winding loading, fuses.

Checks against the outside world name their source and tag (shared/REFERENCES.md).
The designs are invented for the tests.
"""

from __future__ import annotations

import math
from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest

from supplydesign.design import Capacitor, Chassis, Link
from supplydesign.evaluation.analysis import evaluate_arrays
from supplydesign.evaluation.cases import HIGH_MAINS_FULL_LOAD, solve_case
from supplydesign.evaluation.heatlife import (
    HEAT_TRANSFER_W_M2K,
    can_area_m2,
    findings,
    heat_life,
    life_h,
    suggest_fuses,
    temperature_rise_k,
)
from supplydesign.io.designfile import load_design
from supplydesign.parts import derating, fuses

ROOT = Path(__file__).resolve().parents[1]
EXAMPLE = ROOT / "examples" / "pushpull-choke.toml"


# --------------------------------------------------------------------------- outside checks


def test_life_doubles_per_10_kelvin_worked_example():
    # [practice] the Arrhenius "10 degree rule" of capacitor makers' application notes
    # (REFERENCES.md: "Electrolytic life doubles for each 10 degC cooler"); worked by hand
    # from L = L_r 2^((T_r - T_core) / 10 K): a 2000 h, 105 degC part with its core at
    # 65 degC lives 2000 x 2^4 = 32 000 h; at 115 degC, 2000 x 2^-1 = 1000 h; at its rated
    # temperature its rated life. 32 000 h at 4 h a day: 32 000 / (4 x 365.25) = 21.90 y.
    got = life_h(2000.0, 105.0, np.array([65.0, 115.0, 105.0]))
    np.testing.assert_allclose(got, [32000.0, 1000.0, 2000.0], rtol=1e-12)
    assert 32000.0 / (4.0 * 365.25) == pytest.approx(21.90, abs=0.005)


def test_temperature_rise_from_stated_h_area_and_loss():
    # [derived] dT = I^2 ESR / (h A) with h = 12 W/(m^2 K) (stated), a 35 x 50 mm can
    # cooled by its side and top: A = pi 0.035 0.05 + pi 0.035^2 / 4 = 6.4599e-3 m^2;
    # 1 A rms through 0.3 ohm is 0.3 W: dT = 0.3 / (12 x 6.4599e-3) = 3.870 K.
    area = can_area_m2(0.035, 0.05)
    assert area == pytest.approx(6.4599e-3, rel=1e-4)
    assert HEAT_TRANSFER_W_M2K == 12.0
    assert temperature_rise_k(1.0, 0.3, area) == pytest.approx(3.870, abs=5e-4)


@pytest.mark.parametrize("ambient, upper, share", [
    (25.0, 155.0, 1.0), (70.0, 155.0, 1.0), (112.5, 155.0, 0.5), (155.0, 155.0, 0.0),
    (170.0, 155.0, 0.0), (70.0, 200.0, 1.0), (135.0, 200.0, 0.5), (200.0, 200.0, 0.0)])
def test_resistor_derating_line_of_iec_60115_1(ambient, upper, share):
    # [source, from memory: IEC 60115-1 derating curve] full rated dissipation up to the
    # rated ambient temperature of 70 degC, falling linearly to zero at the upper category
    # temperature; halfway between them, half the rating.
    assert derating.resistor_derating(ambient, upper) == pytest.approx(share, abs=1e-12)


def test_resistor_derating_default_upper_temperature():
    assert derating.resistor_derating(112.5, np.nan) == pytest.approx(0.5)
    assert derating.DEFAULT_UPPER_C == 155.0


# ISO 3, R10 series of preferred numbers, as rounded in the standard [memory; the same
# values are printed on every IEC 60127 fuse range]
ISO3_R10 = (1.00, 1.25, 1.60, 2.00, 2.50, 3.15, 4.00, 5.00, 6.30, 8.00)


def test_r10_series_is_iso_3():
    assert fuses.R10 == ISO3_R10
    # [derived] each value within 1.3 % of 10^(k/10), the exact geometric series
    exact = 10.0 ** (np.arange(10) / 10.0)
    assert np.max(np.abs(np.array(ISO3_R10) / exact - 1.0)) < 0.013


def _in_r10(x: float) -> bool:
    mantissa = x / 10.0 ** math.floor(math.log10(x) + 1e-9)
    return any(abs(mantissa - m) < 1e-9 for m in ISO3_R10)


def test_every_fuse_rating_is_an_r10_value():
    assert all(_in_r10(x) for x in fuses.RATINGS_A)
    assert fuses.RATINGS_A[0] == 0.05 and fuses.RATINGS_A[-1] == 16.0
    assert list(fuses.RATINGS_A) == sorted(fuses.RATINGS_A)
    # every rating the suggestion gives over a wide sweep of currents and surges
    rms = np.geomspace(0.01, 10.0, 200)
    for surge in (np.nan, 0.01, 0.3, 5.0):
        got = fuses.time_lag_rating(rms, surge)
        assert all(_in_r10(x) for x in got[np.isfinite(got)])


@pytest.mark.parametrize("name", ["si_fw_crc", "valve_fw_crc", "si_fw_leakage_esr"])
def test_winding_rms_of_a_capacitor_input_matches_ngspice(name, request):
    """[source: ngspice, an independent simulator on our netlist; REFERENCES.md] The HT
    winding's rms current per half of three capacitor-input full-wave rectifiers, and the
    centre-tap lead's (the HT fuse's) rms, within 2 % (ngspice's own error is below 3e-4,
    tests/data/spice/README.md)."""
    from spice_support import load_circuit, ngspice_or_skip, spice_references

    ngspice_or_skip()
    ref = spice_references(request.config)[name]
    design, _ = load_circuit(name)
    full = evaluate_arrays([design])
    hl = heat_life([design], full)
    halves = [w["rms_a"] for w in ref["windings"]]
    assert len(halves) == 2 and design.rails[0].link.kind == "wire"
    assert hl.winding_rms_a[0] == pytest.approx(max(halves), rel=0.02)
    fs = suggest_fuses([design], full)  # at nominal figures: the lead's rms of this case
    assert fs.ht_rms_a[0] == pytest.approx(math.hypot(*halves), rel=0.02)


def test_switch_on_i2t_of_a_stiff_reservoir_against_the_rc_solution():
    """[derived: circuit theory] A half-wave rectifier switched on at the crest into an
    empty capacitor through R: v' = (V cos wt - v) / (R C), v(0) = 0, so
    i = C V / (1 + a^2) (e^(-t/tau) / tau - w sin wt + a w cos wt), a = w tau, until i
    falls to zero; I^2 t by quadrature. The diode's drop (about 1 V of 396 V) and its
    0.05 ohm lower the figure by well under 1 %: 2 % tolerance."""
    from supplydesign.evaluation.worstcase import analyse

    design = load_design(ROOT / "tests" / "data" / "spice" / "si_halfwave_crc.toml")
    rails = (replace(design.rails[0], capacitor=Capacitor(capacitance_f=10e-6),
                     current_a=0.0, load_resistance_ohm=None, bleeder_ohm=None),)
    tr = replace(design.transformer, resistance_ohm=10.0, leakage_h=0.0)
    design = replace(design, transformer=tr, rails=rails)
    wc = analyse([design])
    r = tr.resistance_ohm + design.rectifier.series_resistance_ohm
    c = 10e-6
    v = math.sqrt(2.0) * tr.open_circuit_v * (1.0 + design.mains.high)
    w = 2.0 * math.pi * design.mains.frequency_hz
    tau = r * c
    a = w * tau
    t = np.linspace(0.0, 0.25 / design.mains.frequency_hz, 400001)
    i = c * v / (1 + a**2) * (np.exp(-t / tau) / tau - w * np.sin(w * t) + a * w * np.cos(w * t))
    i = np.where(np.cumsum(i < 0) > 0, 0.0, i)
    expected = float(np.sum(0.5 * (i[1:] ** 2 + i[:-1] ** 2) * np.diff(t)))
    assert wc.switch_on.i2t_a2s[0] == pytest.approx(expected, rel=0.02)


# --------------------------------------------------------------------------- rules


def test_ripple_rating_holds_to_the_rated_temperature_and_falls_beyond():
    share = derating.ripple_derating(np.array([25.0, 85.0, 87.5, 90.0, 100.0]), 85.0)
    np.testing.assert_allclose(share, [1.0, 1.0, math.sqrt(0.5), 0.0, 0.0])
    assert derating.ripple_derating(60.0, np.nan) == 1.0  # no rated temperature: as given


def test_winding_rating_basis_in_order():
    rms, basis = derating.winding_rms_rating(
        [0.3, np.nan, np.nan, np.nan], [np.nan, 140.0, np.nan, np.nan], 350.0,
        ["center-tapped", "center-tapped", "single", "single"], [0.2, 0.2, 0.2, np.nan],
        ["choke input", None, "choke input", None], ["full-wave", "full-wave", "bridge",
                                                     "bridge"])
    np.testing.assert_allclose(rms[:3], [0.3, 0.2, 0.2])
    assert np.isnan(rms[3])
    assert list(basis) == ["rms", "VA", "DC", ""]
    # [derived] a choke input's half-winding carries the DC for half a period: 1/sqrt 2
    assert derating.assumed_form_factor("choke input", "full-wave")[0] == pytest.approx(
        1 / math.sqrt(2))


def test_fuse_rating_is_the_smallest_above_both_needs():
    # 0.4 A rms x 1.5 = 0.6 A -> 630 mA; a 2 A^2 s surge needs sqrt(2 / (0.3 x 3)) = 1.49 A
    assert fuses.time_lag_rating(0.4)[()] == 0.63
    assert fuses.time_lag_rating(0.4, 2.0)[()] == 1.6
    assert fuses.time_lag_rating(0.42)[()] == 0.63  # 0.63 exactly is enough
    assert np.isnan(fuses.time_lag_rating(20.0))


# --------------------------------------------------------------------------- designs


@pytest.fixture(scope="module")
def example():
    design = load_design(EXAMPLE)
    return design, evaluate_arrays([design])


def test_example_figures(example):
    design, full = example
    hl = heat_life([design], full)
    # the reservoir at its own 55 degC, a 3000 h / 105 degC part: life from its core
    assert hl.ambient_c[0, 0] == 55.0 and hl.ambient_c[0, 1] == 45.0
    core = 55.0 + hl.cap_rise_k[0, 0]
    assert hl.cap_life_h[0, 0] == pytest.approx(3000.0 * 2 ** ((105.0 - core) / 10.0))
    assert hl.cap_rise_k[0, 0] == pytest.approx(temperature_rise_k(
        full.cap_ripple_rms_a[0, 0], 0.8, can_area_m2(0.03, 0.05)))
    assert hl.cap_life_years[0, 0] == pytest.approx(hl.cap_life_h[0, 0] / (4 * 365.25))
    assert hl.shortest_life_h()[0] == np.nanmin(hl.cap_life_h[0])
    assert np.isnan(hl.res_power_w[0, :2]).all() and hl.res_allowed_w[0, 2] == 2.0
    assert hl.output_dc_a[0] == pytest.approx(0.2, rel=0.02)  # 170 + 25 + 4 + 1.5 mA
    assert hl.form_factor[0] == pytest.approx(hl.winding_rms_a[0] / hl.output_dc_a[0])
    assert findings(design, hl, 0) == []


def test_findings_name_what_is_over(example):
    design, full = example
    hot = replace(design, chassis=Chassis(ambient_c=100.0, min_life_h=100000.0))
    rails = list(hot.rails)
    rails[0] = replace(rails[0], ambient_c=None)
    rails[2] = replace(rails[2], link=replace(rails[2].link, power_w=0.15))  # 0.14 W used
    tr = replace(hot.transformer, rated_for="choke input")
    hot = replace(hot, rails=tuple(rails), transformer=tr)
    hl = heat_life([hot], full)
    text = "\n".join(t for _, t in findings(hot, hl, 0))
    assert "capacitor ripple" in text and "below the 100 000 h asked" in text
    assert "rail 'splitter': resistor dissipates" in text and "IEC 60115-1" in text
    assert "capacitor input draws" in text and "assumes choke input" in text
    # film capacitor without life data: no life, no life finding
    rails[1] = replace(rails[1], capacitor=Capacitor(capacitance_f=47e-6, esr_ohm=0.01))
    hl = heat_life([replace(hot, rails=tuple(rails))], full)
    assert np.isnan(hl.cap_life_h[0, 1]) and np.isfinite(hl.cap_ripple_a[0, 1])


def test_fuses_of_the_example(example):
    design, _ = example
    high = solve_case([design], HIGH_MAINS_FULL_LOAD).arrays
    fs = suggest_fuses([design], high, [0.2])
    # the centre-tap lead carries both halves in turn
    assert fs.ht_rms_a[0] == pytest.approx(math.sqrt(2) * high.winding_rms_a[0])
    ratio = design.transformer.open_circuit_v / 230.0
    assert fs.mains_ht_a[0] == pytest.approx(ratio * fs.ht_rms_a[0])
    assert fs.mains_other_a[0] == pytest.approx(50.0 * 1.1 / 230.0)
    assert fs.mains_surge_i2t[0] == pytest.approx(ratio**2 * 0.2)
    assert fs.ht_a[0] == fuses.time_lag_rating(fs.ht_rms_a[0], 0.2)
    assert fs.mains_a[0] == fuses.time_lag_rating(fs.mains_rms_a[0], fs.mains_surge_i2t[0])
    assert fs.ht_a[0] >= 1.5 * fs.ht_rms_a[0] and fs.primary_given[0]


def test_capacitor_without_size_has_life_at_its_air_temperature(example):
    design, full = example
    rails = list(design.rails)
    rails[1] = replace(rails[1], capacitor=replace(rails[1].capacitor, diameter_m=None))
    d = replace(design, rails=tuple(rails))
    hl = heat_life([d], full)
    assert np.isnan(hl.cap_rise_k[0, 1]) and hl.cap_core_c[0, 1] == 45.0
    assert any("no can size" in t for _, t in findings(d, hl, 0))


def test_resistor_of_a_link_without_rating(example):
    design, full = example
    rails = list(design.rails)
    rails[3] = replace(rails[3], link=Link("resistor", resistance_ohm=1e4))
    hl = heat_life([replace(design, rails=tuple(rails))], full)
    assert np.isnan(hl.res_allowed_w[0, 3]) and np.isfinite(hl.res_power_w[0, 3])
