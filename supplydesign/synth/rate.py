"""Ratings for one design: the chosen parts filled in, with a one-line reason each.

:func:`rate_design` applies the rules of :mod:`supplydesign.parts.rating` to the
capacitor and link (resistor or choke) of every rail, from figures the caller
has computed; :func:`rate_evaluated` computes them itself and repeats until the
chosen parts are adequate for the figures of the design they make (a chosen
part's ESR or DCR changes the figures a little).

Caution: the reasons state what a model predicts. They do not make a design
safe; HT capacitors hold a lethal charge (bleeders, fusing, insulation, local
codes and licensed practice).
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, replace

from ..design import Capacitor, Design, Link, Rail
from ..evaluation.figures import Figures
from ..io.tomlwrite import readable
from ..parts.rating import (
    MODEL_SOURCE,
    RATING_HZ,
    RULES,
    Pool,
    RatingRules,
    choose_capacitors,
    choose_chokes,
    choose_resistors,
    ripple_factor,
    ripple_fundamental_hz,
    row,
)
from ..units import format_si
from .space import CAPACITOR_HEAT_KEYS

HIGH_MAINS_NO_LOAD = "high_mains_no_load"
#: operating case name -> words used in the reasons
CASE_WORDS = {
    "nominal": "nominal mains, full load",
    "idle": "nominal mains, idle",
    HIGH_MAINS_NO_LOAD: "high mains, no load",
    "high_mains_idle": "high mains, idle",
    "high_mains_full_load": "high mains, full load",
    "low_mains_full_load": "low mains, full load",
}
NOT_MET = "NO ADEQUATE PART"
KEPT = "kept as given"


def high_mains_no_load(design: Design):
    """The operating case that bounds capacitor voltages: high mains, valves cold."""
    from ..circuit.netlist import OperatingCase

    return OperatingCase(HIGH_MAINS_NO_LOAD, 1.0 + design.mains.high, "none")


@dataclass(frozen=True)
class Rated:
    """A design with its ratings chosen.

    Attributes
    ----------
    design : Design
        The design with the chosen parts filled in. Where nothing in the pool
        is adequate the design's part stays: "kept as given" when its own
        stated ratings cover the stresses, else unmet.
    reasons : dict
        (rail name, "capacitor" or "link") -> one line saying why.
    unmet : tuple
        The (rail name, element) keys for which no part is adequate.
    price : float
        Sum of the prices of the chosen parts (capacitors and links; a part
        kept as given without a price counts nothing).
    currency : str or None
    """

    design: Design
    reasons: dict[tuple[str, str], str]
    unmet: tuple[tuple[str, str], ...]
    price: float
    currency: str | None

    def comments(self) -> dict[str, str]:
        """Reasons grouped per rail, for ``dump_design(..., comments=...)``."""
        out: dict[str, list[str]] = {}
        for (rail, element), text in self.reasons.items():
            out.setdefault(rail, []).append(f"{element} rating: {text}")
        return {rail: "\n".join(lines) for rail, lines in out.items()}


def _words(case: str) -> str:
    return CASE_WORDS.get(case, case.replace("_", " "))


def _worst(cases: Sequence[Figures], rail: str, attr: str) -> tuple[float, str]:
    """Highest |value| of a rail figure over the cases, and the case it occurs in."""
    values = [(abs(getattr(f.rail(rail), attr) or 0.0), f.case) for f in cases]
    return max(values, key=lambda vc: vc[0])


def _label(chosen: dict) -> str:
    if chosen["source"] == MODEL_SOURCE:
        return f"{chosen['part']} (demo price model), {chosen['price']:.2f} {chosen['currency']}"
    return f"{chosen['part']}, {chosen['price']:.2f} {chosen['currency']}"


def _number(x) -> float | None:
    """A float of a candidate row, None where the cell is empty (NaN) or absent."""
    return None if x is None or (isinstance(x, float) and math.isnan(x)) else float(x)


def _part_fields(chosen: dict) -> dict:
    """part / price / currency of a chosen row (a model part carries no catalog id)."""
    return {"part": None if chosen["source"] == MODEL_SOURCE else chosen["part"],
            "price": chosen["price"], "currency": chosen["currency"]}


def _not_found(part, what: str, stress: str, own: str | None):
    """Nothing in the pool fits: keep the design's part, adequate if its stated ratings are."""
    if own is not None:
        return part, f"{KEPT} ({own}): no {what} in the catalog; {stress}"
    return part, f"{NOT_MET}: no {what} for {stress}"


def _capacitor(design: Design, rail: Rail, cases, pool: Pool, rules: RatingRules,
               extra_peak: tuple[float, str] | None):
    cap = rail.capacitor
    peak, peak_case = _worst(cases, rail.name, "peak_v")
    if extra_peak is not None and extra_peak[0] > peak:
        peak, peak_case = extra_peak
    ripple, ripple_case = _worst(cases, rail.name, "cap_ripple_rms_a")
    need_v = peak * (1.0 + rules.voltage_margin)
    freq = float(ripple_fundamental_hz(design.mains.frequency_hz, design.rectifier.arrangement))
    k = float(ripple_factor(design.mains.frequency_hz, design.rectifier.arrangement, rules))
    ambient = design.ambient_c(design.rail_index(rail.name))
    min_life = design.chassis.min_life_h
    picks = choose_capacitors(pool.capacitor, cap.capacitance_f, need_v, ripple, k,
                              ambient_c=ambient, min_life_h=min_life)
    stress = (f"{format_si(peak, 'V')} peak at {_words(peak_case)}, "
              f"+{100 * rules.voltage_margin:g} % margin = {format_si(need_v, 'V')}; "
              f"ripple {format_si(ripple, 'A')} rms ({format_si(freq, 'Hz')}) "
              f"at {_words(ripple_case)}, in {ambient:g} degC air"
              + (f"; life at least {min_life:g} h" if min_life is not None else ""))
    if not picks.found[0]:
        v, i = cap.voltage_rating_v, cap.ripple_rating_a
        own = (f"{format_si(v, 'V')}, {format_si(i, 'A')} at {format_si(RATING_HZ, 'Hz')}"
               if v is not None and i is not None and v >= need_v and i * k >= ripple else None)
        return _not_found(cap, f"{format_si(cap.capacitance_f, 'F')} capacitor", stress, own)
    c = row(pool.capacitor, int(picks.index[0]))
    derate = "" if k == 1.0 else f" x {k:g} at {format_si(freq, 'Hz')}"
    new = replace(cap, capacitance_f=c["capacitance_f"], esr_ohm=c["esr_ohm"],
                  voltage_rating_v=c["voltage_rating_v"], ripple_rating_a=c["ripple_rating_a"],
                  **{k: _number(c.get(k)) for k in CAPACITOR_HEAT_KEYS}, **_part_fields(c))
    return new, (f"{format_si(c['voltage_rating_v'], 'V')} part {_label(c)}: {stress}, "
                 f"rated {format_si(c['ripple_rating_a'], 'A')} at "
                 f"{format_si(RATING_HZ, 'Hz')}{derate}")


def _choke(rail: Rail, cases, pool: Pool):
    link = rail.link
    dc, case = _worst(cases, rail.name, "link_dc_a")
    picks = choose_chokes(pool.choke, link.inductance_h, link.resistance_ohm, dc)
    value = (f"{format_si(link.inductance_h, 'H')} with DCR at most "
             f"{format_si(link.resistance_ohm, 'Ω')}")
    stress = f"{format_si(dc, 'A')} DC at {_words(case)}"
    if not picks.found[0]:
        rating = link.current_rating_a
        own = format_si(rating, "A") if rating is not None and rating >= dc else None
        return _not_found(link, f"choke of {value}", stress, own)
    c = row(pool.choke, int(picks.index[0]))
    new = replace(link, inductance_h=c["inductance_h"], resistance_ohm=c["resistance_ohm"],
                  current_rating_a=c["current_rating_a"], **_part_fields(c))
    return new, (f"{format_si(c['current_rating_a'], 'A')} part {_label(c)}: {stress}; "
                 f"{format_si(c['inductance_h'], 'H')}, DCR {format_si(c['resistance_ohm'], 'Ω')}"
                 f" (design {format_si(link.resistance_ohm, 'Ω')})")


def crest_v(design: Design) -> float:
    """Crest of the open-circuit winding voltage at the high mains limit [V].

    sqrt(2) x open-circuit rms x (1 + high): per half of a center-tapped
    winding, or of the whole winding for a bridge or half-wave. No rail of a
    steady state without load rises above it (no arrangement here multiplies
    the voltage), so it bounds the no-load peaks when their solution is not to
    be trusted.
    """
    return math.sqrt(2.0) * design.transformer.open_circuit_v * (1.0 + design.mains.high)


def resistor_voltage(design: Design, rail: Rail, fig: Figures) -> float:
    """Highest steady voltage across a rail's link in one case [V] (an upper bound).

    The upstream node's peak minus the rail's lowest voltage, bounded below by
    the rail's DC minus its peak-to-peak ripple; never below the DC drop
    I x R. Upstream of the first rail is the rectifier output, whose peak is
    taken as sqrt(2) times the open-circuit rms at the high mains limit.
    """
    r = fig.rail(rail.name)
    if rail.parent is None:
        upstream = crest_v(design)
    else:
        upstream = fig.rail(rail.parent).peak_v
    drop = abs(r.link_dc_a) * (rail.link.resistance_ohm or 0.0)
    return max(upstream - (r.dc_v - r.ripple_pp_v), drop)


def _resistor(design: Design, rail: Rail, cases, pool: Pool, rules: RatingRules):
    link = rail.link
    power, case = _worst(cases, rail.name, "link_power_w")
    volts = max(resistor_voltage(design, rail, f) for f in cases)
    need_w = rules.power_factor * power
    ambient = design.ambient_c(design.rail_index(rail.name))
    picks = choose_resistors(pool.resistor, link.resistance_ohm, need_w, volts,
                             dissipation_w=power, ambient_c=ambient)
    stress = (f"{rules.power_factor:g} x {format_si(power, 'W')} dissipated at {_words(case)} "
              f"= {format_si(need_w, 'W')}; up to {format_si(volts, 'V')} across")
    if not picks.found[0]:  # a design's resistor states no voltage limit: never kept
        return _not_found(link, f"{format_si(link.resistance_ohm, 'Ω')} resistor class",
                          stress, None)
    c = row(pool.resistor, int(picks.index[0]))
    new = replace(link, power_w=c["power_w"],
                  upper_temperature_c=_number(c.get("upper_temperature_c")), **_part_fields(c))
    return new, (f"{format_si(c['power_w'], 'W')} part {_label(c)}: {stress}, "
                 f"limit {format_si(c['max_voltage_v'], 'V')}")


def rate_design(design: Design, nominal: Figures, no_load: Figures, pool: Pool,
                rules: RatingRules = RULES, extra: Sequence[Figures] = (),
                extra_peaks: Mapping[str, tuple[float, str]] | None = None) -> Rated:
    """Choose the cheapest adequate capacitor, resistor and choke of every rail.

    Parameters
    ----------
    design : Design
        A complete design.
    nominal : Figures
        Its figures at nominal mains, full load (ripple, dissipation, DC
        currents).
    no_load : Figures
        Its figures at the high mains limit with no load, valves cold
        (:func:`high_mains_no_load`): the capacitor voltage is never rated
        below these peaks. If this solution did not converge, the crest of the
        open-circuit voltage at high mains (:func:`crest_v`) stands in for them.
    pool : Pool
        Candidate parts (:func:`~supplydesign.parts.rating.candidate_pool`).
    rules : RatingRules
        Margins.
    extra : sequence of Figures
        Further cases; every stress is the worst over all cases given whose
        solution converged.
    extra_peaks : mapping, optional
        Rail name -> (voltage [V], words naming when it occurs), for capacitor
        voltages that no steady-state case shows, such as the peak after
        switch-on: ``{"plates": (530.2, "switch-on")}``.

    Returns
    -------
    Rated
        The new design, a reason per part, the parts left unmet, the price.
    """
    if not design.is_complete():
        raise ValueError(f"rate_design needs a complete design; open: {design.open_choices()}")
    # figures of an unconverged solution may be far off either way: left out
    cases = [f for f in (nominal, no_load, *extra) if f.converged] or [nominal]
    peaks = dict(extra_peaks or {})
    if not no_load.converged:  # bound its peaks by the crest instead
        bound = (crest_v(design), "high mains, no load (the crest of the open-circuit voltage: "
                                  "the no-load solution did not converge)")
        peaks = {r.name: max(peaks.get(r.name, bound), bound) for r in design.rails}
    rails, reasons, unmet, price = [], {}, [], 0.0
    for rail in design.rails:
        link, cap = rail.link, rail.capacitor
        found: dict[str, tuple] = {}
        if cap is not None:
            cap, text = _capacitor(design, rail, cases, pool, rules, peaks.get(rail.name))
            found["capacitor"] = (cap, text)
        if link.kind == "choke":
            link, text = _choke(rail, cases, pool)
            found["link"] = (link, text)
        elif link.kind == "resistor":
            link, text = _resistor(design, rail, cases, pool, rules)
            found["link"] = (link, text)
        for element, (part, text) in found.items():
            reasons[(rail.name, element)] = text
            if text.startswith(NOT_MET):
                unmet.append((rail.name, element))
            else:
                price += part.price or 0.0  # a part kept as given may have no price
        rails.append(replace(rail, link=link, capacitor=cap))
    return Rated(design.with_rails(rails), reasons, tuple(unmet), price, pool.currency)


def _parts(design: Design) -> list[tuple[Link, Capacitor | None]]:
    return [(r.link, r.capacitor) for r in design.rails]


def rate_evaluated(design: Design, pool: Pool, rules: RatingRules = RULES, *,
                   steps: int = 512, passes: int = 4) -> tuple[Rated, Figures, Figures]:
    """Evaluate, rate, and repeat until the chosen parts hold for their own figures.

    Each pass evaluates the latest rated design (nominal and high mains, no
    load) and rates the original design against the worst stresses of every
    pass so far, so the needs only rise and the choice settles. Every design is
    taken as its written file will hold it (each value to the file's significant
    figures, :func:`~supplydesign.io.tomlwrite.readable`), so the figures
    returned are those of the file ``save_design`` writes.

    Returns
    -------
    (Rated, Figures, Figures)
        The rated design and its nominal and high-mains no-load figures.

    Raises
    ------
    RuntimeError
        When the choice has not settled after ``passes`` evaluations.
    """
    from ..evaluation.analysis import evaluate

    design = readable(design)
    current, seen = design, []
    for _ in range(passes):
        nominal = evaluate([current], steps=steps)[0]
        no_load = evaluate([current], high_mains_no_load(design), steps=steps)[0]
        seen += [nominal, no_load]
        rated = rate_design(design, nominal, no_load, pool, rules, extra=seen)
        rated = replace(rated, design=readable(rated.design))
        if _parts(rated.design) == _parts(current):
            return rated, nominal, no_load
        current = rated.design
    raise RuntimeError(f"the rating choice of {design.source} did not settle in {passes} passes")
