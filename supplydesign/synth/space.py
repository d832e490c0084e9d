"""The search space of a brief: open choices as integer variables over real parts.

Every open choice becomes one integer variable (pymoo rounds them):

- an open link: its kind (when it may be a resistor or a choke), the resistor
  value (an index into the E24 values between ``R_MIN`` and ``R_MAX``) and the
  choke (an index into the catalog's chokes);
- an open capacitor: an index into the distinct capacitances that the catalog
  and the E-series model offer;
- an open transformer or rectifier: an index into the brief's ``choose`` list.

The capacitor's voltage rating, the resistor's power class and every price
follow from the stresses (:mod:`supplydesign.synth.score`), not from variables.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace

import numpy as np

from ..design import Capacitor, Design, Link, Rectifier, Transformer
from ..errors import UserError
from ..parts import eseries
from ..parts.rating import candidate_pool

KIND_WIRE, KIND_RESISTOR, KIND_CHOKE = 0, 1, 2
KIND_NAMES = {KIND_WIRE: "wire", KIND_RESISTOR: "resistor", KIND_CHOKE: "choke"}
#: range of dropping-resistor values searched [ohm] (E24)
R_MIN, R_MAX = 47.0, 220e3


@dataclass(frozen=True)
class Variable:
    name: str  # e.g. 'rail "screens" link kind'
    choices: int  # the variable takes 0 .. choices-1


@dataclass
class RailSpace:
    """What may vary on one rail; fixed parts have a single choice."""

    kinds: tuple[int, ...]  # allowed link kinds (KIND_*)
    fixed_link: Link | None  # the brief's link when it is fully given
    cap_open: bool
    fixed_cap: Capacitor | None
    var_kind: int = -1  # column of X, or -1
    var_r: int = -1
    var_choke: int = -1
    var_cap: int = -1


@dataclass
class SearchSpace:
    brief: Design
    transformers: list[Transformer]
    rectifiers: list[Rectifier]
    rails: list[RailSpace]
    resistor_values: np.ndarray  # E24 [ohm]
    chokes: dict[str, np.ndarray]  # catalog table
    capacitors: dict[str, np.ndarray]  # catalog + E-series model parts
    capacitances: np.ndarray  # distinct values [F], sorted
    resistor_classes: dict[str, np.ndarray]  # catalog + model power classes
    currency: str | None
    variables: list[Variable] = field(default_factory=list)
    var_transformer: int = -1
    var_rectifier: int = -1

    @property
    def n_var(self) -> int:
        return len(self.variables)

    def bounds(self) -> tuple[np.ndarray, np.ndarray]:
        return np.zeros(self.n_var), np.array([v.choices - 1 for v in self.variables], float)


def _resolve_transformers(brief: Design, catalog) -> list[Transformer]:
    tr = brief.transformer
    if not tr.choose:
        return [tr]
    out = []
    for pid in dict.fromkeys(tr.choose):  # a part listed twice is one choice
        # the amplifier's other load (heaters, bias) is the brief's, whichever is chosen
        out.append(Transformer(**{k: v for k, v in catalog.get("transformer", pid).items()
                                  if k in Transformer.__dataclass_fields__},
                               other_load_va=tr.other_load_va))
    return out


def _resolve_rectifiers(brief: Design, transformers: list[Transformer], catalog) -> list[Rectifier]:
    rect = brief.rectifier
    if not rect.choose:
        return [rect]
    winding = {t.winding for t in transformers}
    out = []
    for pid in dict.fromkeys(rect.choose):
        d = {k: v for k, v in catalog.get("rectifier", pid).items()
             if k in Rectifier.__dataclass_fields__}
        if "arrangement" not in d:  # silicon: the arrangement follows the winding
            d["arrangement"] = "full-wave" if winding == {"center-tapped"} else "bridge"
        out.append(Rectifier(**d))
    return out


def build_space(brief: Design, catalog) -> SearchSpace:
    """The search space of ``brief`` with parts from ``catalog`` (a parts.Catalog)."""
    transformers = _resolve_transformers(brief, catalog)
    rectifiers = _resolve_rectifiers(brief, transformers, catalog)
    for t in transformers:
        for r in rectifiers:
            if (t.winding == "center-tapped") != (r.arrangement == "full-wave"):
                raise UserError(f"transformer {t.part or ''} ({t.winding}) cannot feed rectifier "
                                f"{r.part or ''} ({r.arrangement})", brief.source, "rectifier")
    pool = candidate_pool(catalog)  # catalog parts plus E-series parts of the price model
    caps, chokes = pool.capacitor, pool.choke
    space = SearchSpace(
        brief=brief, transformers=transformers, rectifiers=rectifiers, rails=[],
        resistor_values=eseries.values("E24", R_MIN, R_MAX), chokes=chokes, capacitors=caps,
        capacitances=np.unique(caps["capacitance_f"]), resistor_classes=pool.resistor,
        currency=pool.currency or catalog.currency)
    var = space.variables
    if len(transformers) > 1:
        space.var_transformer = len(var)
        var.append(Variable("transformer", len(transformers)))
    if len(rectifiers) > 1:
        space.var_rectifier = len(var)
        var.append(Variable("rectifier", len(rectifiers)))
    for rail in brief.rails:
        link = rail.link
        if link.kind == "choose":
            kinds = tuple(KIND_RESISTOR if k == "resistor" else KIND_CHOKE if k == "choke"
                          else KIND_WIRE for k in link.among)
        else:
            kinds = ({"wire": KIND_WIRE, "resistor": KIND_RESISTOR, "choke": KIND_CHOKE}
                     [link.kind],)
        rs = RailSpace(kinds=kinds, fixed_link=None if link.is_open else link,
                       cap_open=rail.capacitor is not None and rail.capacitor.is_open,
                       fixed_cap=rail.capacitor)
        label = f'rail "{rail.name}"'
        if rs.fixed_link is None:
            if len(kinds) > 1:
                rs.var_kind = len(var)
                var.append(Variable(f"{label} link kind", len(kinds)))
            if KIND_RESISTOR in kinds:
                rs.var_r = len(var)
                var.append(Variable(f"{label} resistor", len(space.resistor_values)))
            if KIND_CHOKE in kinds:
                rs.var_choke = len(var)
                var.append(Variable(f"{label} choke", len(chokes["part"])))
        if rs.cap_open:
            rs.var_cap = len(var)
            var.append(Variable(f"{label} capacitor", len(space.capacitances)))
        space.rails.append(rs)
    return space


@dataclass
class Decoded:
    """A population's choices as arrays: (n,) or (n, R)."""

    transformer: np.ndarray  # index into space.transformers
    rectifier: np.ndarray
    kind: np.ndarray  # (n, R) KIND_*
    resistance: np.ndarray  # (n, R) link resistance [ohm] (resistor value or choke DCR)
    inductance: np.ndarray  # (n, R) [H], 0 for resistors and wires
    choke: np.ndarray  # (n, R) row of space.chokes, -1 if none from the catalog
    capacitance: np.ndarray  # (n, R) [F], NaN where the rail has no capacitor

    @property
    def n(self) -> int:
        return self.kind.shape[0]


def decode(space: SearchSpace, X: np.ndarray) -> Decoded:
    """Integer variables (n, n_var) -> choices as arrays."""
    X = np.rint(np.asarray(X, dtype=float)).astype(int)
    n, R = X.shape[0], len(space.rails)

    def col(j: int, default: int = 0) -> np.ndarray:
        return X[:, j] if j >= 0 else np.full(n, default)

    kind = np.zeros((n, R), int)
    res = np.zeros((n, R))
    ind = np.zeros((n, R))
    choke = np.full((n, R), -1)
    cap = np.full((n, R), np.nan)
    for i, rs in enumerate(space.rails):
        if rs.fixed_link is not None:
            kind[:, i] = rs.kinds[0]
            res[:, i] = rs.fixed_link.resistance_ohm or 0.0
            ind[:, i] = rs.fixed_link.inductance_h or 0.0
        else:
            kind[:, i] = np.asarray(rs.kinds)[col(rs.var_kind)]
            is_r, is_l = kind[:, i] == KIND_RESISTOR, kind[:, i] == KIND_CHOKE
            if rs.var_r >= 0:
                res[is_r, i] = space.resistor_values[X[is_r, rs.var_r]]
            if rs.var_choke >= 0:
                rows = X[:, rs.var_choke]
                choke[is_l, i] = rows[is_l]
                res[is_l, i] = space.chokes["resistance_ohm"][rows[is_l]]
                ind[is_l, i] = space.chokes["inductance_h"][rows[is_l]]
        if rs.cap_open:
            cap[:, i] = space.capacitances[X[:, rs.var_cap]]
        elif rs.fixed_cap is not None:
            cap[:, i] = rs.fixed_cap.capacitance_f
    return Decoded(col(space.var_transformer), col(space.var_rectifier), kind, res, ind, choke,
                   cap)


def canonical(space: SearchSpace, X: np.ndarray) -> np.ndarray:
    """Integer variables (n, n_var), rounded into their bounds, with every inactive
    variable at 0: the resistor index of a link that is not a resistor, the choke
    index of a link that is not a choke. Two rows that build the same circuit are
    then the same row."""
    X = np.rint(np.asarray(X, dtype=float)).astype(int).reshape(-1, space.n_var)
    _, xu = space.bounds()
    X = np.clip(X, 0, xu.astype(int))
    for rs in space.rails:
        if rs.var_kind < 0:
            continue
        kind = np.asarray(rs.kinds)[X[:, rs.var_kind]]
        if rs.var_r >= 0:
            X[kind != KIND_RESISTOR, rs.var_r] = 0
        if rs.var_choke >= 0:
            X[kind != KIND_CHOKE, rs.var_choke] = 0
    return X


def rows_in(A: np.ndarray, B: np.ndarray) -> np.ndarray:
    """For each row of the integer array A, whether B holds the same row (rows compared
    as raw bytes, sorted once: no loop over rows)."""
    A = np.ascontiguousarray(np.asarray(A, dtype=np.int64))
    B = np.ascontiguousarray(np.asarray(B, dtype=np.int64))
    if len(A) == 0 or len(B) == 0:
        return np.zeros(len(A), dtype=bool)
    key = np.dtype((np.void, 8 * A.shape[1]))
    a, b = A.view(key).ravel(), np.sort(B.view(key).ravel())
    at = np.minimum(np.searchsorted(b, a), len(b) - 1)
    return b[at] == a


def _catalog_id(table: dict, row: int) -> str | None:
    """The part id of a catalog row; None for a part of the E-series price model, which
    no catalog lists (its values are written out in full instead)."""
    return None if str(table["source"][row]) == "model" else str(table["part"][row])


#: a capacitor's data for heat and life, carried from the candidate table into a design
CAPACITOR_HEAT_KEYS = ("rated_life_h", "rated_temperature_c", "diameter_m", "height_m")


def _optional(table: dict, key: str, row: int) -> float | None:
    """A number of a candidate table's row, None where the column is absent or empty."""
    if key not in table:
        return None
    value = float(table[key][row])
    return None if np.isnan(value) else value


def to_design(space: SearchSpace, dec: Decoded, row: int, parts: dict) -> Design:
    """The complete Design of population row ``row``; ``parts`` holds the chosen
    capacitor rows, resistor classes and prices from :mod:`score` (per rail arrays)."""
    brief = space.brief
    rails = []
    for i, (rail, rs) in enumerate(zip(brief.rails, space.rails, strict=True)):
        k = int(dec.kind[row, i])
        if rs.fixed_link is not None:
            link = rs.fixed_link
        elif k == KIND_WIRE:
            link = Link("wire")
        elif k == KIND_RESISTOR:
            cls = int(parts["resistor_class"][row, i])
            rc = space.resistor_classes
            link = Link("resistor", resistance_ohm=float(dec.resistance[row, i]),
                        power_w=float(rc["power_w"][cls]),
                        upper_temperature_c=_optional(rc, "upper_temperature_c", cls),
                        part=_catalog_id(rc, cls),
                        price=float(rc["price"][cls]), currency=space.currency)
        else:
            ch = space.chokes
            c = int(dec.choke[row, i])
            link = Link("choke", resistance_ohm=float(ch["resistance_ohm"][c]),
                        inductance_h=float(ch["inductance_h"][c]),
                        current_rating_a=float(ch["current_rating_a"][c]),
                        part=str(ch["part"][c]), price=float(ch["price"][c]),
                        currency=space.currency)
        cap = rail.capacitor
        if rs.cap_open:
            cp = space.capacitors
            j = int(parts["capacitor"][row, i])
            cap = Capacitor(capacitance_f=float(cp["capacitance_f"][j]),
                            esr_ohm=float(cp["esr_ohm"][j]),
                            voltage_rating_v=float(cp["voltage_rating_v"][j]),
                            ripple_rating_a=float(cp["ripple_rating_a"][j]),
                            **{k: _optional(cp, k, j) for k in CAPACITOR_HEAT_KEYS},
                            part=_catalog_id(cp, j), price=float(cp["price"][j]),
                            currency=space.currency)
        rails.append(replace(rail, link=link, capacitor=cap))
    return replace(brief, transformer=space.transformers[int(dec.transformer[row])],
                   rectifier=space.rectifiers[int(dec.rectifier[row])], rails=tuple(rails))


def template(space: SearchSpace, t: int, r: int, wires: tuple[bool, ...]) -> Design:
    """A complete design of one search topology: transformer t, rectifier r, and a wire
    where ``wires`` says so. Every other open link is a choke (a resistor is modelled in
    the search as a choke of ``RESISTOR_AS_CHOKE_H``, so that one topology serves every
    mix of resistors and chokes) and every open capacitor has an ESR; their values are
    set per row by :func:`supplydesign.circuit.netlist.build_batch`."""
    rails = []
    for rail, rs, wire in zip(space.brief.rails, space.rails, wires, strict=True):
        link = rs.fixed_link
        if link is None:
            link = Link("wire") if wire else Link("choke", resistance_ohm=1.0, inductance_h=1.0)
        cap = rail.capacitor
        if rs.cap_open:
            cap = Capacitor(capacitance_f=1e-6, esr_ohm=1.0)
        rails.append(replace(rail, link=link, capacitor=cap))
    return replace(space.brief, transformer=space.transformers[t], rectifier=space.rectifiers[r],
                   rails=tuple(rails))


#: inductance standing in for a resistor during the search [H]: L/R below 0.03 µs
#: for any searched resistor, far faster than any time step, so it acts as a resistance
RESISTOR_AS_CHOKE_H = 1e-6
