"""Statistics of many builds (supplydesign.evaluation.spreadstats) against their
definitions and known distributions."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from supplydesign.evaluation.spreadstats import (
    YIELD_CI_METHOD,
    percentile,
    regression_shares,
    yield_interval,
)


@pytest.mark.parametrize("k,n", [(0, 50), (7, 50), (93, 100), (1860, 2000), (2000, 2000)])
def test_yield_interval_is_clopper_pearson(k, n):
    # Clopper & Pearson, Biometrika 26 (1934) [derived: their interval is the α/2 and
    # 1 - α/2 quantiles of Beta(k, n - k + 1) and Beta(k + 1, n - k), 0 and 1 at the ends]
    low = stats.beta.ppf(0.025, k, n - k + 1) if k > 0 else 0.0
    high = stats.beta.ppf(0.975, k + 1, n - k) if k < n else 1.0
    assert yield_interval(k, n) == (pytest.approx(low, abs=1e-9), pytest.approx(high, abs=1e-9))
    assert YIELD_CI_METHOD.startswith("Clopper-Pearson")


def test_yield_interval_at_zero_failures_and_on_a_known_binomial():
    # every build passes: the lower limit solves p^n = α/2 [derived from the definition]
    assert yield_interval(300, 300)[0] == pytest.approx(0.025 ** (1 / 300), rel=1e-9)
    # a known binomial, p = 0.93 over 200 builds: the exact interval covers p in at least
    # 95 % of 2000 repetitions (it is conservative by construction) [derived]
    rng = np.random.default_rng(5)
    draws = rng.binomial(200, 0.93, size=2000)
    covers = {k: yield_interval(k, 200)[0] <= 0.93 <= yield_interval(k, 200)[1]
              for k in np.unique(draws)}
    assert np.mean([covers[k] for k in draws]) >= 0.95


def test_percentile_interval_covers_a_known_quantile():
    # uniform builds on [0, 1): the p quantile is p [derived]; the order-statistic
    # interval covers it in at least 95 % of repetitions (it is distribution-free)
    rng = np.random.default_rng(2)
    for p in (0.01, 0.5, 0.99):
        hits = [percentile(rng.random(400), p) for _ in range(600)]
        cover = np.mean([h.low <= p <= h.high for h in hits])
        assert cover >= 0.94, (p, cover)  # 0.95 less the scatter of 600 repetitions
        assert np.all([h.low <= h.value <= h.high for h in hits])


def test_percentile_ignores_builds_without_a_figure():
    x = np.array([1.0, np.nan, 3.0, 2.0, np.nan])
    assert percentile(x, 0.5).value == 2.0
    assert np.isnan(percentile(np.full(3, np.nan), 0.5).value)


def test_regression_shares_of_a_linear_figure():
    # y = 3 x1 + x2 with x1, x2, x3 independent and of equal spread: x1 holds 9/10 of the
    # variance, x2 1/10, x3 none, and the plane explains all of it [derived]
    rng = np.random.default_rng(4)
    x = rng.uniform(-1, 1, size=(3000, 3))
    shares, r2 = regression_shares(x, 3 * x[:, 0] + x[:, 1])
    assert r2 == pytest.approx(1.0, abs=1e-12)
    assert shares == pytest.approx([0.9, 0.1, 0.0], abs=0.01)
    # noise the inputs do not explain lowers R² and the shares with it
    noisy = 3 * x[:, 0] + x[:, 1] + rng.normal(0, np.sqrt(10 / 3), 3000)
    shares, r2 = regression_shares(x, noisy)
    assert r2 == pytest.approx(0.5, abs=0.03) and shares.sum() == pytest.approx(r2)


def test_regression_shares_of_a_constant_input_or_output():
    x = np.column_stack([np.linspace(0, 1, 50), np.ones(50)])
    shares, r2 = regression_shares(x, 2 * x[:, 0])
    assert shares == pytest.approx([1.0, 0.0])
    shares, r2 = regression_shares(x, np.ones(50))
    assert np.isnan(r2) and not shares.any()
