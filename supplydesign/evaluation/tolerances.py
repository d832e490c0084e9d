"""The spread of many builds of one design: where each part's tolerance comes from, the
space-filling sample of the builds, and the designs of the builds.

A *factor* is one independently drawn multiplier of one value of a design: the
mains, the transformer's open-circuit voltage and its resistance, a valve
rectifier's drop or a silicon diode's saturation current, every capacitor,
every resistor, every choke's inductance and its DCR. ESR, leakage inductance,
loads and the silicon diode's emission and series resistance stay at their
values.

Where a band comes from, in this order (:func:`factors`):

1. the design file: ``tolerance`` (and a choke's or the winding's
   ``resistance_tolerance``) on the part;
2. the parts catalog: the ``tolerance [%]`` column of the part's row (capacitors,
   chokes, resistor power classes, transformers);
3. the IEC 60063 series the value belongs to (capacitors from E6 on, resistors
   from E24 on, see :func:`~supplydesign.parts.eseries.series_of`): E6 20 %,
   E12 10 %, E24 5 %, E48 2 %, E96 1 %, E192 0.5 %;
4. a default of the part's kind, :data:`DEFAULT_TOLERANCE`, named as such in
   every report.

The mains spreads across its own band (``[mains] tolerance`` or ``low``/``high``).

Distributions (:func:`multipliers`): uniform within the band, unless the file
says ``distribution = "normal"``: then a normal distribution whose band is ±3σ,
each side with its own σ when the band is asymmetric (the median stays at the
nominal value), cut at the band (a maker's final test rejects what lies
outside; 0.27 % of a normal distribution). A silicon diode's saturation current
spreads log-uniformly over a decade either way.

Sampling (:func:`unit_sample`): a Latin hypercube (scipy.stats.qmc), which
stratifies every factor into as many equal-probability slices as there are
builds, so that percentiles settle with fewer builds than plain random
sampling needs; the same seed gives the same builds.

References
----------
.. [1] IEC 60063:2015, "Preferred number series for resistors and capacitors"
   (the series and the tolerances they go with).
.. [2] M. D. McKay, R. J. Beckman, W. J. Conover, "A comparison of three methods
   for selecting values of input variables in the analysis of output from a
   computer code", Technometrics 21(2), 239-245 (1979) (Latin hypercube sampling).
.. [3] JCGM 101:2008, "Evaluation of measurement data - Supplement 1 to the Guide
   to the expression of uncertainty in measurement - Propagation of distributions
   using a Monte Carlo method" (the procedure the builds follow).
"""

from __future__ import annotations

import inspect
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from ..design import Design

#: default band of each kind of part when file, catalog and series give none
#: (fractions, symmetric; from memory of makers' usual offers, not from a standard)
DEFAULT_TOLERANCE = {
    "capacitor": 0.20,
    "resistor": 0.05,
    "choke inductance": 0.20,
    "choke resistance": 0.10,
    "transformer voltage": 0.05,
    "transformer resistance": 0.10,
    "valve drop": 0.15,
}
#: a silicon diode's saturation current spreads over this factor either way
#: (log-uniform; from memory: it differs by orders of magnitude between makers and
#: batches, which moves the forward drop by about a tenth of a volt per decade)
SILICON_SATURATION_FACTOR = 10.0
#: the first IEC 60063 series a kind of part is made to (see eseries.series_of)
FIRST_SERIES = {"capacitor": "E6", "resistor": "E24"}
#: a normal distribution's band is this many standard deviations, and it is cut there
NORMAL_BAND_SIGMAS = 3.0


@dataclass(frozen=True)
class Factor:
    """One independently drawn multiplier of one value of the design.

    Attributes
    ----------
    part : str
        The name reports use: "mains", "transformer voltage", "plates capacitor".
    target : tuple
        What it multiplies: ("mains",), ("transformer", field), ("rectifier", field),
        ("capacitor", rail index), ("link", rail index, field).
    low, high : float
        The band of the multiplier: 1 - low ... 1 + high.
    distribution : str
        "uniform", "normal" or "log-uniform".
    source : str
        Where the band comes from, in words ("design file", "catalog CAP-47U-450",
        "E6 series (IEC 60063)", "default": :data:`DEFAULT_TOLERANCE` of its kind).
    """

    part: str
    target: tuple
    low: float
    high: float
    distribution: str
    source: str

    @property
    def band(self) -> str:
        """The band in words: "±20 %", "-10 % +50 %" or "÷10 ... ×10"."""
        if self.distribution == "log-uniform":
            return f"÷{1.0 / (1.0 - self.low):.3g} … ×{1.0 + self.high:.3g}"
        if self.low == self.high:
            return f"±{100 * self.low:.3g} %"
        return f"-{100 * self.low:.3g} % +{100 * self.high:.3g} %"


def _catalog_tolerance(catalog, family: str, part: str | None) -> float | None:
    """The tolerance column of a catalog row, or None (no catalog, no id, no cell)."""
    if catalog is None or part is None:
        return None
    try:
        value = catalog.row(family, part).get("tolerance")
    except KeyError:
        return None
    return None if value is None or not np.isfinite(value) else float(value)


def _band(given, distribution: str, kind: str, value: float | None, catalog=None,
          family: str | None = None, part: str | None = None):
    """(low, high, distribution, source) of one part's value, in the module's order."""
    if given is not None:
        return given.low, given.high, distribution, "design file"
    tol = _catalog_tolerance(catalog, family, part) if family else None
    if tol is not None:
        return tol, tol, distribution, f"catalog {part}"
    if kind in FIRST_SERIES and value is not None and value > 0:
        from ..parts.eseries import SERIES_TOLERANCE, series_of

        name = series_of(value, FIRST_SERIES[kind])
        if name is not None:
            tol = SERIES_TOLERANCE[name]
            return tol, tol, distribution, f"{name} series (IEC 60063)"
    tol = DEFAULT_TOLERANCE[kind]
    return tol, tol, distribution, "default"


def factors(design: Design, catalog=None, *, fixed_mains: bool = False) -> list[Factor]:
    """Every factor of ``design`` with its band and where the band comes from.

    Parameters
    ----------
    design : Design
        A complete design.
    catalog : supplydesign.parts.Catalog, optional
        The catalog whose ``tolerance`` column serves parts named by ``part`` id.
    fixed_mains : bool
        Hold the mains at nominal (the spread of the parts alone).

    Returns
    -------
    list of Factor
        Mains, transformer, rectifier, then per rail its link and capacitor.
    """
    m, tr, rect = design.mains, design.transformer, design.rectifier
    out = [Factor("mains", ("mains",), 0.0, 0.0, "uniform", "held at nominal") if fixed_mains
           else Factor("mains", ("mains",), m.low, m.high, m.distribution,
                       "the design's mains band")]
    out.append(Factor("transformer voltage", ("transformer", "open_circuit_v"), *_band(
        tr.tolerance, tr.distribution, "transformer voltage", None, catalog, "transformer",
        tr.part)))
    out.append(Factor("transformer resistance", ("transformer", "resistance_ohm"), *_band(
        tr.resistance_tolerance, tr.distribution, "transformer resistance", None)))
    if rect.kind == "valve":
        out.append(Factor("rectifier drop", ("rectifier", "drop_v"), *_band(
            rect.tolerance, rect.distribution, "valve drop", None)))
    else:
        k = SILICON_SATURATION_FACTOR
        out.append(Factor("diode law", ("rectifier", "saturation_current_a"), 1.0 - 1.0 / k,
                          k - 1.0, "log-uniform", "stated spread (silicon)"))
    for i, r in enumerate(design.rails):
        link = r.link
        if link.kind == "resistor":
            out.append(Factor(f"{r.name} resistor", ("link", i, "resistance_ohm"), *_band(
                link.tolerance, link.distribution, "resistor", link.resistance_ohm, catalog,
                "resistor", link.part)))
        elif link.kind == "choke":
            out.append(Factor(f"{r.name} choke L", ("link", i, "inductance_h"), *_band(
                link.tolerance, link.distribution, "choke inductance", None, catalog, "choke",
                link.part)))
            out.append(Factor(f"{r.name} choke DCR", ("link", i, "resistance_ohm"), *_band(
                link.resistance_tolerance, link.distribution, "choke resistance", None)))
        cap = r.capacitor
        if cap is not None:
            out.append(Factor(f"{r.name} capacitor", ("capacitor", i), *_band(
                cap.tolerance, cap.distribution, "capacitor", cap.capacitance_f, catalog,
                "capacitor", cap.part)))
    return out


def unit_sample(dimensions: int, builds: int, seed: int) -> np.ndarray:
    """A Latin hypercube of ``builds`` points in [0, 1)^dimensions, repeatable by ``seed``.

    References
    ----------
    .. [1] McKay, Beckman, Conover, Technometrics 21(2), 239-245 (1979).
    """
    from scipy.stats import qmc

    rng = np.random.default_rng(seed)
    # scipy renamed the engines' seed argument to rng (1.15); take whichever it has
    key = "rng" if "rng" in inspect.signature(qmc.LatinHypercube).parameters else "seed"
    return qmc.LatinHypercube(d=dimensions, **{key: rng}).random(builds)


def multipliers(fs: Sequence[Factor], u: np.ndarray) -> np.ndarray:
    """The multipliers of the builds from points ``u`` in [0, 1), shape (N, len(fs)).

    Uniform: 1 - low + u (low + high). Normal: the standard normal cut at
    ±NORMAL_BAND_SIGMAS by its inverse distribution function, scaled by low/3 below
    and high/3 above. Log-uniform: from 1 - low to 1 + high evenly in the logarithm.
    """
    from scipy.stats import norm

    out = np.empty_like(u, dtype=float)
    for j, f in enumerate(fs):
        x = u[:, j]
        if f.distribution == "uniform":
            out[:, j] = 1.0 - f.low + x * (f.low + f.high)
        elif f.distribution == "normal":
            edge = norm.cdf(-NORMAL_BAND_SIGMAS)
            z = norm.ppf(edge + x * (1.0 - 2.0 * edge))
            out[:, j] = 1.0 + z / NORMAL_BAND_SIGMAS * np.where(z < 0, f.low, f.high)
        elif f.distribution == "log-uniform":
            lo, hi = np.log(1.0 - f.low), np.log(1.0 + f.high)
            out[:, j] = np.exp(lo + x * (hi - lo))
        else:
            raise ValueError(f"unknown distribution {f.distribution!r}")
    return out


def _column(fs: Sequence[Factor], m: np.ndarray, target: tuple) -> np.ndarray | None:
    for j, f in enumerate(fs):
        if f.target == target:
            return m[:, j]
    return None


def build_designs(design: Design, fs: Sequence[Factor], m: np.ndarray,
                  mains_factor: float | None = None) -> list[Design]:
    """The designs of the builds: every factor's value times its multiplier.

    The mains is folded into the winding's open-circuit voltage (the emf scales with
    both). ``mains_factor``, when given, replaces the sampled mains by that fixed
    factor (1 + high for the cases at high mains).
    """
    n = m.shape[0]
    tr, rect = design.transformer, design.rectifier
    mains = (_column(fs, m, ("mains",)) if mains_factor is None
             else np.full(n, mains_factor))
    oc = tr.open_circuit_v * mains * _column(fs, m, ("transformer", "open_circuit_v"))
    rw = tr.resistance_ohm * _column(fs, m, ("transformer", "resistance_ohm"))
    rect_cols = {field: getattr(rect, field) * _column(fs, m, ("rectifier", field))
                 for field in ("drop_v", "saturation_current_a")
                 if _column(fs, m, ("rectifier", field)) is not None}
    rail_cols = []
    for i, r in enumerate(design.rails):
        link = {field: getattr(r.link, field) * col for field in ("resistance_ohm", "inductance_h")
                if (col := _column(fs, m, ("link", i, field))) is not None}
        cap = _column(fs, m, ("capacitor", i))
        rail_cols.append((link, None if cap is None else r.capacitor.capacitance_f * cap))
    # the columns as lists of floats, and a cheap copy of each frozen dataclass: a build
    # is a handful of field changes, and dataclasses.replace (which runs __init__ over
    # every field) was a fifth of a synthesis' yield pass
    oc, rw = oc.tolist(), rw.tolist()
    rect_cols = {k: v.tolist() for k, v in rect_cols.items()}
    rail_cols = [({k: v.tolist() for k, v in link.items()}, None if cap is None else cap.tolist())
                 for link, cap in rail_cols]
    out = []
    for b in range(n):
        rails = tuple(
            _changed(r, link=_changed(r.link, **{k: v[b] for k, v in link.items()}),
                     capacitor=r.capacitor if cap is None else _changed(r.capacitor,
                                                                        capacitance_f=cap[b]))
            for r, (link, cap) in zip(design.rails, rail_cols, strict=True))
        out.append(_changed(design, transformer=_changed(tr, open_circuit_v=oc[b],
                                                         resistance_ohm=rw[b]),
                            rectifier=_changed(rect, **{k: v[b] for k, v in rect_cols.items()}),
                            rails=rails))
    return out


def _changed(obj, **fields):
    """A copy of the frozen dataclass ``obj`` with ``fields`` changed, as
    ``dataclasses.replace`` makes it (the design classes have no ``__post_init__``) but
    without running ``__init__``."""
    new = object.__new__(type(obj))
    new.__dict__.update(obj.__dict__)
    new.__dict__.update(fields)
    return new
