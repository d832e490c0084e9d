"""Rating choice: the cheapest adequate part for the stresses a part sees.

The array functions here take whole populations (one stress per candidate
design) and a candidate table with the keys of :meth:`Catalog.table`, and
return the row of the cheapest part that is adequate for each candidate. The
per-design side (a rated :class:`~supplydesign.design.Design` with its reasons)
is :mod:`supplydesign.synth.rate`.

What "adequate" means (the rules, with the assumptions made):

- **Capacitor**: same capacitance as the design's; voltage rating at least the
  worst-case voltage times (1 + margin), margin 10 % by default. The worst case
  is never below the rail capacitor's peak at the high mains limit with the
  valves cold (no load), since the caller must give that case. Rms ripple
  current within the rating. Catalog and price-model ripple ratings are at
  100 Hz. A full-wave or bridge rectifier puts the ripple's fundamental at 2f
  (100 Hz on 50 Hz mains, 120 Hz on 60 Hz); we use the 100 Hz rating unchanged
  there (electrolytic ratings at 120 Hz are usually a little higher than at
  100 Hz, so this errs on the safe side). A half-wave rectifier puts it at f
  (50 or 60 Hz), where the ESR of an electrolytic is higher: we assume the
  rating falls to ``low_frequency_ripple_factor`` (default 0.8) of the 100 Hz
  value, a round figure to be checked against the frequency multipliers of the
  part's data sheet. The current compared is the capacitor's total rms ripple
  current (all harmonics) from the evaluator.
- **Resistor** (a power class): rated power at least twice the dissipation, a
  common practice [practice] that keeps the part cool and long-lived; a
  voltage limit at least the highest steady voltage across it; the design's
  resistance within the class's range. The switch-on moment, when the
  capacitor after a dropping resistor is still empty and nearly the whole
  upstream voltage is briefly across it, is not counted: check the part's pulse
  rating for that.
- **Choke**: same inductance as the design's, DC resistance no higher than the
  design's (so the rail voltages do not sag), DC current rating at least the
  highest DC current it carries (full load).

Caution: ratings chosen here follow the figures of a model. They do not make a
design safe; HT capacitors store a lethal charge (fit bleeders, fuse the
supply, follow local codes and licensed practice).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..design import DEFAULT_AMBIENT_C
from . import derating
from .catalog import Catalog
from .eseries import REL_TOL
from .pricing import eseries_capacitors, merge_tables, model_resistor_classes

#: frequency at which catalog ripple-current ratings are given [Hz]
RATING_HZ = 100.0
#: ``source`` of rows made by the demo price model rather than read from a catalog
MODEL_SOURCE = "model"


@dataclass(frozen=True)
class RatingRules:
    """The margins of the rating choice.

    Attributes
    ----------
    voltage_margin : float
        Capacitor voltage rating above the worst-case voltage (0.10 = 10 %).
    power_factor : float
        Resistor power rating over its dissipation (2 = twice, common practice).
    low_frequency_ripple_factor : float
        Share of the 100 Hz ripple-current rating assumed available when the
        ripple's fundamental is below 100 Hz (half-wave rectifiers): 0.8, an
        assumed round figure; check the data sheet.
    model_parts : bool
        Let E-series parts of the demo price model
        (:mod:`supplydesign.parts.pricing`) compete with catalog parts.
    capacitor_series : str
        E-series of the model's capacitors.
    """

    voltage_margin: float = 0.10
    power_factor: float = 2.0
    low_frequency_ripple_factor: float = 0.8
    model_parts: bool = True
    capacitor_series: str = "E6"


RULES = RatingRules()


@dataclass(frozen=True)
class Picks:
    """The chosen rows of a candidate table, one per candidate design.

    Attributes
    ----------
    index : numpy.ndarray of int
        Row of the cheapest adequate part; -1 where no row is adequate.
    price : numpy.ndarray of float
        Its price; NaN where no row is adequate.
    """

    index: np.ndarray
    price: np.ndarray

    @property
    def found(self) -> np.ndarray:
        return self.index >= 0


@dataclass(frozen=True)
class Pool:
    """Candidate tables per family (keys of :meth:`Catalog.table`), one currency."""

    capacitor: dict[str, np.ndarray]
    choke: dict[str, np.ndarray]
    resistor: dict[str, np.ndarray]
    currency: str | None


def candidate_pool(catalog: Catalog, rules: RatingRules = RULES) -> Pool:
    """The parts a rating may be chosen from: the catalog, plus model parts if allowed.

    Parameters
    ----------
    catalog : Catalog
        The catalog in use.
    rules : RatingRules
        ``model_parts`` adds E-series capacitors (``capacitor_series``, 4.7 µF
        to 470 µF) and resistor power classes priced by the invented demo price
        model.

    Raises
    ------
    UserError
        When the catalog and the price model use different currencies.
    """
    caps, res = catalog.table("capacitor"), catalog.table("resistor")
    if rules.model_parts:
        caps = merge_tables(caps, eseries_capacitors(rules.capacitor_series))
        res = merge_tables(res, model_resistor_classes())
    chokes = catalog.table("choke")
    currencies = {c for t in (caps, res, chokes) for c in t["currency"]}
    return Pool(caps, chokes, res, next(iter(currencies)) if len(currencies) == 1 else None)


def _columns(*arrays) -> list[np.ndarray]:
    """The stresses as (n, 1) float columns, broadcast to one length n."""
    return [a[:, None] for a in np.broadcast_arrays(*(np.atleast_1d(np.asarray(x, dtype=float))
                                                      for x in arrays))]


def _equal(wanted: np.ndarray, have: np.ndarray) -> np.ndarray:
    """(n, m) mask: row value ``have`` equals the wanted value within REL_TOL."""
    return np.abs(have[None, :] - wanted) <= REL_TOL * np.abs(wanted)


def cheapest(price: np.ndarray, adequate: np.ndarray) -> Picks:
    """The cheapest adequate row per candidate (the first in table order on a tie).

    Parameters
    ----------
    price : numpy.ndarray, shape (m,)
        Price of each row.
    adequate : numpy.ndarray of bool, shape (n, m)
        Whether row j is adequate for candidate i.
    """
    n, m = adequate.shape
    if m == 0:
        return Picks(np.full(n, -1), np.full(n, np.nan))
    cost = np.where(adequate, price[None, :], np.inf)
    idx = np.argmin(cost, axis=1)
    best = cost[np.arange(n), idx]
    found = np.isfinite(best)
    return Picks(np.where(found, idx, -1), np.where(found, best, np.nan))


def choose_capacitors(table: dict[str, np.ndarray], capacitance_f, voltage_v, ripple_a,
                      ripple_factor=1.0, *, ambient_c=None, min_life_h=None) -> Picks:
    """Cheapest capacitor of the given capacitance with enough voltage and ripple rating.

    Parameters
    ----------
    table : dict of str to numpy.ndarray
        Candidates (``capacitance_f``, ``voltage_rating_v``, ``ripple_rating_a``
        at 100 Hz and the rated temperature, ``price``; for ``ambient_c`` and
        ``min_life_h`` also ``rated_temperature_c``, ``rated_life_h``, ``esr_ohm``,
        ``diameter_m``, ``height_m``, NaN where unknown).
    capacitance_f : array_like, shape (n,) or scalar
        The designs' capacitance [F].
    voltage_v : array_like
        Voltage rating needed, margin included [V].
    ripple_a : array_like
        Rms ripple current the capacitor carries [A].
    ripple_factor : array_like
        Share of the 100 Hz rating available at the ripple frequency (1 for
        full-wave and bridge, ``low_frequency_ripple_factor`` for half-wave).
    ambient_c : array_like, optional
        Air temperature around the capacitor [degC]: the ripple rating is derated
        for it (:func:`~supplydesign.parts.derating.ripple_derating`).
    min_life_h : float, optional
        Least estimated life at ``ambient_c`` with this ripple current
        (:func:`~supplydesign.parts.derating.capacitor_heat`) [h]; a part without
        rated life data cannot show it and is not chosen.

    Returns
    -------
    Picks
    """
    c, v, i, k = _columns(capacitance_f, voltage_v, ripple_a, ripple_factor)
    allowed = table["ripple_rating_a"][None, :] * k
    if ambient_c is not None or min_life_h is not None:
        ta = _columns(DEFAULT_AMBIENT_C if ambient_c is None else ambient_c, capacitance_f)[0]
        allowed = allowed * derating.ripple_derating(ta, table["rated_temperature_c"][None, :])
    ok = (_equal(c, table["capacitance_f"]) & (table["voltage_rating_v"][None, :] >= v)
          & (allowed >= i))
    if min_life_h is not None:
        _, _, life = derating.capacitor_heat(
            i, table["esr_ohm"][None, :], table["diameter_m"][None, :],
            table["height_m"][None, :], table["rated_life_h"][None, :],
            table["rated_temperature_c"][None, :], ta)
        ok &= life >= min_life_h  # NaN (no data) compares False
    return cheapest(table["price"], ok)


def choose_chokes(table: dict[str, np.ndarray], inductance_h, max_dcr_ohm, dc_a) -> Picks:
    """Cheapest choke of the given inductance, DCR at most ``max_dcr_ohm``, rated for ``dc_a``.

    Parameters
    ----------
    table : dict of str to numpy.ndarray
        Candidates (``inductance_h``, ``resistance_ohm``, ``current_rating_a``, ``price``).
    inductance_h : array_like
        The designs' inductance [H].
    max_dcr_ohm : array_like
        Highest DC resistance allowed (the design's) [ohm].
    dc_a : array_like
        Highest DC current through the choke [A].
    """
    ind, r, i = _columns(inductance_h, max_dcr_ohm, np.abs(np.asarray(dc_a, dtype=float)))
    ok = (_equal(ind, table["inductance_h"])
          & (table["resistance_ohm"][None, :] <= r * (1 + REL_TOL))
          & (table["current_rating_a"][None, :] >= i))
    return cheapest(table["price"], ok)


def choose_resistors(table: dict[str, np.ndarray], resistance_ohm, power_w, voltage_v, *,
                     dissipation_w=None, ambient_c=None) -> Picks:
    """Cheapest resistor power class for a value, a power and a voltage across it.

    Parameters
    ----------
    table : dict of str to numpy.ndarray
        Power classes (``power_w``, ``max_voltage_v``, ``min_resistance_ohm``,
        ``max_resistance_ohm`` (NaN: no limit), ``price``; for ``ambient_c`` also
        ``upper_temperature_c``, NaN for the default).
    resistance_ohm : array_like
        The designs' resistance [ohm].
    power_w : array_like
        Power rating needed (the factor over the dissipation included) [W].
    voltage_v : array_like
        Highest steady voltage across the resistor [V].
    dissipation_w, ambient_c : array_like, optional
        The dissipation [W] the class must take at this air temperature [degC],
        its rating derated there (IEC 60115-1,
        :func:`~supplydesign.parts.derating.resistor_derating`).
    """
    r, p, v = _columns(resistance_ohm, power_w, voltage_v)
    lo = np.nan_to_num(table["min_resistance_ohm"], nan=0.0)[None, :]
    hi = np.nan_to_num(table["max_resistance_ohm"], nan=np.inf)[None, :]
    ok = ((table["power_w"][None, :] >= p) & (table["max_voltage_v"][None, :] >= v)
          & (r >= lo * (1 - REL_TOL)) & (r <= hi * (1 + REL_TOL)))
    if dissipation_w is not None and ambient_c is not None:
        d, ta = _columns(dissipation_w, ambient_c)
        upper = table.get("upper_temperature_c", np.full(len(table["power_w"]), np.nan))
        ok &= table["power_w"][None, :] * derating.resistor_derating(ta, upper[None, :]) >= d
    return cheapest(table["price"], ok)


def ripple_fundamental_hz(frequency_hz, arrangement) -> np.ndarray:
    """Ripple fundamental [Hz]: 2f for full-wave and bridge, f for half-wave."""
    half = np.asarray(arrangement) == "half-wave"
    return np.where(half, 1.0, 2.0) * np.asarray(frequency_hz, dtype=float)


def ripple_factor(frequency_hz, arrangement, rules: RatingRules = RULES) -> np.ndarray:
    """Share of the 100 Hz ripple rating assumed available (see the module notes)."""
    fr = ripple_fundamental_hz(frequency_hz, arrangement)
    return np.where(fr >= RATING_HZ * (1 - REL_TOL), 1.0, rules.low_frequency_ripple_factor)


def row(table: dict[str, np.ndarray], index: int) -> dict:
    """One row of a candidate table as a dict of Python values."""
    out = {}
    for key, col in table.items():
        value = col[index]
        out[key] = float(value) if col.dtype == float else value
    return out
