"""The JSON of ``supplydesign spread --json`` (shared/FORMAT.md, "spread --json").

The contract's keys, exactly: ``builds``, ``seed``, ``yield``, ``yield_ci`` and per
rail ``name``, ``yield``, ``dc_v`` {mean, p1, p50, p99}, ``ripple_rms_v`` {p50, p99}
and ``drivers`` [{part, share}] (of the DC). Added beside them:

- top level: ``converged`` (builds whose steady states settled), ``passed``,
  ``yield_ci_method``, ``sampling``, ``drivers_method``, ``no_load_method``,
  ``tolerances`` [{part, low, high, distribution, source}] (fractions) and
  ``stresses`` [{part, what, unit, p99, p99_ci, rating, over}] (``over``: builds
  above the rating; ``rating`` null where the design gives none);
- per rail: ``yield_ci``, ``passed``; in ``dc_v`` and ``ripple_rms_v`` a
  ``pNN_ci`` [low, high] beside every percentile (95 %, order statistics);
  ``regulation_pct`` {p1, p50, p99} (the DC change from idle to full signal, % of
  the full-signal DC); ``drivers_r2``; ``hum_drivers`` [{part, share}] and
  ``hum_drivers_r2``.

Shares are fractions of the variance of the figure's logarithm; every factor is
listed, largest first.
"""

from __future__ import annotations

import math

from ..evaluation.spread import SpreadSummary
from ..evaluation.spreadstats import DRIVERS_METHOD, YIELD_CI_METHOD

SAMPLING = "Latin hypercube (scipy.stats.qmc.LatinHypercube)"


def _num(x: float | None) -> float | None:
    return None if x is None or not math.isfinite(x) else float(x)


def _percentiles(ps) -> dict:
    out = {}
    for p in ps:
        key = f"p{round(100 * p.p)}"
        out[key] = _num(p.value)
        out[f"{key}_ci"] = [_num(p.low), _num(p.high)]
    return out


def _drivers(drivers) -> list[dict]:
    return [{"part": d.part, "share": round(float(d.share), 6)} for d in drivers]


def spread_json(s: SpreadSummary) -> dict:
    """The JSON object of a spread (see module docstring)."""
    rails = []
    for r in s.rails:
        rails.append({
            "name": r.name, "yield": r.yield_, "yield_ci": [_num(x) for x in r.yield_ci],
            "passed": r.passed,
            "dc_v": {"mean": _num(r.dc_mean_v), **_percentiles(r.dc_v)},
            "ripple_rms_v": _percentiles(r.hum_v),
            "regulation_pct": {k: v for k, v in _percentiles(r.regulation_pct).items()
                               if not k.endswith("_ci")},
            "drivers": _drivers(r.dc_drivers), "drivers_r2": _num(r.dc_r2),
            "hum_drivers": _drivers(r.hum_drivers), "hum_drivers_r2": _num(r.hum_r2),
        })
    return {
        "builds": s.builds, "seed": s.seed,
        "yield": s.yield_, "yield_ci": [_num(x) for x in s.yield_ci],
        "yield_ci_method": YIELD_CI_METHOD, "passed": s.passed, "converged": s.converged,
        "sampling": SAMPLING, "drivers_method": DRIVERS_METHOD,
        "no_load_method": s.no_load_method,
        "rails": rails,
        "tolerances": [{"part": f.part, "low": f.low, "high": f.high,
                        "distribution": f.distribution, "source": f.source}
                       for f in s.factors],
        "stresses": [{"part": x.part, "what": x.what, "unit": x.unit,
                      "p99": _num(x.at_percentile.value),
                      "p99_ci": [_num(x.at_percentile.low), _num(x.at_percentile.high)],
                      "rating": _num(x.rating), "over": x.over} for x in s.stresses],
    }
