"""Constructive starting designs and the dropping-resistor repair.

The DC of a dropper chain is nearly fixed by the brief. Every stage draws a
constant current, so the DC through each link is the sum of the stage currents
(and bleeders) at and below its rail, whatever the parts are; once the DC at the
rectifier output is known, each rail's DC follows down the tree as
V_rail = V_parent - I_through R_link, and a dropping resistor that puts its rail
on target is R = (V_parent - V_target) / I_through. Each section's capacitance
follows from the hum it has to remove: a resistor section passes about
1/(ωRC) of its input ripple, a choke section about 1/(ω²LC) above its resonance.

Two uses:

- :func:`starting_designs` builds designs of every search topology (each
  transformer and rectifier choice, each allowed kind of every open link) from
  these rules, for a spread of hum margins, snapped to the E24 and catalog
  values nearest to them. They seed the search, which explores around them.
- :func:`repair` moves every dropping resistor whose rail would miss its DC
  window to the nearest E24 value that puts it inside, using the rectifier
  output's DC as evaluated for candidates of the same kind (:class:`OutputDC`).
  Resistors already inside their window are left alone, so the search still
  explores within it.

Inactive variables (the resistor value of a link that is a choke, and so on)
are set to 0 by :func:`supplydesign.synth.space.canonical` first, so that two
candidates that build the same circuit are one candidate.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass

import numpy as np

from ..circuit import formulas
from .space import (
    KIND_RESISTOR,
    KIND_WIRE,
    Decoded,
    SearchSpace,
    canonical,
    decode,
    rows_in,
)

#: hum margins the starting designs are sized for: each rail's ripple at its allowance
#: divided by these (2 dB, 8 dB, 16 dB, 24 dB), so that the seeds spread along the
#: trade between hum and cost
SEED_MARGINS = (1.25, 2.5, 6.0, 16.0)
#: share of a rail's DC tolerance the repair aims inside (the DC estimate of a candidate
#: not yet evaluated is good to a few volts, not exact)
REPAIR_SHARE = 0.6
#: attenuation a section without a hum allowance of its own is sized for
DEFAULT_ATTENUATION = 3.0
#: a choke input's choke is chosen at least this far above its critical inductance
CRITICAL_MARGIN = 1.25


@dataclass(frozen=True)
class Chain:
    """What the brief fixes about the DC of its rails.

    Attributes
    ----------
    parent : numpy.ndarray of int, shape (R,)
        Parent rail of each rail, -1 for the rectifier output.
    through_a : numpy.ndarray, shape (R,)
        DC through each rail's link at full signal: the loads (stage currents,
        resistive loads and bleeders at their target voltage) of the rail and of
        every rail below it [A].
    idle_through_a : numpy.ndarray, shape (R,)
        The same at idle current [A].
    """

    parent: np.ndarray
    through_a: np.ndarray
    idle_through_a: np.ndarray

    @property
    def on_output(self) -> np.ndarray:
        return np.flatnonzero(self.parent < 0)


def chain_of(space: SearchSpace) -> Chain:
    """The :class:`Chain` of the space's brief."""
    brief = space.brief
    R = len(brief.rails)
    parent = np.array([brief.parent_index(i) for i in range(R)], dtype=int)
    full, idle = np.zeros(R), np.zeros(R)
    for i, rail in enumerate(brief.rails):
        v = rail.voltage_v or 0.0
        resistive = v / rail.load_resistance_ohm if rail.load_resistance_ohm else None
        bleed = v / rail.bleeder_ohm if rail.bleeder_ohm else 0.0
        full[i] = (rail.current_a if resistive is None else resistive) + bleed
        idle[i] = (rail.idle_a if resistive is None else resistive) + bleed
    through, idle_through = full.copy(), idle.copy()
    for i in range(R - 1, -1, -1):  # children come after their parents
        if parent[i] >= 0:
            through[parent[i]] += through[i]
            idle_through[parent[i]] += idle_through[i]
    return Chain(parent, through, idle_through)


def rail_dc_v(chain: Chain, dec: Decoded, output_v: np.ndarray) -> np.ndarray:
    """Each rail's DC down the tree from the rectifier output's DC [V], (n, R)."""
    n, R = dec.kind.shape
    v = np.zeros((n, R))
    for i in range(R):
        vp = output_v if chain.parent[i] < 0 else v[:, chain.parent[i]]
        v[:, i] = vp - chain.through_a[i] * dec.resistance[:, i]
    return v


class OutputDC:
    """The rectifier output's DC of evaluated candidates, looked up for new ones.

    It depends on the transformer, the rectifier and the parts wired to the
    rectifier output (the reservoir, or a choke input's choke), not on anything
    further down (every stage draws a constant current). A candidate is matched
    to evaluated ones with the same transformer, rectifier and link kinds at the
    output, and among those to the one nearest in the other variables of the
    output rails (their capacitor, resistor or choke index).
    """

    def __init__(self, space: SearchSpace, chain: Chain):
        self.space, self.chain = space, chain
        exact = [space.var_transformer, space.var_rectifier]
        near = []
        for i in chain.on_output:
            rs = space.rails[i]
            exact.append(rs.var_kind)
            near += [rs.var_r, rs.var_choke, rs.var_cap]
        self.exact = np.array([j for j in exact if j >= 0], dtype=int)
        self.near = np.array([j for j in near if j >= 0], dtype=int)
        self.X = np.zeros((0, space.n_var), dtype=int)
        self.dc = np.zeros(0)

    def output_v(self, dec: Decoded, rail_dc_v: np.ndarray) -> np.ndarray:
        """The rectifier output's DC of solved candidates from their rail DCs [V], (n,)."""
        i = int(self.chain.on_output[0])
        return rail_dc_v[:, i] + self.chain.through_a[i] * dec.resistance[:, i]

    def learn(self, X: np.ndarray, dec: Decoded, rail_dc_v: np.ndarray,
              converged: np.ndarray) -> None:
        """Remember the output DC of solved candidates (settled ones only)."""
        v = self.output_v(dec, rail_dc_v)
        ok = converged & np.isfinite(v)
        X_all = np.concatenate([self.X, np.asarray(X, dtype=int)[ok]])
        dc_all = np.concatenate([self.dc, v[ok]])
        # one entry per set of the variables that matter (the first solved)
        cols = np.concatenate([self.exact, self.near])
        _, first = np.unique(X_all[:, cols], axis=0, return_index=True)
        first = np.sort(first)
        self.X, self.dc = X_all[first], dc_all[first]

    def estimate(self, X: np.ndarray) -> np.ndarray:
        """The output DC of candidates (n,) [V]; NaN where nothing comparable was solved."""
        X = np.asarray(X, dtype=int)
        out = np.full(len(X), np.nan)
        if len(self.dc) == 0 or len(X) == 0:
            return out
        same = np.all(X[:, None, self.exact] == self.X[None, :, self.exact], axis=2)
        dist = np.sum(np.abs(X[:, None, self.near] - self.X[None, :, self.near]), axis=2)
        dist = np.where(same, dist, np.iinfo(np.int64).max)
        j = np.argmin(dist, axis=1)
        found = same[np.arange(len(X)), j]
        out[found] = self.dc[j[found]]
        return out


def repair(space: SearchSpace, chain: Chain, X: np.ndarray, output: OutputDC) -> np.ndarray:
    """Canonical variables with every dropping resistor moved into its DC window.

    For each rail in tree order, a rail whose link is an open resistor and which
    has a DC target gets, when its estimated DC lies outside REPAIR_SHARE of its
    tolerance, the E24 value inside that window nearest to its present value
    (or, if none lies inside, the value nearest to R = (V_parent - V_target) /
    I_through). Candidates whose output DC cannot be estimated yet are left as
    they are.
    """
    X = canonical(space, X)
    if len(X) == 0:
        return X
    dec = decode(space, X)
    vp_out = output.estimate(X)
    vals = space.resistor_values
    log_vals = np.log(vals)
    n, R = dec.kind.shape
    v = np.zeros((n, R))
    for i, (rail, rs) in enumerate(zip(space.brief.rails, space.rails, strict=True)):
        vp = vp_out if chain.parent[i] < 0 else v[:, chain.parent[i]]
        r_now = dec.resistance[:, i]
        current = chain.through_a[i]
        if rs.var_r >= 0 and rail.voltage_v is not None and current > 0:
            band = REPAIR_SHARE * rail.tolerance * rail.voltage_v
            lo = (vp - rail.voltage_v - band) / current  # resistance for the top of the band
            hi = (vp - rail.voltage_v + band) / current
            fix = (dec.kind[:, i] == KIND_RESISTOR) & np.isfinite(vp) & ((r_now < lo)
                                                                         | (r_now > hi))
            if fix.any():
                inside = (vals[None, :] >= lo[fix, None]) & (vals[None, :] <= hi[fix, None])
                near_now = np.abs(log_vals[None, :] - np.log(r_now[fix])[:, None])
                pick = np.argmin(np.where(inside, near_now, np.inf), axis=1)
                ideal = np.maximum((vp[fix] - rail.voltage_v) / current, vals[0])
                nearest = np.argmin(np.abs(log_vals[None, :] - np.log(ideal)[:, None]), axis=1)
                X[fix, rs.var_r] = np.where(inside.any(axis=1), pick, nearest)
                r_now = np.where(fix, 0.0, r_now)
                r_now[fix] = vals[X[fix, rs.var_r]]
        v[:, i] = vp - current * r_now
    return X


def _snap_up(values: np.ndarray, x: float) -> int:
    """Index of the smallest value not below x (the largest when none is)."""
    return int(min(np.searchsorted(values, x * (1.0 - 1e-9)), len(values) - 1))


def _estimate_output_v(space: SearchSpace, chain: Chain, t: int, r: int,
                       capacitor_input: bool, reservoir_f: float) -> float:
    """A first estimate of the rectifier output's DC before anything is solved [V].

    Capacitor input: the winding's crest less the rectifier's drop at the
    charging pulses' peak (about four times the DC per anode, a rough figure),
    the winding's resistance at that peak, and half the ripple; choke input: the
    mean of the rectified sine, 2√2/π V_rms (half that for half-wave), less the
    DC through the winding's resistance. Only the first starting designs use it:
    the search learns the real figure from them (:class:`OutputDC`).
    """
    tr, rect = space.transformers[t], space.rectifiers[r]
    current = float(np.sum(chain.through_a[chain.on_output]))
    f = space.brief.mains.frequency_hz
    half = rect.arrangement == "half-wave"
    anodes = 1 if half else 2
    per_anode = current / anodes
    pulse = 4.0 * per_anode * anodes
    if rect.kind == "valve" and rect.drop_v and rect.drop_current_a:
        drop = rect.drop_v * (pulse / rect.drop_current_a) ** (2.0 / 3.0)
    else:
        drop = 0.8 * (2 if rect.arrangement == "bridge" else 1)
    if capacitor_input:
        pp = current / (formulas.ripple_frequency_hz(f, rect.arrangement) * reservoir_f)
        v = np.sqrt(2.0) * tr.open_circuit_v - drop - pulse * tr.resistance_ohm - pp / 2.0
    else:
        mean = float(formulas.choke_input_dc_v(tr.open_circuit_v)) * (0.5 if half else 1.0)
        v = mean - drop / 2.0 - current * tr.resistance_ohm
    return float(max(v, 0.1 * tr.open_circuit_v))


def _kind_patterns(space: SearchSpace, limit: int = 16) -> list[tuple[int, ...]]:
    """Link kinds per rail to seed: every combination of the allowed kinds, or, when
    there are more than ``limit``, each kind on every rail at once and each rail
    alone switched to each of its other kinds."""
    options = [rs.kinds if rs.fixed_link is None else rs.kinds[:1] for rs in space.rails]
    count = int(np.prod([len(o) for o in options]))
    if count <= limit:
        return list(itertools.product(*options))
    out = set()
    for k in {k for o in options for k in o}:
        out.add(tuple(k if k in o else o[0] for o in options))
    base = tuple(o[0] for o in options)
    for i, o in enumerate(options):
        for k in o[1:]:
            out.add(base[:i] + (k,) + base[i + 1:])
    return sorted(out)


def _choke_for(space: SearchSpace, current_a: float, min_l_h: float, v_parent: float,
               window: tuple[float, float] | None) -> int:
    """Row of the catalog choke for a section: rated for the current, above ``min_l_h``,
    keeping the rail in its DC window where one is given; the cheapest such, else the
    closest to those conditions."""
    ch = space.chokes
    ok = ch["current_rating_a"] >= current_a
    if not ok.any():
        return int(np.argmax(ch["current_rating_a"]))
    good = ok & (ch["inductance_h"] >= min_l_h)
    if window is not None:
        v = v_parent - current_a * ch["resistance_ohm"]
        in_window = good & (v >= window[0]) & (v <= window[1])
        if in_window.any():
            good = in_window
    if not good.any():
        return int(np.flatnonzero(ok)[np.argmax(ch["inductance_h"][ok])])
    rows = np.flatnonzero(good)
    return int(rows[np.lexsort((-ch["inductance_h"][rows], ch["price"][rows]))[0]])


def _seed(space: SearchSpace, chain: Chain, t: int, r: int, kinds: tuple[int, ...],
          margin: float) -> np.ndarray:
    """One starting design (its integer variables) of one topology and hum margin."""
    brief = space.brief
    rect = space.rectifiers[r]
    x = np.zeros(space.n_var, dtype=int)
    if space.var_transformer >= 0:
        x[space.var_transformer] = t
    if space.var_rectifier >= 0:
        x[space.var_rectifier] = r
    f = brief.mains.frequency_hz
    w_r = 2.0 * np.pi * formulas.ripple_frequency_hz(f, rect.arrangement)
    caps = space.capacitances
    R = len(brief.rails)
    v, ripple = np.zeros(R), np.zeros(R)
    out_rails = chain.on_output
    capacitor_input = any(kinds[i] == KIND_WIRE and brief.rails[i].capacitor is not None
                          for i in out_rails)
    i_out = float(np.sum(chain.through_a[out_rails]))

    def target(i: int, parent_ripple: float) -> float:
        hum = brief.rails[i].hum_v
        return hum / margin if hum is not None else parent_ripple / DEFAULT_ATTENUATION

    def set_cap(i: int, c_need: float) -> float:
        rs = space.rails[i]
        if rs.cap_open:
            limit = rect.max_reservoir_f if (chain.parent[i] < 0 and kinds[i] == KIND_WIRE) \
                else None
            j = _snap_up(caps, c_need)
            if limit is not None and caps[j] > limit:
                j = max(int(np.searchsorted(caps, limit * (1 + 1e-9))) - 1, 0)
            x[rs.var_cap] = j
            return float(caps[j])
        return rs.fixed_cap.capacitance_f if rs.fixed_cap is not None else 0.0

    # the rectifier output: a reservoir, or the rectified sine before a choke
    reservoir = 0.0
    if capacitor_input:
        first = next(i for i in out_rails if kinds[i] == KIND_WIRE
                     and brief.rails[i].capacitor is not None)
        hum0 = target(first, np.inf)
        if not np.isfinite(hum0):
            hum0 = 0.01 * np.sqrt(2.0) * space.transformers[t].open_circuit_v
        c_need = i_out / (2.0 * np.sqrt(3.0) * formulas.ripple_frequency_hz(f, rect.arrangement)
                          * hum0)
        reservoir = set_cap(first, c_need)
    v_out = _estimate_output_v(space, chain, t, r, capacitor_input, max(reservoir, 1e-9))
    ripple_out = (float(formulas.reservoir_ripple_rms_v(i_out, reservoir, f, rect.arrangement))
                  if capacitor_input else
                  v_out * (1.21 if rect.arrangement == "half-wave" else 0.4834))
    for i, (rail, rs) in enumerate(zip(brief.rails, space.rails, strict=True)):
        p = chain.parent[i]
        vp, rp = (v_out, ripple_out) if p < 0 else (v[p], ripple[p])
        current = chain.through_a[i]
        window = None
        if rail.voltage_v is not None:
            band = REPAIR_SHARE * rail.tolerance * rail.voltage_v
            window = (rail.voltage_v - band, rail.voltage_v + band)
        kind = kinds[i]
        if rs.var_kind >= 0:
            x[rs.var_kind] = rs.kinds.index(kind)
        want = target(i, rp)
        if kind == KIND_WIRE:
            v[i] = vp
            if capacitor_input and chain.parent[i] < 0:
                ripple[i] = ripple_out
            else:
                set_cap(i, 0.0)
                ripple[i] = rp
            continue
        if rs.fixed_link is not None:
            res = rs.fixed_link.resistance_ohm or 0.0
            ind = rs.fixed_link.inductance_h or 0.0
        elif kind == KIND_RESISTOR:
            if current <= 0:
                ideal = 10e3
            elif rail.voltage_v is not None:
                ideal = (vp - rail.voltage_v) / current
            else:
                ideal = 0.05 * vp / current
            vals = space.resistor_values
            j = int(np.argmin(np.abs(np.log(vals) - np.log(max(ideal, vals[0])))))
            x[rs.var_r] = j
            res, ind = float(vals[j]), 0.0
        else:
            min_l = 0.0
            if p < 0 and not capacitor_input:  # choke input: above the critical inductance
                r_load = v_out / max(chain.idle_through_a[i], 1e-6)
                min_l = CRITICAL_MARGIN * float(formulas.critical_inductance_h(
                    r_load, f, rect.arrangement))
            row = _choke_for(space, current, min_l, vp, window)
            x[rs.var_choke] = row
            res, ind = (float(space.chokes["resistance_ohm"][row]),
                        float(space.chokes["inductance_h"][row]))
        v[i] = vp - current * res
        atten = max(rp / want, 1.0)
        if ind > 0:
            if p < 0 and not capacitor_input and rect.arrangement != "half-wave":
                gamma = want / max(v[i], 1.0)
                c = set_cap(i, (np.sqrt(2.0) / (3.0 * gamma) + 1.0) / (w_r**2 * ind))
                ripple[i] = float(formulas.choke_input_ripple_rms_v(v[i], ind, max(c, 1e-12), f))
            else:
                c = set_cap(i, (atten + 1.0) / (w_r**2 * ind))
                ripple[i] = rp * float(formulas.lc_attenuation(ind, max(c, 1e-12), w_r))
        else:
            c = set_cap(i, np.sqrt(max(atten**2 - 1.0, 0.0)) / (w_r * max(res, 1e-3)))
            ripple[i] = rp * float(formulas.rc_attenuation(res, c, w_r))
    return x


def starting_designs(space: SearchSpace, chain: Chain, limit: int,
                     margins: tuple[float, ...] | None = None) -> np.ndarray:
    """Starting designs of every search topology, at each hum margin (canonical rows).

    Topologies: every transformer and rectifier of the brief's choices, and every
    pattern of link kinds (:func:`_kind_patterns`). At most ``limit`` rows: every
    topology at the middle margins first, then at the outer ones.
    """
    margins = SEED_MARGINS if margins is None else margins
    rows = []
    patterns = _kind_patterns(space)
    order = sorted(range(len(margins)), key=lambda k: abs(k - (len(margins) - 1) / 2))
    for k in order:
        for t in range(len(space.transformers)):
            for r in range(len(space.rectifiers)):
                for kinds in patterns:
                    rows.append(_seed(space, chain, t, r, kinds, margins[k]))
    X = canonical(space, np.array(rows, dtype=int).reshape(-1, space.n_var))
    _, first = np.unique(X, axis=0, return_index=True)
    X = X[np.sort(first)]
    return X[:limit]


def neighbours(space: SearchSpace, X: np.ndarray) -> np.ndarray:
    """Every candidate one step from a row of X in one variable (the next value up or
    down: the next E24 resistor, capacitor or catalog choke, the other link kind),
    canonical and without repeats: the designs next to a front, where the front most
    likely grows (a Pareto local search, [1]_).

    References
    ----------
    .. [1] L. Paquete, M. Chiarandini, T. Stützle, "Pareto local optimum sets in the
       biobjective traveling salesman problem: an experimental study", in
       *Metaheuristics for Multiobjective Optimisation*, LNEMS 535, Springer (2004),
       177-199.
    """
    X = np.asarray(X, dtype=int)
    if len(X) == 0 or space.n_var == 0:
        return np.zeros((0, space.n_var), dtype=int)
    _, xu = space.bounds()
    steps = np.concatenate([np.eye(space.n_var, dtype=int), -np.eye(space.n_var, dtype=int)])
    moved = (X[:, None, :] + steps[None, :, :]).reshape(-1, space.n_var)
    ok = np.all((moved >= 0) & (moved <= xu.astype(int)), axis=1)
    moved = canonical(space, moved[ok])
    # a step in an inactive variable leads back to where it started
    moved = moved[~rows_in(moved, X)]
    _, first = np.unique(moved, axis=0, return_index=True)
    return moved[np.sort(first)]
