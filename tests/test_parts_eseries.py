"""IEC 60063 E-series against the published tables (REFERENCES.md, "Standard values")."""

from __future__ import annotations

from decimal import ROUND_HALF_UP, Decimal

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st
from numpy.testing import assert_array_equal

from supplydesign.parts import eseries
from supplydesign.parts.eseries import nearest, next_down, next_up, series, values
from supplydesign.units import parse_quantity

# IEC 60063 [source], as listed in REFERENCES.md.
E24_IEC = [1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7,
           5.1, 5.6, 6.2, 6.8, 7.5, 8.2, 9.1]
E3_IEC = [1.0, 2.2, 4.7]
# The eight E24 values that differ from plain rounding of 10^(n/24), IEC 60063 [source].
E24_NOT_ROUNDED = {2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7, 8.2}


def test_e24_is_the_iec_table():
    # IEC 60063 [source]
    assert_array_equal(series("E24"), E24_IEC)


def test_e12_e6_e3_are_the_iec_tables():
    # IEC 60063 [source]: E12 every second E24 value, E6 every fourth, E3 = 1.0 2.2 4.7
    assert_array_equal(series("E12"), E24_IEC[::2])
    assert_array_equal(series("E6"), E24_IEC[::4])
    assert_array_equal(series("E3"), E3_IEC)


def test_e24_departs_from_rounding_at_the_eight_published_values():
    # IEC 60063 [source]: E3-E24 are tables, not formulas; plain rounding of 10^(n/24)
    # to two figures (done here independently, in decimal) differs at exactly eight values.
    rounded = [float((Decimal(10) ** (Decimal(n) / 24)).quantize(Decimal("0.1"), ROUND_HALF_UP))
               for n in range(24)]
    differing = {v for v, r in zip(series("E24"), rounded, strict=True) if v != r}
    assert differing == E24_NOT_ROUNDED


@pytest.mark.parametrize("name, steps", [("E48", 48), ("E96", 96), ("E192", 192)])
def test_formula_series_length_and_rounding(name, steps):
    # IEC 60063 [source]: E48/E96/E192 = 10^(n/m) to three figures (E192 n=185 excepted).
    # Independent float check: every value lies within half a last digit (0.005) of
    # 10^(n/m); 1e-9 allows for binary error in the float power.
    s = series(name)
    assert s.shape == (steps,)
    exact = 10.0 ** (np.arange(steps) / steps)
    ok = np.abs(s - exact) <= 0.005 + 1e-9
    ok[185 if name == "E192" else []] = True
    assert ok.all()
    assert np.all(np.diff(s) > 0)


@pytest.mark.parametrize("name, n", [("E48", 11), ("E96", 22), ("E192", 44)])
def test_ten_to_eleven_48ths_rounds_to_1_69(name, n):
    # IEC 60063 [source]: 10^(11/48) = 1.69499... -> 1.69 (round in decimal)
    assert series(name)[n] == 1.69


@pytest.mark.parametrize("name, n", [("E96", 29), ("E192", 58)])
def test_ten_to_29_96ths_is_2_00(name, n):
    # IEC 60063 [source]: 10^(29/96) -> 2.00
    assert series(name)[n] == 2.00


def test_e192_exception_at_185():
    # IEC 60063 [source]: E192 n=185 is 9.20, not the formula's 9.19
    assert eseries.formula_hundredths(185, 192) == 919
    assert series("E192")[185] == 9.20
    assert series("E192")[184] < 9.20 < series("E192")[186]


def test_formula_series_nest():
    # [derived] from the formula: E48 is every second E96 value, E96 every second E192
    # value (the exception n=185 is odd, so it is not on the E96 grid).
    assert_array_equal(series("E48"), series("E96")[::2])
    assert_array_equal(series("E96"), series("E192")[::2])


def test_unknown_series():
    with pytest.raises(ValueError, match="E5"):
        series("E5")


def test_values_over_decades_are_exact_floats():
    v = values("E6", 4.7e-6, 470e-6)
    assert v.tolist() == [4.7e-6, 6.8e-6, 1e-5, 1.5e-5, 2.2e-5, 3.3e-5, 4.7e-5, 6.8e-5, 1e-4,
                          1.5e-4, 2.2e-4, 3.3e-4, 4.7e-4]


def test_values_counts_and_limits():
    assert len(values("E12", 1.0, 100.0)) == 2 * 12 + 1
    assert len(values("E96", 100.0, 999.0)) == 96
    assert values("E6", 1.6, 2.1).size == 0
    # A limit parsed with pint (47 * 1e-6, not exactly 4.7e-5) still counts as on the series.
    lo = parse_quantity("47 uF", "capacitance")
    assert values("E6", lo, lo)[0] == 4.7e-5
    with pytest.raises(ValueError):
        values("E6", 10.0, 1.0)


@pytest.mark.parametrize("x, up, down, near", [
    (4.75, 5.1, 4.7, 4.7),
    (5.0, 5.1, 4.7, 5.1),
    (4.7, 4.7, 4.7, 4.7),
    (9.5e3, 10e3, 9.1e3, 9.1e3),
    (9.6e3, 10e3, 9.1e3, 10e3),
    (1.04e-6, 1.1e-6, 1.0e-6, 1.0e-6),  # geometric midpoint 1.0488
    (0.99, 1.0, 0.91, 1.0),
])
def test_rounding_e24(x, up, down, near):
    assert next_up("E24", x) == pytest.approx(up, rel=1e-12)
    assert next_down("E24", x) == pytest.approx(down, rel=1e-12)
    assert nearest("E24", x) == pytest.approx(near, rel=1e-12)


def test_nearest_is_geometric():
    # E6 1.0 and 1.5: the geometric midpoint is sqrt(1.5) = 1.2247
    assert nearest("E6", 1.22) == 1.0
    assert nearest("E6", 1.23) == 1.5


def test_rounding_keeps_shape():
    x = np.array([[1.2e-6, 50e-6], [300e-6, 7e-6]])
    assert next_up("E6", x).shape == (2, 2)
    assert_array_equal(next_up("E6", x), [[1.5e-6, 68e-6], [330e-6, 10e-6]])
    assert_array_equal(next_down("E6", x), [[1e-6, 47e-6], [220e-6, 6.8e-6]])


def test_rounding_rejects_nonpositive():
    with pytest.raises(ValueError):
        next_up("E6", 0.0)
    with pytest.raises(ValueError):
        nearest("E6", [1.0, -2.0])


def _on_series(name, v):
    mant = v / 10.0 ** np.floor(np.log10(v) + 1e-12)
    return np.isclose(mant, series(name), rtol=1e-9).any()


@given(x=st.floats(min_value=1e-9, max_value=1e9, allow_nan=False),
       name=st.sampled_from(eseries.SERIES_NAMES))
def test_rounding_properties(x, name):
    up, down, near = next_up(name, x), next_down(name, x), nearest(name, x)
    assert down <= x * (1 + 1e-9) and up >= x * (1 - 1e-9)
    assert near in (up, down)
    for v in (up, down):
        assert _on_series(name, v)
    # No series value strictly between down and up.
    inside = values(name, down, up)
    assert len(inside) <= 2


def test_iec_60063_tolerance_of_each_series():
    # IEC 60063:2015 associates each series with a tolerance [memory: from memory of the
    # standard's foreword; the issue states the same table]: E6 20 %, E12 10 %, E24 5 %,
    # E48 2 %, E96 1 %, E192 0.5 %.
    assert eseries.SERIES_TOLERANCE == {"E6": 0.20, "E12": 0.10, "E24": 0.05, "E48": 0.02,
                                        "E96": 0.01, "E192": 0.005}


@pytest.mark.parametrize("value,first,expected", [
    (47e-6, "E6", "E6"),      # an E6 value: a capacitor of it is a 20 % part
    (39e-6, "E6", "E12"),     # E12, not E6 [source: IEC 60063 tables, REFERENCES.md]
    (5.1e-6, "E6", "E24"),
    (4.7e3, "E24", "E24"),    # in E6 too, but resistors are made to E24 and finer
    (1.69e3, "E24", "E48"),   # 10^(11/48) rounds to 1.69 [source: REFERENCES.md]
    (2.0e3, "E24", "E24"),    # E24 holds 2.0, so E96's 2.00 is not reached
    (4.75e3, "E24", "E96"),
    (9.20, "E6", "E192"),     # the one E192 exception, 9.20 [source: REFERENCES.md]
    (9.19, "E6", None),       # ... which leaves 9.19 on no series
    (3.14e3, "E24", None),
])
def test_series_a_value_belongs_to(value, first, expected):
    assert eseries.series_of(value, first) == expected
