"""The yield of synthesised designs over many builds: ``synth --yield N`` and
``--min-yield``.

Every design of the *shown set* gets ``N`` builds, each part within its tolerance
and the mains across its band (:func:`supplydesign.evaluation.spread.build_yields`,
the same builds ``supplydesign spread`` draws with the same seed), all designs'
builds solved together. Its yield and the 95 % interval become reported columns of
the design (``yield``, ``yield_low``, ``yield_high`` in ``Candidate.columns``, and so
in pareto.json). With a least yield, the designs below it are dropped and the picks
chosen again among the rest.

The shown set is the designs a synthesis marks ``shown`` (the short representative
set of the console and report.html), once it marks them; until then, the designs the
console lists: the first ``limit`` of the set and every pick.
"""

from __future__ import annotations

from dataclasses import replace

from ..evaluation.spread import build_yields
from .problem import SEARCH_STEPS
from .run import SynthResult, _picks

#: the reported columns a yield adds to a design
YIELD_COLUMNS = ("yield", "yield_low", "yield_high")


def shown(result: SynthResult, limit: int = 25) -> list[int]:
    """Indices of the shown designs (see module docstring)."""
    flags = [getattr(c, "shown", None) for c in result.designs]
    if flags and all(f is not None for f in flags):
        return [i for i, f in enumerate(flags) if f]
    return sorted(set(range(min(limit, len(result.designs))))
                  | {i for i, _ in result.picks.values()})


def add_yields(result: SynthResult, catalog, *, builds: int, seed: int, limit: int = 25,
               steps: int = SEARCH_STEPS, progress=None) -> list[int]:
    """Give every shown design its yield over ``builds`` builds; returns their indices."""
    idx = shown(result, limit)
    if not idx:
        return []
    yields = build_yields([result.designs[i].design for i in idx], catalog, builds=builds,
                          seed=seed, steps=steps, progress=progress)
    for i, y in zip(idx, yields, strict=True):
        result.designs[i].columns.update(zip(YIELD_COLUMNS, (y.fraction, *y.ci), strict=True))
    result.extra["yield"] = {"builds": builds, "seed": seed, "measured": len(idx)}
    return idx


def keep_min_yield(result: SynthResult, least: float) -> SynthResult:
    """The result without the designs whose yield is below ``least`` (or was not
    measured), the picks chosen again among the rest; an explanation when none is left."""
    keep = [c for c in result.designs if c.columns.get("yield", -1.0) >= least]
    extra = {**result.extra, "min_yield": least,
             "below_min_yield": len(result.designs) - len(keep)}
    if keep:
        return replace(result, designs=keep, picks=_picks(keep), extra=extra)
    measured = [(c.columns["yield"], k) for k, c in enumerate(result.designs)
                if "yield" in c.columns]
    why = [f"no shown design reaches a yield of {100 * least:.3g} %"]
    if measured:
        best, k = max(measured)
        why[0] += (f"; the highest is {100 * best:.1f} % (#{k + 1}, "
                   f"{result.designs[k].notation}, cost {result.designs[k].cost:.2f})")
    return replace(result, designs=[], picks={}, explanation=why, extra=extra)
