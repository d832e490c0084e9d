"""Many builds of one design: every part drawn within its tolerance, the mains across its
band, all builds solved as one batch by the evaluator (``supplydesign spread``).

What is solved, per build (:func:`run_spread`):

- the periodic steady state at the build's own mains with the stages at full
  signal (DC, hum, ripple current in every capacitor, dissipation in every
  resistor, choke current, rectifier peak current), and at idle current when a
  stage's idle current differs (the change from idle to full signal);
- the highest voltage on every capacitor at high mains with no stage drawing.
  Where nothing draws without load (no bleeder, no resistive load) every
  capacitor charges to the crest of the winding's open-circuit voltage at high
  mains, which is taken as it stands: the bound ``evaluate`` also uses, 0.1 %
  above the solved steady state (the junctions' leakage). With a bleeder or a
  resistive load, the no-load steady state is solved;
- the rectifier's switch-on surge at high mains from the crest of the mains with
  every capacitor empty (as ``evaluate``'s switch-on), run only as long as the
  surge lasts: half a mains period for a capacitor input, plus half the
  resonance period of the input choke with its capacitor for a choke input.
  The overshoot of the capacitor voltages later in the switch-on is not part of
  the spread (``evaluate`` reports it for the nominal design).

The builds are solved in chunks of ``CHUNK`` to bound the memory.

A build *meets the design's targets* when its steady state settled and every
rail lies within its ``voltage`` ± ``tolerance`` and its ``hum`` allowance at the
build's own mains and full signal (a rail without targets always meets them).

Caution: these are a model's figures for parts within their stated tolerances;
they do not make any build safe. Stored charge, fusing and isolation follow local
codes and licensed practice.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np

from ..circuit.netlist import OperatingCase, build
from ..circuit.steady import STEPS_PER_PERIOD
from ..circuit.transient import switch_on
from ..design import Design
from .analysis import IDLE, FigureArrays, evaluate_arrays, stack_rows
from .spreadstats import Percentile, percentile, regression_shares, yield_interval
from .tolerances import Factor, build_designs, factors, multipliers, unit_sample

#: builds solved together at most (memory: about 0.3 MB per build of a four-rail design)
CHUNK = 500
#: builds when none is asked for
DEFAULT_BUILDS = 2000
#: the percentiles reported of DC and regulation, and of hum
DC_PERCENTILES = (0.01, 0.50, 0.99)
HUM_PERCENTILES = (0.50, 0.99)
#: the percentile at which part stresses are compared with their ratings
STRESS_PERCENTILE = 0.99


@dataclass
class Spread:
    """The builds of one design and their figures; arrays over builds (N,) or builds and
    rails (N, R)."""

    design: Design
    factors: list[Factor]
    seed: int
    multipliers: np.ndarray  # (N, d), one column per factor
    full: FigureArrays  # the build's own mains, full signal
    idle_dc_v: np.ndarray  # (N, R) the same at idle current
    cap_no_load_v: np.ndarray  # (N, R) highest capacitor voltage, high mains, no load
    no_load_method: str  # how cap_no_load_v was found, in words
    surge_a: np.ndarray  # (N,) switch-on surge in one anode or diode, high mains
    converged: np.ndarray  # (N,) every steady state of the build settled

    @property
    def builds(self) -> int:
        return int(self.multipliers.shape[0])

    @property
    def regulation_pct(self) -> np.ndarray:
        """DC change from idle to full signal, % of the full-signal DC, (N, R)."""
        with np.errstate(invalid="ignore", divide="ignore"):
            return 100.0 * (self.idle_dc_v - self.full.dc_v) / self.full.dc_v

    @property
    def meets(self) -> np.ndarray:
        """(N, R) bool: the build's rail lies within its voltage band and hum allowance."""
        return meets_targets(self.design, self.full, self.converged)


def meets_targets(design: Design, full: FigureArrays, converged: np.ndarray) -> np.ndarray:
    """(N, R) bool: each settled build's rail lies within its ``voltage`` ± ``tolerance``
    and its ``hum`` (a rail without targets always meets them)."""
    ok = np.repeat(np.asarray(converged, dtype=bool)[:, None], len(design.rails), axis=1)
    for i, r in enumerate(design.rails):
        if r.voltage_v is not None:
            ok[:, i] &= np.abs(full.dc_v[:, i] - r.voltage_v) <= r.tolerance * r.voltage_v
        if r.hum_v is not None:
            ok[:, i] &= full.ripple_rms_v[:, i] <= r.hum_v
    return ok


def _chunks(designs: list[Design], solve: Callable[[list[Design]], FigureArrays],
            progress=None, stage: str = "") -> FigureArrays:
    parts = []
    for start in range(0, len(designs), CHUNK):
        rows = np.arange(start, min(start + CHUNK, len(designs)))
        parts.append((rows, solve([designs[k] for k in rows])))
        if progress is not None:
            progress(stage, int(rows[-1]) + 1, len(designs))
    return stack_rows(parts, len(designs))


def _draws_without_load(design: Design) -> bool:
    """Whether anything draws current when no stage does (a bleeder, a resistive load)."""
    return any(r.bleeder_ohm is not None or r.load_resistance_ohm is not None
               for r in design.rails)


def surge_window_s(design: Design) -> float:
    """How long the switch-on surge needs to be followed [s] (see module docstring).

    Half a mains period for a capacitor input (the first charging pulse is the
    largest); for a choke input, the choke current peaks about a quarter of its
    resonance period 2π√(LC) after switch-on, so half that period more.
    """
    half = 0.5 / design.mains.frequency_hz
    first = design.rails[0]
    if first.link.kind != "choke":
        return half
    c = first.capacitor.capacitance_f if first.capacitor is not None else 0.0
    return half + np.pi * np.sqrt(first.link.inductance_h * c)


def _surge(designs: list[Design], progress=None) -> np.ndarray:
    out = np.empty(len(designs))
    window = np.array([surge_window_s(d) for d in designs])
    for start in range(0, len(designs), CHUNK):
        rows = np.arange(start, min(start + CHUNK, len(designs)))
        circuit = build([designs[k] for k in rows], OperatingCase("switch_on", 1.0, "none"))
        out[rows] = switch_on([circuit], t_max_s=window[rows]).surge_a
        if progress is not None:
            progress("switch-on surge", int(rows[-1]) + 1, len(designs))
    return out


def run_spread(design: Design, catalog=None, *, builds: int = DEFAULT_BUILDS, seed: int = 1,
               steps: int = STEPS_PER_PERIOD, fixed_mains: bool = False,
               progress: Callable[[str, int, int], None] | None = None) -> Spread:
    """Draw ``builds`` builds of ``design`` and solve them (see module docstring).

    Parameters
    ----------
    design : Design
        A complete design.
    catalog : supplydesign.parts.Catalog, optional
        Source of the tolerance of parts named by id.
    builds : int
        Number of builds, at least 2.
    seed : int
        The same seed draws the same builds.
    steps : int
        Steps per mains period of the steady state, at least.
    fixed_mains : bool
        Hold the mains at nominal: the spread of the parts alone.
    progress : callable, optional
        ``progress(stage, done, total)`` after every chunk.
    """
    if builds < 2:
        raise ValueError("a spread needs at least two builds")
    fs = factors(design, catalog, fixed_mains=fixed_mains)
    m = multipliers(fs, unit_sample(len(fs), builds, seed))
    own = build_designs(design, fs, m)
    high = build_designs(design, fs, m, mains_factor=1.0 + design.mains.high)

    full = _chunks(own, lambda ds: evaluate_arrays(ds, steps=steps), progress,
                   "full signal")
    converged = full.converged.copy()
    if any(r.idle_a != r.current_a for r in design.rails):
        idle = _chunks(own, lambda ds: evaluate_arrays(ds, IDLE, steps=steps), progress, "idle")
        idle_dc = idle.dc_v
        converged &= idle.converged
    else:
        idle_dc = full.dc_v.copy()
    has_cap = np.array([r.capacitor is not None for r in design.rails])
    if _draws_without_load(design):
        cold = _chunks(high, lambda ds: evaluate_arrays(
            ds, OperatingCase("high_mains_no_load", 1.0, "none"), steps=steps), progress,
            "high mains, no load")
        # where the no-load state did not settle, the crest bounds it (as in evaluate)
        crest = np.sqrt(2.0) * np.array([d.transformer.open_circuit_v for d in high])
        no_load = np.where(cold.converged[:, None], cold.peak_v,
                           np.fmax(cold.peak_v, crest[:, None]))
        method = "no-load steady state at high mains"
    else:
        crest = np.sqrt(2.0) * np.array([d.transformer.open_circuit_v for d in high])
        no_load = np.repeat(crest[:, None], len(design.rails), axis=1)
        method = ("crest of the open-circuit voltage at high mains (nothing draws without "
                  "load)")
    no_load = np.where(has_cap[None, :], no_load, np.nan)
    surge = _surge(high, progress)
    return Spread(design=design, factors=fs, seed=seed, multipliers=m, full=full,
                  idle_dc_v=idle_dc, cap_no_load_v=no_load, no_load_method=method,
                  surge_a=surge, converged=converged)


@dataclass(frozen=True)
class BuildYield:
    """The yield of one design over its builds."""

    passed: int
    builds: int
    converged: int
    ci: tuple[float, float]

    @property
    def fraction(self) -> float:
        return self.passed / self.builds


def build_yields(designs: list[Design], catalog=None, *, builds: int = DEFAULT_BUILDS,
                 seed: int = 1, steps: int = STEPS_PER_PERIOD,
                 progress: Callable[[str, int, int], None] | None = None) -> list[BuildYield]:
    """The yield of each of several designs, all their builds solved together.

    Each design gets the builds :func:`run_spread` draws for it with the same seed,
    solved at their own mains and full signal only (what the yield needs), the
    builds of every design in one batch per topology. A design's yield here is its
    ``run_spread`` yield, but for a build whose idle-current state (not solved here)
    would not settle.
    """
    own: list[Design] = []
    for d in designs:
        fs = factors(d, catalog)
        own += build_designs(d, fs, multipliers(fs, unit_sample(len(fs), builds, seed)))
    full = _chunks(own, lambda ds: evaluate_arrays(ds, steps=steps), progress, "yield")
    out = []
    for k, d in enumerate(designs):
        rows = np.arange(k * builds, (k + 1) * builds)
        sub = FigureArrays(**{name: getattr(full, name)[rows]
                              for name in FigureArrays.__dataclass_fields__})
        passed = int(np.sum(np.all(meets_targets(d, sub, sub.converged), axis=1)))
        out.append(BuildYield(passed, builds, int(np.sum(sub.converged)),
                              yield_interval(passed, builds)))
    return out


# --------------------------------------------------------------------------- summary


@dataclass
class Driver:
    part: str
    share: float  # of the variance of the figure's logarithm


@dataclass
class RailSpread:
    """The spread of one rail's figures over the settled builds."""

    name: str
    dc_mean_v: float
    dc_v: list[Percentile]  # DC_PERCENTILES
    hum_v: list[Percentile]  # HUM_PERCENTILES, rms
    regulation_pct: list[Percentile]  # DC_PERCENTILES
    passed: int  # builds meeting this rail's targets
    yield_ci: tuple[float, float]
    dc_drivers: list[Driver]  # every factor, largest share first
    dc_r2: float
    hum_drivers: list[Driver]
    hum_r2: float
    builds: int = 0

    @property
    def yield_(self) -> float:
        return self.passed / self.builds if self.builds else float("nan")


@dataclass
class StressSpread:
    """One part's stress over the builds against its rating."""

    part: str
    what: str
    unit: str  # "V", "A", "W"
    at_percentile: Percentile  # STRESS_PERCENTILE
    rating: float | None
    over: int  # builds above the rating
    builds: int


@dataclass
class SpreadSummary:
    builds: int
    seed: int
    converged: int
    passed: int
    yield_ci: tuple[float, float]
    rails: list[RailSpread]
    stresses: list[StressSpread]
    factors: list[Factor]
    no_load_method: str
    extra: dict = field(default_factory=dict)

    @property
    def yield_(self) -> float:
        return self.passed / self.builds


def _drivers(fs: list[Factor], x: np.ndarray, y: np.ndarray) -> tuple[list[Driver], float]:
    with np.errstate(divide="ignore", invalid="ignore"):
        ly = np.where(y > 0, np.log(y), np.nan)
    shares, r2 = regression_shares(x, ly)
    order = np.argsort(-shares, kind="stable")
    return [Driver(fs[j].part, float(shares[j])) for j in order], r2


def stresses(sp: Spread) -> list[tuple[str, str, str, np.ndarray, float | None]]:
    """(part, what, unit, value per build, rating or None) of every stressed part;
    values NaN where the build did not settle."""
    d, fa = sp.design, sp.full
    ok = sp.converged

    def only(v):
        return np.where(ok, v, np.nan)

    out = []
    for i, r in enumerate(d.rails):
        cap = r.capacitor
        if cap is not None:
            out.append((f"{r.name} capacitor", "no-load voltage", "V",
                        sp.cap_no_load_v[:, i], cap.voltage_rating_v))
            out.append((f"{r.name} capacitor", "ripple current", "A",
                        only(fa.cap_ripple_rms_a[:, i]), cap.ripple_rating_a))
        if r.link.kind == "resistor":
            out.append((f"{r.name} resistor", "dissipation", "W", only(fa.link_power_w[:, i]),
                        r.link.power_w))
        elif r.link.kind == "choke":
            out.append((f"{r.name} choke", "DC current", "A", only(fa.link_dc_a[:, i]),
                        r.link.current_rating_a))
    rect = d.rectifier
    element = "anode" if rect.kind == "valve" else "diode"
    out.append(("rectifier", f"peak current per {element}", "A", only(fa.rect_peak_a),
                rect.max_peak_current_a))
    out.append(("rectifier", "switch-on surge", "A", sp.surge_a, rect.max_surge_current_a))
    return out


def summarise(sp: Spread) -> SpreadSummary:
    """Percentiles, yields, drivers and stresses of a spread."""
    n = sp.builds
    ok = sp.converged
    fa = sp.full
    x = np.log(sp.multipliers)
    meets = sp.meets
    reg = sp.regulation_pct
    rails = []
    for i, r in enumerate(sp.design.rails):
        dc = np.where(ok, fa.dc_v[:, i], np.nan)
        hum = np.where(ok, fa.ripple_rms_v[:, i], np.nan)
        dc_drivers, dc_r2 = _drivers(sp.factors, x, dc)
        hum_drivers, hum_r2 = _drivers(sp.factors, x, hum)
        passed = int(np.sum(meets[:, i]))
        rails.append(RailSpread(
            name=r.name, dc_mean_v=float(np.nanmean(dc)) if ok.any() else float("nan"),
            dc_v=[percentile(dc, p) for p in DC_PERCENTILES],
            hum_v=[percentile(hum, p) for p in HUM_PERCENTILES],
            regulation_pct=[percentile(np.where(ok, reg[:, i], np.nan), p)
                            for p in DC_PERCENTILES],
            passed=passed, yield_ci=yield_interval(passed, n), dc_drivers=dc_drivers,
            dc_r2=dc_r2, hum_drivers=hum_drivers, hum_r2=hum_r2, builds=n))
    out = []
    for part, what, unit, values, rating in stresses(sp):
        over = int(np.sum(values > rating)) if rating is not None else 0
        out.append(StressSpread(part, what, unit, percentile(values, STRESS_PERCENTILE),
                                rating, over, n))
    passed = int(np.sum(np.all(meets, axis=1)))
    return SpreadSummary(builds=n, seed=sp.seed, converged=int(np.sum(ok)), passed=passed,
                         yield_ci=yield_interval(passed, n), rails=rails, stresses=out,
                         factors=sp.factors, no_load_method=sp.no_load_method)
