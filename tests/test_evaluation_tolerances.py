"""Where each part's spread comes from, and how the builds are drawn
(supplydesign.evaluation.tolerances).

Designs here are invented for the tests; the catalog is the built-in demo catalog,
used for where a tolerance comes from, never as a check value of the outside world.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from supplydesign.evaluation.tolerances import (
    DEFAULT_TOLERANCE,
    build_designs,
    factors,
    multipliers,
    unit_sample,
)
from supplydesign.io import load_design
from supplydesign.parts import load_catalog

DESIGN = """\
title = "tolerance sources (invented)"
[mains]
frequency = "50 Hz"
low = "-8 %"
high = "+6 %"
[transformer]
part = "TRF-CT-2X350-200"
[rectifier]
kind = "valve"
arrangement = "full-wave"
drop = "20 V"
drop_current = "100 mA"
[[rail]]
name = "reservoir"
link = "wire"
capacitor = { part = "CAP-47U-450" }
current = "100 mA"
[[rail]]
name = "output"
link = { kind = "choke", part = "CHK-5H-300" }
capacitor = { capacitance = "39 uF", tolerance = "-10 % +50 %", distribution = "normal" }
current = "60 mA"
[[rail]]
name = "driver"
link = { kind = "resistor", resistance = "4.75 kohm", part = "RES-1W" }
capacitor = { capacitance = "22 uF" }
current = "5 mA"
[[rail]]
name = "input"
link = { kind = "resistor", resistance = "3.14 kohm" }
capacitor = { capacitance = "39 uF" }
current = "1 mA"
"""


@pytest.fixture(scope="module")
def sources(tmp_path_factory):
    path = tmp_path_factory.mktemp("tol") / "d.toml"
    path.write_text(DESIGN, encoding="utf-8")
    catalog = load_catalog()
    design = load_design(path, catalog=catalog)
    return design, {f.part: f for f in factors(design, catalog)}


def test_each_band_from_file_catalog_series_or_default_in_that_order(sources):
    _, f = sources
    expected = {
        "mains": (0.08, 0.06, "the design's mains band"),
        "transformer voltage": (0.05, 0.05, "catalog TRF-CT-2X350-200"),
        "transformer resistance": (0.10, 0.10, "default"),
        "rectifier drop": (0.15, 0.15, "default"),
        "reservoir capacitor": (0.20, 0.20, "catalog CAP-47U-450"),
        "output choke L": (0.15, 0.15, "catalog CHK-5H-300"),
        "output choke DCR": (0.10, 0.10, "default"),
        "output capacitor": (0.10, 0.50, "design file"),  # the file wins
        "driver resistor": (0.01, 0.01, "catalog RES-1W"),  # the class's, not E96's
        "driver capacitor": (0.20, 0.20, "E6 series (IEC 60063)"),
        "input resistor": (0.05, 0.05, "default"),  # on no series
        "input capacitor": (0.10, 0.10, "E12 series (IEC 60063)"),
    }
    assert set(f) == set(expected)
    for part, (low, high, source) in expected.items():
        assert (f[part].low, f[part].high, f[part].source) == (pytest.approx(low),
                                                               pytest.approx(high), source)
    assert f["output capacitor"].distribution == "normal"
    assert f["output capacitor"].band == "-10 % +50 %" and f["driver resistor"].band == "±1 %"


def test_defaults_are_named_for_every_kind():
    assert set(DEFAULT_TOLERANCE) == {"capacitor", "resistor", "choke inductance",
                                      "choke resistance", "transformer voltage",
                                      "transformer resistance", "valve drop"}


def test_silicon_diode_law_spreads_a_decade_either_way(sources):
    design, _ = sources
    from dataclasses import replace

    from supplydesign.design import Rectifier

    si = replace(design, rectifier=Rectifier("silicon", "full-wave"))
    diode = next(f for f in factors(si) if f.part == "diode law")
    m = multipliers([diode], unit_sample(1, 1000, 3))[:, 0]
    assert 0.1 <= m.min() < 0.11 and 9.0 < m.max() <= 10.0
    # log-uniform: the logarithm is uniform on [-ln 10, ln 10] (Kolmogorov-Smirnov)
    assert stats.kstest(np.log(m), stats.uniform(-np.log(10), 2 * np.log(10)).cdf).pvalue > 0.01
    assert diode.band == "÷10 … ×10"


def test_the_same_seed_draws_the_same_builds_and_another_seed_others():
    a, b, c = unit_sample(5, 64, 7), unit_sample(5, 64, 7), unit_sample(5, 64, 8)
    assert np.array_equal(a, b) and not np.allclose(a, c)


def test_latin_hypercube_puts_one_build_in_each_slice_of_every_factor():
    u = unit_sample(4, 50, 1)
    for j in range(4):
        assert np.array_equal(np.sort(np.floor(u[:, j] * 50)), np.arange(50))


def test_uniform_and_normal_bands(sources):
    _, f = sources
    n = 4000
    fs = [f["mains"], f["output capacitor"]]
    m = multipliers(fs, unit_sample(2, n, 11))
    mains, cap = m[:, 0], m[:, 1]
    # uniform over [1 - 8 %, 1 + 6 %]: both ends reached within one slice, mean in the middle
    step = 0.14 / n * 1.01
    assert 0.92 <= mains.min() < 0.92 + step and 1.06 - step < mains.max() < 1.06
    assert np.mean(mains) == pytest.approx(0.99, abs=1e-4)
    # normal, band = 3 sigma, cut at the band: inside it, median at nominal, each side
    # with its own sigma; a normal cut at ±3 sigma keeps 0.9865 of its sigma [derived:
    # sqrt(1 - 2·3·φ(3)/(1 - 2Φ(-3)))]
    assert 0.9 <= cap.min() and cap.max() <= 1.5
    assert np.median(cap) == pytest.approx(1.0, abs=2e-3)
    cut = np.sqrt(1 - 2 * 3 * stats.norm.pdf(3) / (1 - 2 * stats.norm.cdf(-3)))
    below, above = cap[cap < 1] - 1, cap[cap > 1] - 1
    assert np.sqrt(np.mean(below ** 2)) == pytest.approx(0.10 / 3 * cut, rel=0.03)
    assert np.sqrt(np.mean(above ** 2)) == pytest.approx(0.50 / 3 * cut, rel=0.03)


def test_builds_carry_their_multipliers_and_the_mains_in_the_winding(sources):
    design, _ = sources
    fs = factors(design, load_catalog())
    m = multipliers(fs, unit_sample(len(fs), 8, 2))
    col = {f.part: j for j, f in enumerate(fs)}
    own = build_designs(design, fs, m)
    high = build_designs(design, fs, m, mains_factor=1.06)
    oc = design.transformer.open_circuit_v
    for b in range(8):
        assert own[b].transformer.open_circuit_v == pytest.approx(
            oc * m[b, col["mains"]] * m[b, col["transformer voltage"]])
        assert high[b].transformer.open_circuit_v == pytest.approx(
            oc * 1.06 * m[b, col["transformer voltage"]])
        assert own[b].rectifier.drop_v == pytest.approx(20.0 * m[b, col["rectifier drop"]])
        assert own[b].rails[1].link.inductance_h == pytest.approx(
            design.rails[1].link.inductance_h * m[b, col["output choke L"]])
        assert own[b].rails[3].capacitor.capacitance_f == pytest.approx(
            39e-6 * m[b, col["input capacitor"]])
        assert own[b].rails[0].current_a == design.rails[0].current_a  # loads stay


def test_builds_equal_the_designs_dataclasses_replace_makes(sources):
    from dataclasses import replace

    design, _ = sources
    fs = factors(design, load_catalog())
    m = multipliers(fs, unit_sample(len(fs), 3, 4))
    col = {f.target: j for j, f in enumerate(fs)}
    for b, built in enumerate(build_designs(design, fs, m)):
        tr = design.transformer
        rails = []
        for i, r in enumerate(design.rails):
            link = {k: getattr(r.link, k) * m[b, col[("link", i, k)]]
                    for k in ("resistance_ohm", "inductance_h") if ("link", i, k) in col}
            c_f = r.capacitor.capacitance_f * m[b, col[("capacitor", i)]]
            rails.append(replace(r, link=replace(r.link, **link),
                                 capacitor=replace(r.capacitor, capacitance_f=c_f)))
        expected = replace(design, rails=tuple(rails), transformer=replace(
            tr, open_circuit_v=tr.open_circuit_v * m[b, 0] * m[b, 1],
            resistance_ohm=tr.resistance_ohm * m[b, 2]), rectifier=replace(
            design.rectifier, drop_v=design.rectifier.drop_v * m[b, 3]))
        assert built == expected and hash(built) == hash(expected)
