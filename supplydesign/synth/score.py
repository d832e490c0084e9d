"""From a population's figures to parts, cost, objectives and constraints (arrays).

Objectives (all minimised):

- ``hum_db``: every rail's ripple against its allowance, as one power sum,
  10 log10 sum_i (ripple_i / hum_i)^2 [dB] over the rails that state ``hum``
  (0 dB: one rail exactly at its allowance, the others silent; every rail at its
  allowance gives 10 log10 N). Better filtering of any rail lowers it. Each rail's
  allowance stays a constraint; the worst rail's margin, -20 log10 max_i(ripple_i /
  hum_i), is a reported column (``hum_margin_db``), not an objective. A brief with
  no ``hum`` anywhere sums the ripple itself, in dB re 1 V rms;
- ``regulation_pct``: the worst rail's DC change from idle to full-signal current,
  in % of the full-signal DC;
- ``peak``: rectifier peak current per anode over its rating (a ratio), or in A
  where the rectifier has no rating;
- ``cost``: the price of every part the search chooses plus the brief's priced parts.

Reported columns (``COLUMNS``) are figures shown beside the objectives but not
searched on.

Constraints are columns of G, feasible where <= 0, each named for explanations.
Part ratings follow common practice: a capacitor rated for the no-load voltage at
high mains plus ``CAP_VOLTAGE_MARGIN``; a resistor of at least twice its
dissipation (``RESISTOR_POWER_FACTOR``). At the air temperature of each rail
(``[chassis] ambient``, a rail's ``ambient``): a capacitor's ripple current within
its rating derated there, a resistor's dissipation within its power derated from
70 degC (IEC 60115-1), the HT winding's rms within its rating
(:mod:`supplydesign.parts.derating`), and with ``[chassis] min_life`` every chosen
electrolytic's estimated life at least that. After the solve, every open
capacitor is the cheapest part of its capacitance that meets these for the ripple
current found (the solve used the cheapest part for the voltage alone).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..parts import derating
from ..parts.pricing import rectifier_pieces
from ..parts.rating import RULES
from ..parts.rating import choose_capacitors as cheapest_capacitors
from ..parts.rating import choose_resistors as cheapest_resistors
from .space import KIND_CHOKE, KIND_RESISTOR, KIND_WIRE, Decoded, SearchSpace

OBJECTIVES = ("hum_db", "regulation_pct", "peak", "cost")
#: reported beside the objectives, not searched on
COLUMNS = ("hum_margin_db", "shortest_life_h")
#: resolution at which the search compares objectives: designs closer than this in an
#: objective count as equal in it, so that a design a hair quieter (a larger capacitor on
#: a rail already far below its allowance) but dearer is dominated instead of joining the
#: front. Steps: hum 0.5 dB, sag 0.2 percentage points; peak and cost in relative steps
#: of 2 % and 1 % (differences a builder would not choose by).
RESOLUTION = {"hum_db": 0.5, "regulation_pct": 0.2}
RELATIVE_RESOLUTION = {"peak": 0.02, "cost": 0.01}


def resolved(F: np.ndarray, objectives: tuple[str, ...] = OBJECTIVES) -> np.ndarray:
    """Objectives (columns named by ``objectives``) rounded to their resolution: an
    absolute step (:data:`RESOLUTION`) or a relative one (:data:`RELATIVE_RESOLUTION`,
    rounding on a logarithmic scale; zero stays zero)."""
    F = np.array(F, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        for j, o in enumerate(objectives):
            if o in RESOLUTION:
                F[:, j] = np.round(F[:, j] / RESOLUTION[o]) * RESOLUTION[o]
            else:
                step = np.log1p(RELATIVE_RESOLUTION[o])
                x = F[:, j]
                F[:, j] = np.where(x > 0, np.exp(np.round(np.log(np.where(x > 0, x, 1.0))
                                                          / step) * step), x)
    return F
#: margin of a capacitor's voltage rating over the no-load crest at high mains
CAP_VOLTAGE_MARGIN = RULES.voltage_margin
#: resistor power rating over its dissipation [practice: "twice the dissipation"]
RESISTOR_POWER_FACTOR = RULES.power_factor


def no_load_crest_v(space: SearchSpace, dec: Decoded) -> np.ndarray:
    """Highest capacitor voltage with the valves cold at high mains [V], (n,).

    With no load every capacitor charges to the crest of the open-circuit voltage
    (the rectifier's drop at vanishing current is negligible).
    """
    voc = np.array([t.open_circuit_v for t in space.transformers])[dec.transformer]
    return np.sqrt(2.0) * voc * (1.0 + space.brief.mains.high)


def choose_capacitors(space: SearchSpace, dec: Decoded) -> tuple[np.ndarray, np.ndarray]:
    """For every open capacitor, the cheapest part of its capacitance rated for the
    no-load crest plus the margin; where none is, the highest-rated one (the voltage
    constraint then fails). Returns part rows (n, R) (-1 where not open) and their ESR."""
    cp = space.capacitors
    need = no_load_crest_v(space, dec) * (1.0 + CAP_VOLTAGE_MARGIN)  # (n,)
    n, R = dec.capacitance.shape
    rows = np.full((n, R), -1)
    esr = np.full((n, R), np.nan)
    for i, rs in enumerate(space.rails):
        if not rs.cap_open:
            continue
        # the ripple current is not known before the solve: checked as a constraint after
        picks = cheapest_capacitors(cp, dec.capacitance[:, i], need, 0.0)
        same = cp["capacitance_f"][None, :] == dec.capacitance[:, i, None]
        fallback = np.argmax(np.where(same, cp["voltage_rating_v"][None, :], -np.inf), axis=1)
        rows[:, i] = np.where(picks.found, picks.index, fallback)
        esr[:, i] = cp["esr_ohm"][rows[:, i]]
    return rows, esr


@dataclass
class Scores:
    F: np.ndarray  # (n, 4) objectives, in OBJECTIVES order
    G: np.ndarray  # (n, m) constraints, <= 0 feasible
    names: list[str]  # of the G columns
    cost: np.ndarray  # (n,)
    resistor_class: np.ndarray  # (n, R) row of space.resistor_classes, -1 where none
    capacitor: np.ndarray  # (n, R) row of space.capacitors, -1 where not open
    columns: dict[str, np.ndarray]  # COLUMNS -> (n,)
    # the same candidates with the capacitors they were solved with (the cheapest for the
    # voltage): their cost, and whether those parts miss a heat or life constraint
    base_cost: np.ndarray | None = None  # (n,)
    base_heat_fail: np.ndarray | None = None  # (n,) bool

    @property
    def feasible(self) -> np.ndarray:
        return np.all(self.G <= 0.0, axis=1)

    def parts(self) -> dict:
        return {"resistor_class": self.resistor_class, "capacitor": self.capacitor}


def _ratio(x: np.ndarray, limit) -> np.ndarray:
    """x / limit - 1, or -1 (satisfied) where the limit or the quantity is not given."""
    limit = np.asarray(limit, dtype=float)
    x = np.asarray(x, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        r = x / limit - 1.0
    return np.where(np.isfinite(limit) & (limit > 0) & np.isfinite(x), r, -1.0)


def score(space: SearchSpace, dec: Decoded, caprow: np.ndarray, full, idle,
          choose: bool = True) -> Scores:
    """Objectives and constraints of a population from its full-load and idle figures
    (:class:`~supplydesign.evaluation.analysis.FigureArrays` or anything with the same arrays).

    ``caprow`` holds the capacitor parts the figures were solved with; ``choose``
    lets each open capacitor become the cheapest part adequate for the ripple current
    found (see the module notes), False scores exactly those parts."""
    brief = space.brief
    n, R = dec.kind.shape
    cols: list[np.ndarray] = []
    names: list[str] = []

    def add(name: str, values: np.ndarray) -> None:
        names.append(name)
        cols.append(np.broadcast_to(values, (n,)).astype(float))

    cost = np.zeros(n)
    rc = space.resistor_classes
    res_class = np.full((n, R), -1)
    solved_rows = caprow
    caprow = caprow.copy()
    lives = np.full((n, R), np.nan)
    min_life = brief.chassis.min_life_h
    dearer = np.zeros(n)  # price of the chosen capacitors over the solved ones
    base_fail = np.zeros(n, dtype=bool)
    hum_ratios = []
    for i, rail in enumerate(brief.rails):
        label = f'rail "{rail.name}"'
        dc, ripple = full.dc_v[:, i], full.ripple_rms_v[:, i]
        if rail.voltage_v is not None:
            add(f"{label} DC", np.abs(dc - rail.voltage_v) / rail.voltage_v - rail.tolerance)
        if rail.hum_v is not None:
            add(f"{label} hum", ripple / rail.hum_v - 1.0)
            hum_ratios.append(ripple / rail.hum_v)
        # capacitor: voltage (no-load crest at high mains plus margin), ripple current at
        # the rail's air temperature and, asked for, life
        rs = space.rails[i]
        v_need = no_load_crest_v(space, dec) * (1.0 + CAP_VOLTAGE_MARGIN)
        ta = brief.ambient_c(i)
        ripple_a = full.cap_ripple_rms_a[:, i]
        if rs.cap_open:
            cp = space.capacitors
            if choose:
                picks = cheapest_capacitors(cp, dec.capacitance[:, i], v_need, ripple_a,
                                            ambient_c=ta, min_life_h=min_life)
                caprow[:, i] = np.where(picks.found, picks.index, caprow[:, i])
            row = caprow[:, i]
            part = {k: cp[k][row] for k in HEAT_KEYS}
            base = solved_rows[:, i]
            dearer += cp["price"][row] - cp["price"][base]
            base_fail |= _heat_misses({k: cp[k][base] for k in HEAT_KEYS}, ripple_a, ta,
                                      min_life)
            add(f"{label} capacitor voltage", _ratio(v_need, cp["voltage_rating_v"][row]))
            cost += cp["price"][row]
        elif rail.capacitor is not None:
            part = {k: np.nan if getattr(rail.capacitor, k) is None
                    else getattr(rail.capacitor, k) for k in HEAT_KEYS}
            cap = rail.capacitor
            add(f"{label} capacitor voltage",
                _ratio(v_need, np.nan if cap.voltage_rating_v is None else cap.voltage_rating_v))
            cost += cap.price or 0.0
        if rail.capacitor is not None:
            add(f"{label} capacitor ripple current",
                _ratio(ripple_a, part["ripple_rating_a"]
                       * derating.ripple_derating(ta, part["rated_temperature_c"])))
            _, _, lives[:, i] = derating.capacitor_heat(
                ripple_a, part["esr_ohm"], part["diameter_m"], part["height_m"],
                part["rated_life_h"], part["rated_temperature_c"], ta)
            if min_life is not None:
                # a chosen part without life data cannot show its life: not met; a part
                # the brief fixes without them is left unchecked
                unknown = 1.0 if rs.cap_open else -1.0
                with np.errstate(divide="ignore"):
                    add(f"{label} capacitor life",
                        np.where(np.isfinite(lives[:, i]), min_life / lives[:, i] - 1.0,
                                 unknown))
        # link: resistor power class, choke current
        kind = dec.kind[:, i]
        if rs.fixed_link is None:
            dissipation = full.link_power_w[:, i]
            p_need = RESISTOR_POWER_FACTOR * dissipation
            v_drop = np.abs(full.link_dc_a[:, i]) * dec.resistance[:, i]
            picks = cheapest_resistors(rc, dec.resistance[:, i], p_need, v_drop,
                                       dissipation_w=dissipation, ambient_c=ta)
            cls = np.where(picks.found, picks.index, int(np.argmax(rc["power_w"])))
            is_r = kind == KIND_RESISTOR
            res_class[:, i] = np.where(is_r, cls, -1)
            # no adequate class (power, voltage or value range): violated at least by 0.1
            upper = rc.get("upper_temperature_c", np.full(len(rc["power_w"]), np.nan))[cls]
            need = np.fmax(_ratio(p_need, rc["power_w"][cls]),
                           _ratio(dissipation, rc["power_w"][cls]
                                  * derating.resistor_derating(ta, upper)))
            add(f"{label} resistor rating",
                np.where(is_r, np.where(picks.found, need, np.maximum(need, 0.1)), -1.0))
            is_l = kind == KIND_CHOKE
            rows = np.maximum(dec.choke[:, i], 0)
            add(f"{label} choke current",
                np.where(is_l, _ratio(np.abs(full.link_dc_a[:, i]),
                                      space.chokes["current_rating_a"][rows]), -1.0))
            cost += np.where(is_r, rc["price"][cls], 0.0)
            cost += np.where(is_l, space.chokes["price"][rows], 0.0)
        else:
            link = rs.fixed_link
            if link.kind == "resistor":
                rated = np.nan if link.power_w is None else link.power_w
                upper = (np.nan if link.upper_temperature_c is None
                         else link.upper_temperature_c)
                add(f"{label} resistor rating",
                    np.fmax(_ratio(RESISTOR_POWER_FACTOR * full.link_power_w[:, i], rated),
                            _ratio(full.link_power_w[:, i],
                                   rated * derating.resistor_derating(ta, upper))))
            elif link.kind == "choke":
                add(f"{label} choke current",
                    _ratio(np.abs(full.link_dc_a[:, i]),
                           np.nan if link.current_rating_a is None else link.current_rating_a))
            cost += link.price or 0.0
    tr = space.transformers
    rect = space.rectifiers
    cost += np.array([t.price or 0.0 for t in tr])[dec.transformer]
    cost += np.array([(r.price or 0.0) * rectifier_pieces(r) for r in rect])[dec.rectifier]
    total_a = np.sum(full.load_a, axis=1)
    add("transformer DC current",
        _ratio(total_a, np.array([t.rated_current_a or np.nan for t in tr])[dec.transformer]))
    add("transformer rms current",
        _ratio(full.winding_rms_a, winding_rms_ratings(space)[dec.transformer, dec.rectifier]))
    max_peak = np.array([r.max_peak_current_a or np.nan for r in rect])[dec.rectifier]
    add("rectifier peak current", _ratio(full.rect_peak_a, max_peak))
    first_cap = dec.capacitance[:, 0] if brief.rails[0].capacitor is not None else np.zeros(n)
    reservoir = np.where(dec.kind[:, 0] == KIND_WIRE, np.nan_to_num(first_cap), 0.0)
    add("rectifier reservoir capacitance",
        _ratio(reservoir, np.array([r.max_reservoir_f or np.nan for r in rect])[dec.rectifier]))
    # switch-on of a capacitor input at the crest into empty capacitors: only the source
    # and diode resistances limit the surge [derived: circuit theory; leakage lowers it]
    series = np.array([(r.series_resistance_ohm if r.kind == "silicon" else 0.0)
                       * (2 if r.arrangement == "bridge" else 1) for r in rect])[dec.rectifier]
    r_source = np.array([t.resistance_ohm for t in tr])[dec.transformer] + series
    surge = no_load_crest_v(space, dec) / np.maximum(r_source, 1e-3)
    surge_rating = np.array([r.max_surge_current_a or np.nan for r in rect])[dec.rectifier]
    add("rectifier switch-on surge",
        np.where(dec.kind[:, 0] == KIND_WIRE, _ratio(surge, surge_rating), -1.0))
    rs_min = np.array([r.min_source_resistance_ohm or np.nan for r in rect])[dec.rectifier]
    add("rectifier source resistance",
        _ratio(rs_min, np.array([t.resistance_ohm for t in tr])[dec.transformer]))
    # choke input: above the critical inductance L_c = R_L / (3 omega) at idle current
    omega = 2.0 * np.pi * brief.mains.frequency_hz
    idle_a = np.maximum(np.sum(idle.load_a, axis=1), 1e-9)
    l_crit = idle.dc_v[:, 0] / idle_a / (3.0 * omega)
    add("choke input critical inductance",
        np.where(dec.kind[:, 0] == KIND_CHOKE,
                 _ratio(l_crit, np.where(dec.inductance[:, 0] > 0, dec.inductance[:, 0], np.nan)),
                 -1.0))
    # objectives
    hum_db, margin_db = hum_objective(np.stack(hum_ratios, axis=1) if hum_ratios
                                      else full.ripple_rms_v)
    if not hum_ratios:
        margin_db = np.full(n, np.nan)  # no allowance, no margin
    with np.errstate(divide="ignore", invalid="ignore"):
        reg = np.max(np.abs(idle.dc_v - full.dc_v) / full.dc_v, axis=1) * 100.0
    peak = np.where(np.isfinite(max_peak), full.rect_peak_a / max_peak, full.rect_peak_a)
    F = np.stack([hum_db, reg, peak, cost], axis=1)
    # an unconverged steady state is never feasible
    add("solver convergence", np.where(full.converged & idle.converged, -1.0, 1.0))
    with np.errstate(invalid="ignore"):
        shortest = np.min(np.where(np.isnan(lives), np.inf, lives), axis=1)
    return Scores(F, np.stack(cols, axis=1), names, cost, res_class, caprow,
                  {"hum_margin_db": margin_db,
                   "shortest_life_h": np.where(np.isinf(shortest), np.nan, shortest)},
                  base_cost=cost - dearer, base_heat_fail=base_fail)


def _heat_misses(part: dict, ripple_a, ambient_c: float, min_life) -> np.ndarray:
    """Whether capacitors (``HEAT_KEYS`` arrays) miss their ripple rating at the air
    temperature or, asked for, the least life, with this ripple current."""
    allowed = part["ripple_rating_a"] * derating.ripple_derating(
        ambient_c, part["rated_temperature_c"])
    miss = ripple_a > allowed  # NaN (no rating) compares False
    if min_life is not None:
        _, _, life = derating.capacitor_heat(
            ripple_a, part["esr_ohm"], part["diameter_m"], part["height_m"],
            part["rated_life_h"], part["rated_temperature_c"], ambient_c)
        miss |= ~(life >= min_life)
    return miss


#: the capacitor data the heat and life rules read
HEAT_KEYS = ("ripple_rating_a", "esr_ohm", "diameter_m", "height_m", "rated_life_h",
             "rated_temperature_c")


def winding_rms_ratings(space: SearchSpace) -> np.ndarray:
    """Rms rating per half of each transformer fed into each rectifier [A], (T, Rr):
    an rms or VA rating as given, a DC rating with the form factor it assumes for
    the rectifier's arrangement (:func:`supplydesign.parts.derating.winding_rms_rating`);
    NaN where none is given."""
    out = np.full((len(space.transformers), len(space.rectifiers)), np.nan)
    for t, tr in enumerate(space.transformers):
        for r, rect in enumerate(space.rectifiers):
            value, _ = derating.winding_rms_rating(
                *(np.nan if x is None else x for x in (tr.rated_rms_a, tr.rated_va,
                                                        tr.open_circuit_v)),
                tr.winding, np.nan if tr.rated_current_a is None else tr.rated_current_a,
                tr.rated_for, rect.arrangement)
            out[t, r] = float(np.asarray(value).ravel()[0])
    return out


def hum_objective(ratios: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The hum objective and the worst rail's margin from ripple-to-allowance ratios.

    Parameters
    ----------
    ratios : numpy.ndarray, shape (n, k)
        Each rail's rms ripple over its allowance (k rails with an allowance).

    Returns
    -------
    hum_db : numpy.ndarray, shape (n,)
        10 log10 sum_i ratio_i^2 [dB]: the rails' hum powers, each scaled to its
        allowance, added (incoherent sum, as independent noise powers add).
    margin_db : numpy.ndarray, shape (n,)
        -20 log10 max_i ratio_i [dB]: how far the worst rail is below its allowance.
    """
    ratios = np.maximum(np.nan_to_num(np.asarray(ratios, float), nan=np.inf), 1e-12)
    with np.errstate(over="ignore", invalid="ignore"):
        hum_db = 10.0 * np.log10(np.sum(ratios**2, axis=1))
    margin_db = -20.0 * np.log10(np.max(ratios, axis=1))
    return hum_db, margin_db
