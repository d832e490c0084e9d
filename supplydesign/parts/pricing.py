"""Parts outside any catalog: E-series capacitors and resistors priced by a demo model.

So that a plain "47 uF, 450 V" capacitor or a "2.2 kohm, 5 W" resistor can
compete with catalog parts in synthesis, this module makes candidate tables
with the same keys as :meth:`Catalog.table` from an E-series and the invented
price model :data:`DEMO_PRICES`. :func:`merge_tables` joins such tables with
catalog tables, insisting on one currency.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import UserError
from ..units import format_si
from . import eseries
from .catalog import table_from_rows
from .schema import CAPACITOR, RESISTOR


@dataclass(frozen=True)
class DemoPriceModel:
    """An invented demo price and rating model for parts not in a catalog.

    The coefficients below are made up to give plausible magnitudes; they are
    not market data and no supplier's prices. Replace them, or use a catalog,
    for real costing.

    Capacitors (electrolytic, at 100 Hz):

    - price = ``cap_base + cap_per_joule * C V^2 / 2`` (rated stored energy [J])
    - ESR = ``cap_tan_delta / (2 pi 100 Hz C)`` [ohm]
    - ripple rating = ``cap_ripple_k * sqrt(C V)`` [A] (C in F, V in V), a
      stand-in for the can surface growing with the stored charge
    - available at the ratings ``cap_voltages_v`` [V], tolerance ``cap_tolerance``
    - in the grades ``cap_grades``: (rated temperature [degC], rated life [h],
      price factor), a cheap 85 degC grade and a dearer 105 degC one
    - can volume ``C V^2 / 2 / cap_joules_per_m3 + cap_min_volume_m3``, the height
      twice the diameter, both to the half millimetre

    Resistors (one power class per entry of ``res_powers_w`` [W]):

    - price per piece = ``res_base + res_per_watt * P``
    - maximum element voltage = ``res_volts_per_sqrt_watt * sqrt(P)`` [V]

    Ratings the model computes (ESR, ripple current, element voltage) are stated
    to ``rating_figures`` significant figures, as a data sheet states them, so a
    design file that names such a part reads "1.7 A", not "1.70411267233126 A".
    """

    currency: str = "EUR"
    cap_base: float = 0.90
    cap_per_joule: float = 0.35
    cap_tan_delta: float = 0.10
    cap_ripple_k: float = 4.0
    cap_tolerance: float = 0.20
    cap_voltages_v: tuple[float, ...] = (350.0, 400.0, 450.0, 500.0, 550.0, 600.0)
    cap_grades: tuple[tuple[float, float, float], ...] = ((85.0, 1000.0, 1.0),
                                                          (105.0, 5000.0, 1.35))
    cap_joules_per_m3: float = 6e5
    cap_min_volume_m3: float = 1e-6
    res_base: float = 0.08
    res_per_watt: float = 0.09
    res_volts_per_sqrt_watt: float = 350.0
    res_powers_w: tuple[float, ...] = (0.5, 1.0, 2.0, 3.0, 5.0, 7.0, 10.0)
    rating_figures: int = 3

    def stated(self, x: float) -> float:
        """A computed rating as a data sheet states it (``rating_figures`` figures)."""
        return float(f"{x:.{self.rating_figures}g}")


DEMO_PRICES = DemoPriceModel()


def _label(value: float, unit: str) -> str:
    """Compact id fragment: 4.7e-5 F -> '47uF'."""
    return format_si(value, unit).replace(" ", "").replace("µ", "u")


def eseries_capacitors(series: str = "E6", lo: float = 4.7e-6, hi: float = 470e-6,
                       voltages_v=None, model: DemoPriceModel = DEMO_PRICES
                       ) -> dict[str, np.ndarray]:
    """Candidate capacitors: every series value in [lo, hi] at every voltage rating.

    Parameters
    ----------
    series : str
        E-series of the capacitance values (default E6).
    lo, hi : float
        Capacitance range [F].
    voltages_v : sequence of float, optional
        Voltage ratings [V]; default ``model.cap_voltages_v``.
    model : DemoPriceModel
        Price and rating model (invented demo coefficients).

    Returns
    -------
    dict of str to numpy.ndarray
        The keys of ``Catalog.table("capacitor")``; one block of rows per grade, the
        first grade's ``part`` ids read like ``E6-47uF-450V``, the others' like
        ``E6-47uF-450V-105C``; ``source`` is ``"model"``.
    """
    c = eseries.values(series, lo, hi)
    v = np.asarray(model.cap_voltages_v if voltages_v is None else voltages_v, dtype=float)
    cc, vv = (a.ravel() for a in np.meshgrid(c, v, indexing="ij"))
    price = model.cap_base + model.cap_per_joule * 0.5 * cc * vv**2
    esr = model.cap_tan_delta / (2 * np.pi * 100.0 * cc)
    ripple = model.cap_ripple_k * np.sqrt(cc * vv)
    volume = 0.5 * cc * vv**2 / model.cap_joules_per_m3 + model.cap_min_volume_m3
    diameter = np.round((2.0 * volume / np.pi) ** (1.0 / 3.0) * 2000.0) / 2000.0  # h = 2 d
    ids = [f"{series}-{_label(ci, 'F')}-{vi:g}V" for ci, vi in zip(cc, vv, strict=True)]
    rows = []
    for g, (rated_c, life, factor) in enumerate(model.cap_grades):
        suffix = f"-{rated_c:g}C" if g else ""
        rows += [{"part": i + suffix,
                  "description": f"{series} value, {rated_c:g} degC grade, demo price model",
                  "capacitance_f": ci, "voltage_rating_v": vi, "esr_ohm": model.stated(ei),
                  "ripple_rating_a": model.stated(ri), "tolerance": model.cap_tolerance,
                  "diameter_m": di, "height_m": 2.0 * di, "rated_life_h": life,
                  "rated_temperature_c": rated_c, "price": round(pi * factor, 2),
                  "currency": model.currency, "source": "model"}
                 for i, ci, vi, ei, ri, pi, di in zip(ids, cc, vv, esr, ripple, price, diameter,
                                                      strict=True)]
    return table_from_rows(CAPACITOR, rows)


def model_resistor_classes(model: DemoPriceModel = DEMO_PRICES) -> dict[str, np.ndarray]:
    """The model's resistor power classes, with the keys of ``Catalog.table("resistor")``."""
    rows = [{"part": f"MODEL-{_label(p, 'W')}", "description": "power class, demo price model",
             "power_w": p, "max_voltage_v": model.stated(model.res_volts_per_sqrt_watt
                                                         * np.sqrt(p)),
             "price": round(model.res_base + model.res_per_watt * p, 2),
             "currency": model.currency, "source": "model"}
            for p in model.res_powers_w]
    return table_from_rows(RESISTOR, rows)


def eseries_resistors(classes: dict[str, np.ndarray] | None = None, series: str = "E24",
                      lo: float = 10.0, hi: float = 1e6) -> dict[str, np.ndarray]:
    """Candidate resistors: every series value in [lo, hi] in every power class.

    Parameters
    ----------
    classes : dict of str to numpy.ndarray, optional
        Power classes as ``Catalog.table("resistor")`` gives them (a class's
        min/max resistance limits its values; NaN means no limit). Default:
        :func:`model_resistor_classes`.
    series : str
        E-series of the resistance values (default E24).
    lo, hi : float
        Resistance range [ohm].

    Returns
    -------
    dict of str to numpy.ndarray
        The class table's keys, one row per (value, class), plus
        ``resistance_ohm``; ``part`` is the class id and the value
        (``RES-5W-2.2kohm``).
    """
    classes = model_resistor_classes() if classes is None else classes
    r = eseries.values(series, lo, hi)
    ri, ki = (a.ravel() for a in np.meshgrid(r, np.arange(len(classes["part"])), indexing="ij"))
    rmin = np.nan_to_num(classes["min_resistance_ohm"][ki], nan=0.0)
    rmax = np.nan_to_num(classes["max_resistance_ohm"][ki], nan=np.inf)
    keep = (ri >= rmin * (1 - eseries.REL_TOL)) & (ri <= rmax * (1 + eseries.REL_TOL))
    ri, ki = ri[keep], ki[keep]
    out = {key: col[ki] for key, col in classes.items()}
    out["resistance_ohm"] = ri
    out["part"] = np.array([f"{p}-{_label(v, 'ohm')}" for p, v in zip(out["part"], ri,
                                                                        strict=True)],
                           dtype=object)
    return out


def merge_tables(*tables: dict[str, np.ndarray]) -> dict[str, np.ndarray]:
    """Concatenate candidate tables of one family (catalog and model parts).

    Keys missing from some tables are filled with NaN (numbers) or None (text).

    Raises
    ------
    UserError
        When the tables price in different currencies (naming both).
    """
    currencies = sorted({c for t in tables for c in t["currency"]})
    if len(currencies) > 1:
        raise UserError(f"expected one currency for catalog and model prices, got "
                        f"{' and '.join(currencies)}; convert the catalog or the model",
                        None, "currency")
    keys = list(dict.fromkeys(k for t in tables for k in t))
    out = {}
    for key in keys:
        numeric = any(key in t and t[key].dtype == float for t in tables)
        fill = np.nan if numeric else None
        out[key] = np.concatenate([t[key] if key in t else
                                   np.full(len(t["part"]), fill, dtype=float if numeric else object)
                                   for t in tables])
    return out


def rectifier_pieces(rect) -> int:
    """How many catalog pieces a rectifier takes: one valve, or a diode per junction."""
    if rect.kind == "valve":
        return 1
    return {"full-wave": 2, "bridge": 4, "half-wave": 1}[rect.arrangement]
