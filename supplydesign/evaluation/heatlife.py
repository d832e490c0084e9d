"""Heat and life: capacitor heating and life, resistor and winding loading, fuses.

From the figures of an evaluation (arrays over designs and rails) and the
parts' data, at the air temperature around each rail (``[chassis] ambient``, a
rail's own ``ambient``, else ``DEFAULT_AMBIENT_C``):

- **Electrolytic capacitors**: the core's rise above the ambient from its ripple
  current, dT = I^2 ESR / (h A) with A the can's side and top; its ripple
  current against the rating derated for the ambient
  (:func:`supplydesign.parts.derating.ripple_derating`); its life from the rated
  endurance by the doubling per 10 K (:func:`life_h`), in hours and in years at
  the chassis' hours of use per day.
- **Resistors**: dissipation against the rating derated for the ambient
  (IEC 60115-1, :func:`supplydesign.parts.derating.resistor_derating`).
- **Transformer HT winding**: rms current per half against its rating (rms, VA or
  DC with the form factor it assumes), its rms over DC form factor and copper loss.
- **Fuses** (:mod:`supplydesign.parts.fuses`): a time-lag HT fuse (in the centre-
  tap lead, or in series with a single winding) and a mains fuse, from the rms
  currents at high mains and full signal and the switch-on surge's I^2 t.

Capacitor heating, life and winding loading use the nominal case (nominal mains,
full signal, a conservative stand-in for a life spent mostly at lower levels).

Caution: estimates from rules of thumb and a model's figures. They do not make a
design safe; check data sheets, fuse makers' data and local codes.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from ..design import Design
from ..parts import derating, fuses
from ..parts.derating import (  # noqa: F401  (the rules, re-exported beside the figures)
    DOUBLING_K,
    HEAT_TRANSFER_W_M2K,
    can_area_m2,
    life_h,
    temperature_rise_k,
)

#: mains voltages assumed where neither [transformer] primary nor the catalog gives one:
#: IEC 60038 (230 V, 50 Hz) and ANSI C84.1 (120 V, 60 Hz, from memory)
DEFAULT_PRIMARY_V = {50.0: 230.0, 60.0: 120.0}
HOURS_PER_YEAR = 24.0 * 365.25


def primary_v(design: Design) -> tuple[float, bool]:
    """The nominal mains voltage of the primary [V] and whether the design gives it."""
    if design.transformer.primary_v is not None:
        return design.transformer.primary_v, True
    f = design.mains.frequency_hz
    return DEFAULT_PRIMARY_V[50.0 if abs(f - 50.0) < abs(f - 60.0) else 60.0], False


def output_dc_a(rect_avg_a, arrangement) -> np.ndarray:
    """DC output current of the rectifier from the mean current per junction [A]:
    twice it for full-wave and bridge (two junctions share the output in turn)."""
    return np.where(np.asarray(arrangement, dtype=object) == "half-wave", 1.0, 2.0) \
        * np.asarray(rect_avg_a, dtype=float)


@dataclass
class Nominal:
    """The figures heat_life reads, as arrays, taken from a list of Figures."""

    dc_v: np.ndarray
    cap_ripple_rms_a: np.ndarray
    link_power_w: np.ndarray
    rect_avg_a: np.ndarray
    winding_rms_a: np.ndarray
    winding_power_w: np.ndarray

    @classmethod
    def of(cls, figures: Sequence) -> Nominal:
        """From :class:`~supplydesign.evaluation.figures.Figures` of the nominal case."""
        R = max(len(f.rails) for f in figures)

        def rails(get) -> np.ndarray:
            out = np.full((len(figures), R), np.nan)
            for b, f in enumerate(figures):
                out[b, :len(f.rails)] = [np.nan if get(r) is None else get(r) for r in f.rails]
            return out

        return cls(rails(lambda r: r.dc_v), rails(lambda r: r.cap_ripple_rms_a),
                   rails(lambda r: r.link_power_w),
                   np.array([f.rectifier.avg_a for f in figures]),
                   np.array([f.transformer.rms_a for f in figures]),
                   np.array([f.transformer.power_w for f in figures]))


@dataclass
class HeatLife:
    """Heat and life figures: arrays (B, R) per rail, (B,) per design; NaN where a figure
    does not apply (no capacitor, no resistor, no data)."""

    ambient_c: np.ndarray  # (B, R) air around each rail's parts
    use: np.ndarray  # (B,) share of the day in use
    cap_ripple_a: np.ndarray  # (B, R) rms ripple current
    cap_allowed_a: np.ndarray  # (B, R) ripple rating derated for the ambient
    cap_rise_k: np.ndarray  # (B, R) core above ambient (NaN without a can size)
    cap_core_c: np.ndarray  # (B, R) core temperature (ambient where the rise is unknown)
    cap_life_h: np.ndarray  # (B, R) estimated life (NaN without rated life and temperature)
    res_power_w: np.ndarray  # (B, R) resistor dissipation
    res_allowed_w: np.ndarray  # (B, R) rated power derated for the ambient
    res_upper_c: np.ndarray  # (B, R) upper category temperature used
    winding_rms_a: np.ndarray  # (B,) per half (whole winding if single)
    winding_allowed_a: np.ndarray  # (B,) rms rating per half
    winding_basis: np.ndarray  # (B,) "rms", "VA", "DC" or ""
    winding_rated_for: np.ndarray  # (B,) the load a DC rating assumes
    output_dc_a: np.ndarray  # (B,) DC out of the rectifier
    form_factor: np.ndarray  # (B,) winding rms per half over the DC output current
    copper_loss_w: np.ndarray  # (B,) whole winding
    copper_loss_rated_w: np.ndarray  # (B,) at the rms rating

    @property
    def cap_life_years(self) -> np.ndarray:
        """Life in years at the chassis' hours of use per day."""
        return self.cap_life_h / (HOURS_PER_YEAR * self.use[:, None])

    def shortest_life_h(self) -> np.ndarray:
        """The shortest capacitor life of each design [h] (inf: no life data)."""
        return np.min(np.where(np.isnan(self.cap_life_h), np.inf, self.cap_life_h), axis=1)


def _rail_arrays(designs: Sequence[Design], R: int):
    """Per-rail part data as (B, R) arrays (NaN where absent)."""
    names = ("ambient", "esr", "ripple_rating", "rated_c", "life", "diameter", "height",
             "power", "upper")
    out = {k: np.full((len(designs), R), np.nan) for k in names}
    is_res = np.zeros((len(designs), R), dtype=bool)
    for b, d in enumerate(designs):  # the parts' data, once per design
        for i, r in enumerate(d.rails):
            out["ambient"][b, i] = d.ambient_c(i)
            c = r.capacitor
            if c is not None:
                for key, value in (("esr", c.esr_ohm), ("ripple_rating", c.ripple_rating_a),
                                   ("rated_c", c.rated_temperature_c),
                                   ("life", c.rated_life_h), ("diameter", c.diameter_m),
                                   ("height", c.height_m)):
                    out[key][b, i] = np.nan if value is None else value
            if r.link.kind == "resistor":
                is_res[b, i] = True
                out["power"][b, i] = np.nan if r.link.power_w is None else r.link.power_w
                upper = r.link.upper_temperature_c
                out["upper"][b, i] = derating.DEFAULT_UPPER_C if upper is None else upper
    return out, is_res


def _design_arrays(designs: Sequence[Design], attr: str, sub: str) -> np.ndarray:
    vals = [getattr(getattr(d, sub), attr) for d in designs]
    return np.array([np.nan if v is None else v for v in vals], dtype=float)


def heat_life(designs: Sequence[Design], full) -> HeatLife:
    """Heat and life figures of ``designs`` from their nominal full-signal figures.

    Parameters
    ----------
    designs : sequence of Design
    full : FigureArrays or Nominal
        The nominal case of the same designs, in order
        (:class:`~supplydesign.evaluation.analysis.FigureArrays`, or :class:`Nominal`
        made from Figures).
    """
    R = full.dc_v.shape[1]
    p, is_res = _rail_arrays(designs, R)
    ambient = p["ambient"]
    ripple = np.asarray(full.cap_ripple_rms_a, dtype=float)
    rise, core, life = derating.capacitor_heat(ripple, p["esr"], p["diameter"], p["height"],
                                               p["life"], p["rated_c"], ambient)
    life = np.where(np.isnan(ripple), np.nan, life)
    allowed = p["ripple_rating"] * derating.ripple_derating(ambient, p["rated_c"])
    res_power = np.where(is_res, full.link_power_w, np.nan)
    res_allowed = p["power"] * derating.resistor_derating(ambient, p["upper"])

    tr = [d.transformer for d in designs]
    arrangement = np.array([d.rectifier.arrangement for d in designs], dtype=object)
    winding = np.array([t.winding for t in tr], dtype=object)
    rated_for = np.array([t.rated_for for t in tr], dtype=object)
    allowed_w, basis = derating.winding_rms_rating(
        _design_arrays(designs, "rated_rms_a", "transformer"),
        _design_arrays(designs, "rated_va", "transformer"),
        _design_arrays(designs, "open_circuit_v", "transformer"), winding,
        _design_arrays(designs, "rated_current_a", "transformer"), rated_for, arrangement)
    dc = output_dc_a(full.rect_avg_a, arrangement)
    rms = np.asarray(full.winding_rms_a, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        form = np.where(dc > 0, rms / dc, np.nan)
    r_wind = _design_arrays(designs, "resistance_ohm", "transformer")
    return HeatLife(
        ambient_c=ambient, use=np.array([d.chassis.use_share for d in designs]),
        cap_ripple_a=ripple, cap_allowed_a=allowed, cap_rise_k=rise,
        cap_core_c=np.where(np.isnan(ripple), np.nan, core), cap_life_h=life,
        res_power_w=res_power, res_allowed_w=np.where(is_res, res_allowed, np.nan),
        res_upper_c=p["upper"], winding_rms_a=rms, winding_allowed_a=allowed_w,
        winding_basis=basis, winding_rated_for=np.array(
            [t.rated_for or derating.DEFAULT_RATED_FOR for t in tr], dtype=object),
        output_dc_a=dc, form_factor=form, copper_loss_w=np.asarray(full.winding_power_w),
        copper_loss_rated_w=derating.halves(winding) * allowed_w**2 * r_wind)


@dataclass
class FuseSuggestion:
    """Suggested time-lag fuses and the figures behind them, (B,) arrays."""

    ht_a: np.ndarray  # HT fuse rating [A]
    ht_rms_a: np.ndarray  # rms through it at high mains, full signal
    ht_surge_i2t: np.ndarray  # switch-on I^2 t through it [A^2 s] (NaN: not known)
    mains_a: np.ndarray  # mains fuse rating [A]
    mains_rms_a: np.ndarray  # primary rms at high mains, full signal
    mains_ht_a: np.ndarray  # ... of it the HT winding's share
    mains_other_a: np.ndarray  # ... and the other load's ([transformer] other_load)
    mains_surge_i2t: np.ndarray  # the HT surge referred to the primary [A^2 s]
    primary_v: np.ndarray  # nominal mains voltage of the primary
    primary_given: np.ndarray  # bool: from the design, not a default
    high: np.ndarray  # the designs' high mains factor - 1

    def position(self, design: Design) -> str:
        """Where the HT fuse goes."""
        return ("in the centre-tap lead" if design.transformer.winding == "center-tapped"
                else "in series with the HT winding")


def suggest_fuses(designs: Sequence[Design], high_full, surge_i2t=None) -> FuseSuggestion:
    """Time-lag HT and mains fuses for ``designs`` (see :mod:`supplydesign.parts.fuses`).

    The HT fuse carries the current of all halves (a centre-tap lead: the halves
    conduct in turn, so its rms is ``sqrt(halves)`` times a half's); the primary
    carries the HT winding's current times the turns ratio ``V_oc / V_primary``
    plus the other load's ``VA / V_primary`` at high mains (taken in phase, the
    safe side). The transformer's own inrush and cold heaters are not modelled:
    a time-lag fuse rides them, which the fuse maker's data must confirm.

    Parameters
    ----------
    designs : sequence of Design
    high_full : FigureArrays
        The designs at high mains and full signal.
    surge_i2t : array_like, optional
        I^2 t of the rectifier output current at switch-on [A^2 s]
        (:class:`~supplydesign.evaluation.worstcase.SwitchOnArrays`); None: not known.
    """
    B = len(designs)
    winding = np.array([d.transformer.winding for d in designs], dtype=object)
    ht_rms = np.sqrt(derating.halves(winding)) * np.asarray(high_full.winding_rms_a, dtype=float)
    i2t = np.full(B, np.nan) if surge_i2t is None else np.asarray(surge_i2t, dtype=float)
    volts = [primary_v(d) for d in designs]
    vp = np.array([v for v, _ in volts])
    high = np.array([d.mains.high for d in designs])
    ratio = _design_arrays(designs, "open_circuit_v", "transformer") / vp
    other = np.nan_to_num(_design_arrays(designs, "other_load_va", "transformer"))
    mains_ht = ratio * ht_rms
    mains_other = other * (1.0 + high) / vp  # a resistive load grows with the mains
    mains_rms = mains_ht + mains_other
    mains_i2t = ratio**2 * i2t
    return FuseSuggestion(
        ht_a=fuses.time_lag_rating(ht_rms, i2t), ht_rms_a=ht_rms, ht_surge_i2t=i2t,
        mains_a=fuses.time_lag_rating(mains_rms, mains_i2t), mains_rms_a=mains_rms,
        mains_ht_a=mains_ht, mains_other_a=mains_other, mains_surge_i2t=mains_i2t,
        primary_v=vp, primary_given=np.array([g for _, g in volts]), high=high)


def hours(x: float) -> str:
    """A life to two significant figures with thin thousands: 7 600."""
    return f"{float(f'{x:.2g}'):,.0f}".replace(",", " ") if x >= 100 else f"{x:.2g}"


def fuses_of(wc) -> FuseSuggestion:
    """The fuse suggestions of analysed designs
    (:class:`~supplydesign.evaluation.worstcase.WorstCases`): high mains at full signal
    and the surge of the contract's switch-on run (valves cold)."""
    from .cases import HIGH_MAINS_FULL_LOAD

    return suggest_fuses(wc.designs, wc.cases[HIGH_MAINS_FULL_LOAD.name].arrays,
                         wc.switch_on.i2t_a2s)


def findings(d: Design, hl: HeatLife, b: int) -> list[tuple[str, str]]:
    """(level, text) of the heat and life findings of design ``d``, row b of ``hl``;
    level "warning" or "note"."""
    out: list[tuple[str, str]] = []
    for i, r in enumerate(d.rails):
        used, allowed = hl.cap_ripple_a[b, i], hl.cap_allowed_a[b, i]
        if np.isfinite(allowed) and used > allowed:
            out.append(("warning", f"rail {r.name!r}: capacitor ripple {used:.3g} A above its "
                                   f"{allowed:.3g} A rating at {hl.ambient_c[b, i]:.0f} °C"))
        life = hl.cap_life_h[b, i]
        if d.chassis.min_life_h is not None and np.isfinite(life) and life < d.chassis.min_life_h:
            out.append(("warning", f"rail {r.name!r}: capacitor life about {hours(life)} h "
                                   f"with its core at {hl.cap_core_c[b, i]:.0f} °C, below the "
                                   f"{hours(d.chassis.min_life_h)} h asked"))
        p, pa = hl.res_power_w[b, i], hl.res_allowed_w[b, i]
        if np.isfinite(pa) and p > pa:
            out.append(("warning", f"rail {r.name!r}: resistor dissipates {p:.3g} W, above its "
                                   f"{pa:.3g} W rating at {hl.ambient_c[b, i]:.0f} °C "
                                   "(IEC 60115-1 derating)"))
        if r.capacitor is not None and np.isfinite(hl.cap_life_h[b, i]) \
                and np.isnan(hl.cap_rise_k[b, i]):
            out.append(("note", f"rail {r.name!r}: no can size (diameter, height): the "
                                "capacitor's own heating is left out of its life"))
    rms, allowed = hl.winding_rms_a[b], hl.winding_allowed_a[b]
    if np.isfinite(allowed) and rms > allowed:
        per = "per half" if d.transformer.winding == "center-tapped" else "in the winding"
        if hl.winding_basis[b] == "DC":
            kind = "choke" if d.rails[0].link.kind == "choke" else "capacitor"
            out.append(("warning", f"transformer: the {kind} input draws {rms:.3g} A rms {per} "
                                   f"at {hl.output_dc_a[b]:.3g} A DC (form factor "
                                   f"{hl.form_factor[b]:.2f}); its DC rating of "
                                   f"{d.transformer.rated_current_a:.3g} A assumes "
                                   f"{hl.winding_rated_for[b]}, at most {allowed:.3g} A rms"))
        else:
            out.append(("warning", f"transformer: {rms:.3g} A rms {per}, above its "
                                   f"{allowed:.3g} A rms rating ({hl.winding_basis[b]})"))
    return out
