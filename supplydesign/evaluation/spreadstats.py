"""Statistics of many builds: percentiles with their sampling error, yield with its
confidence interval, and what drives a figure's spread.

Every function takes plain arrays over the builds and returns plain floats or
arrays; nothing here knows about circuits.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

#: confidence level of every interval reported
LEVEL = 0.95
#: how the yield's interval is computed, in words for reports
YIELD_CI_METHOD = "Clopper-Pearson, exact binomial"
#: how the drivers are found, in words for reports
DRIVERS_METHOD = "standardized regression coefficients"


@dataclass(frozen=True)
class Percentile:
    """A percentile of the builds and its confidence interval (same unit)."""

    p: float  # the fraction, 0.01 for the 1st percentile
    value: float
    low: float
    high: float


def percentile(x: np.ndarray, p: float, level: float = LEVEL) -> Percentile:
    """The ``p`` quantile of ``x`` and a distribution-free confidence interval for it.

    The interval is spanned by two order statistics x_(l) <= x_(u) chosen so that
    the count of builds below the true quantile, binomial with n and p, lies in
    [l, u - 1] with probability at least ``level``: l = F^-1(α/2), u = F^-1(1 - α/2)
    + 1 for the binomial distribution function F, α = 1 - level. It assumes
    independent builds; a Latin hypercube's percentiles scatter no more than those of
    independent builds for figures that rise or fall with each part (McKay et al.
    1979), so the interval is then on the safe side. NaN entries are ignored.

    Parameters
    ----------
    x : array (N,)
        The figure of every build.
    p : float
        The quantile, 0 < p < 1.
    level : float
        Confidence level of the interval.

    Returns
    -------
    Percentile

    References
    ----------
    .. [1] H. A. David, H. N. Nagaraja, *Order Statistics*, 3rd ed., Wiley (2003),
       §7.1, distribution-free confidence intervals for quantiles (from memory).
    .. [2] JCGM 101:2008, §7.7: a coverage interval from the sorted Monte Carlo
       values (from memory).
    """
    from scipy.stats import binom

    v = np.sort(np.asarray(x, dtype=float)[~np.isnan(x)])
    n = v.size
    if n == 0:
        return Percentile(p, np.nan, np.nan, np.nan)
    alpha = 1.0 - level
    lo = int(binom.ppf(alpha / 2.0, n, p))
    hi = int(binom.ppf(1.0 - alpha / 2.0, n, p)) + 1
    lo, hi = max(lo, 1), min(hi, n)
    return Percentile(p, float(np.quantile(v, p)), float(v[lo - 1]), float(v[hi - 1]))


def yield_interval(passed: int, builds: int, level: float = LEVEL) -> tuple[float, float]:
    """Confidence interval of a yield of ``passed`` out of ``builds`` (Clopper-Pearson).

    References
    ----------
    .. [1] C. J. Clopper, E. S. Pearson, "The use of confidence or fiducial limits
       illustrated in the case of the binomial", Biometrika 26(4), 404-413 (1934).
    """
    from scipy.stats import binomtest

    if builds == 0:
        return (np.nan, np.nan)
    ci = binomtest(int(passed), int(builds)).proportion_ci(confidence_level=level,
                                                           method="exact")
    return float(ci.low), float(ci.high)


def regression_shares(x: np.ndarray, y: np.ndarray) -> tuple[np.ndarray, float]:
    """Each input's share of the variance of ``y`` from standardized regression
    coefficients, and the fit's R².

    A least-squares plane through the builds, y ≈ b0 + Σ b_j x_j; with inputs and
    output scaled to unit standard deviation, β_j = b_j σ_j / σ_y. For independent
    inputs and a figure close to linear in them, β_j² is input j's first-order share
    of the variance and Σ β_j² = R². The sampled inputs are independent only up to
    the sampling (their correlations are of order 1/√N), so the β_j² are scaled to
    sum to R² exactly: the shares then add up to the part of the variance the plane
    explains, and 1 - R² is what it does not (a figure far from linear in the parts,
    or driven by their interactions, where the shares say less).

    Parameters
    ----------
    x : array (N, d)
        Inputs of every build (here the logarithms of the multipliers).
    y : array (N,)
        The figure (here its logarithm); builds with NaN are left out.

    Returns
    -------
    shares : array (d,)
        β_j², 0 for an input that does not vary.
    r2 : float
        Coefficient of determination of the fit (NaN when y does not vary).

    References
    ----------
    .. [1] A. Saltelli et al., *Global Sensitivity Analysis. The Primer*, Wiley
       (2008), §1.2.5, standardized regression coefficients (from memory).
    """
    keep = ~np.isnan(y) & np.all(np.isfinite(x), axis=1)
    x, y = x[keep], y[keep]
    d = x.shape[1]
    shares = np.zeros(d)
    sy = np.std(y)
    if y.size < d + 2 or not sy > 0:
        return shares, np.nan
    sx = np.std(x, axis=0)
    cols = np.flatnonzero(sx > 0)
    z = (x[:, cols] - x[:, cols].mean(axis=0)) / sx[cols]
    a = np.column_stack([np.ones(y.size), z])
    coef, *_ = np.linalg.lstsq(a, (y - y.mean()) / sy, rcond=None)
    resid = (y - y.mean()) / sy - a @ coef
    r2 = float(1.0 - np.mean(resid ** 2))
    beta2 = coef[1:] ** 2
    if beta2.sum() > 0:
        shares[cols] = beta2 / beta2.sum() * max(r2, 0.0)
    return shares, r2
