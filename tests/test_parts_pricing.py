"""E-series parts priced by the invented demo model, and their merge with catalog parts.

The model's coefficients are invented (see DemoPriceModel); these tests check that the
tables follow the model's stated formulas and the catalog table layout, not any price.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from supplydesign.errors import UserError
from supplydesign.parts import (
    DEMO_PRICES,
    DemoPriceModel,
    eseries,
    eseries_capacitors,
    eseries_resistors,
    load_catalog,
    merge_tables,
)
from supplydesign.parts.pricing import model_resistor_classes


def test_capacitor_grid_and_layout():
    cat = load_catalog()
    tab = eseries_capacitors("E6", 4.7e-6, 470e-6)
    n_values = len(eseries.values("E6", 4.7e-6, 470e-6))
    grades = len(DEMO_PRICES.cap_grades)
    assert len(tab["part"]) == n_values * len(DEMO_PRICES.cap_voltages_v) * grades
    assert set(tab) == set(cat.table("capacitor"))
    assert set(tab["currency"]) == {DEMO_PRICES.currency}
    assert len(set(tab["part"])) == len(tab["part"])


def test_capacitor_follows_the_stated_formulas():
    m = DemoPriceModel(cap_base=1.0, cap_per_joule=0.5, cap_tan_delta=0.1, cap_ripple_k=4.0,
                       cap_grades=((85.0, 1000.0, 1.0), (105.0, 5000.0, 1.5)))
    tab = eseries_capacitors("E6", 47e-6, 47e-6, voltages_v=[450.0], model=m)
    assert list(tab["part"]) == ["E6-47uF-450V", "E6-47uF-450V-105C"]
    # hand-worked: energy 0.5 * 47e-6 * 450^2 = 4.75875 J -> 1 + 0.5 * 4.75875 = 3.379;
    # the 105 degC grade at 1.5 times: 5.068
    assert tab["price"][0] == 3.38 and tab["price"][1] == 5.07
    assert list(tab["rated_temperature_c"]) == [85.0, 105.0]
    assert list(tab["rated_life_h"]) == [1000.0, 5000.0]
    # the can: 4.75875 J / 6e5 J/m^3 + 1 cm^3 = 8.931 cm^3, height twice the diameter:
    # d = (2 V / pi)^(1/3) = 17.84 mm -> 18 mm (to the half millimetre), 36 mm high
    assert tab["diameter_m"][0] == pytest.approx(0.018) and tab["height_m"][0] == pytest.approx(
        0.036)
    # ratings stated to three figures, as a data sheet states them: 0.1 / (2 pi 100 Hz
    # 47 uF) = 3.3863 ohm -> 3.39 ohm; 4 sqrt(47e-6 x 450) = 0.58172 A -> 0.582 A
    assert tab["esr_ohm"][0] == 3.39
    assert tab["ripple_rating_a"][0] == 0.582
    assert tab["esr_ohm"][0] == pytest.approx(0.1 / (2 * math.pi * 100 * 47e-6), rel=5e-3)
    assert tab["ripple_rating_a"][0] == pytest.approx(4.0 * math.sqrt(47e-6 * 450), rel=5e-3)


def test_resistor_class_voltage_is_stated_to_three_figures():
    volts = model_resistor_classes()["max_voltage_v"]
    # 350 V x sqrt(0.5 W) = 247.49 V -> 247 V; 350 V x sqrt(3 W) = 606.2 V -> 606 V
    assert list(volts[[0, 3]]) == [247.0, 606.0]


def test_capacitor_price_grows_with_capacitance_and_voltage():
    tab = eseries_capacitors("E12", 10e-6, 100e-6, voltages_v=[350.0, 450.0])
    cheap = tab["rated_temperature_c"] == DEMO_PRICES.cap_grades[0][0]
    price = tab["price"][cheap].reshape(-1, 2)
    assert (np.diff(price, axis=0) >= 0).all() and (np.diff(price, axis=1) > 0).all()


def test_model_resistors_cover_classes_and_range():
    tab = eseries_resistors(series="E24", lo=1e3, hi=9.1e3)
    assert len(tab["part"]) == 24 * len(DEMO_PRICES.res_powers_w)
    assert set(tab["power_w"]) == set(DEMO_PRICES.res_powers_w)
    five = tab["power_w"] == 5.0
    expected = round(DEMO_PRICES.res_base + 5 * DEMO_PRICES.res_per_watt, 2)
    assert np.allclose(tab["price"][five], expected)


def test_catalog_resistor_classes_respect_their_range():
    cat = load_catalog()
    tab = eseries_resistors(cat.table("resistor"), "E24", 1e4, 1e6)
    ten = tab["part"].astype(str)
    assert any(p.startswith("RES-10W-") for p in ten)
    limit = cat.table("resistor")
    rmax = dict(zip(limit["part"], limit["max_resistance_ohm"], strict=True))
    cls = np.array([p.rsplit("-", 1)[0] for p in ten])
    assert all(r <= rmax[c] * (1 + 1e-9) for r, c in zip(tab["resistance_ohm"], cls, strict=True))
    assert tab["resistance_ohm"].max() == 1e6  # the 0.5 W and 1 W classes reach 1 Mohm


def test_merge_with_catalog():
    cat = load_catalog()
    both = merge_tables(cat.table("capacitor"), eseries_capacitors())
    n = len(cat.ids("capacitor")) + len(eseries_capacitors()["part"])
    assert all(len(col) == n for col in both.values())
    # a film part of the catalog gives no life data; every model part gives its can and life
    assert np.isnan(both["rated_life_h"][1])
    model = slice(len(cat.ids("capacitor")), None)
    assert (both["diameter_m"][model] > 0).all() and (both["rated_life_h"][model] > 0).all()


def test_merge_refuses_two_currencies():
    with pytest.raises(UserError, match="EUR and USD"):
        merge_tables(load_catalog().table("capacitor"),
                     eseries_capacitors(model=DemoPriceModel(currency="USD")))
