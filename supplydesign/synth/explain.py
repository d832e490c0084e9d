"""Why a brief has no feasible design: the binding limits, with numbers.

Two kinds of reasons: limits that no choice can meet (checked from the brief and
the parts before any search: the transformer's crest below a rail's lowest
allowed voltage, no catalog choke carrying a rail's current), and the
constraints that no evaluated candidate met, each with the closest any came.
"""

from __future__ import annotations

import numpy as np

from ..units import format_si
from .problem import evaluate_population
from .score import CAP_VOLTAGE_MARGIN
from .space import KIND_CHOKE, SearchSpace


def structural(space: SearchSpace) -> list[str]:
    """Limits no choice can meet, found without solving anything."""
    out = []
    brief = space.brief
    crest = max(np.sqrt(2.0) * t.open_circuit_v for t in space.transformers)
    for i, rail in enumerate(brief.rails):
        if rail.voltage_v is not None:
            lowest = rail.voltage_v * (1.0 - rail.tolerance)
            if crest < lowest:
                out.append(f'rail "{rail.name}": the highest transformer crest is '
                           f"{format_si(crest, 'V')}, below the lowest allowed DC "
                           f"{format_si(lowest, 'V')} even with zero-drop links and no load")
        rs = space.rails[i]
        if rs.kinds == (KIND_CHOKE,) and rs.fixed_link is None:
            through = sum(r.current_a for j, r in enumerate(brief.rails)
                          if j >= i and _below(brief, j, i))
            best = float(np.max(space.chokes["current_rating_a"]))
            if through > best:
                out.append(f'rail "{rail.name}": its choke carries {format_si(through, "A")}, '
                           f"more than any catalog choke is rated for "
                           f"({format_si(best, 'A')})")
    return out


def _below(brief, j: int, i: int) -> bool:
    """Is rail j rail i or hanging below it?"""
    while j >= 0:
        if j == i:
            return True
        j = brief.parent_index(j)
    return False


def explain(space: SearchSpace, X: np.ndarray, F: np.ndarray, G: np.ndarray) -> list[str]:
    """One line per binding limit, most violated first."""
    lines = structural(space)
    names = evaluate_population(space, X[:1]).scores.names
    best = np.min(G, axis=0)  # the closest any candidate came to each constraint
    unmet = [k for k in np.argsort(-best) if best[k] > 0]
    brief = space.brief
    for k in unmet:
        name = names[k]
        j = int(np.argmin(G[:, k]))
        if name.endswith(" DC"):
            rail_name = name.split('"')[1]
            i = brief.rail_index(rail_name)
            rail = brief.rails[i]
            res = evaluate_population(space, X[j:j + 1])
            dc = float(res.full.dc_v[0, i])
            lo, hi = rail.voltage_v * (1 - rail.tolerance), rail.voltage_v * (1 + rail.tolerance)
            lines.append(f"{name}: the closest candidate gives {format_si(dc, 'V', 4)} "
                         f"against {format_si(lo, 'V', 4)}..{format_si(hi, 'V', 4)}")
        elif name.endswith(" capacitor voltage"):
            crest = min(np.sqrt(2.0) * t.open_circuit_v for t in space.transformers) \
                * (1.0 + brief.mains.high)
            lines.append(f"{name}: with no load at high mains every capacitor charges to the "
                         f"crest, {format_si(crest, 'V')} at least; with the "
                         f"{100 * CAP_VOLTAGE_MARGIN:.0f} % margin it needs a "
                         f"{format_si(crest * (1 + CAP_VOLTAGE_MARGIN), 'V')} rating, "
                         f"{100 * best[k]:.0f} % more than the best available")
        elif name.endswith(" hum"):
            lines.append(f"{name}: the quietest candidate is {20 * np.log10(1 + best[k]):.1f} dB "
                         "above the allowance")
        else:
            lines.append(f"{name}: no candidate within the limit; the closest is "
                         f"{100 * best[k]:.0f} % over")
    if not lines:
        lines.append("no candidate met every constraint at once, though each was met by some;"
                     " try a larger search (more generations or a larger population)")
    return lines
