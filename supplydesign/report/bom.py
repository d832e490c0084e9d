"""Bill of materials of a design: one line per part, as rows or as CSV.

A line gives the part id (where the design names one), what it is, its value,
its ratings, how many, the price of one and of all, and the currency. Given the
fuse suggestions of an evaluation, the mains (F1) and HT (F2) fuses close the
list, unpriced. Prices
come from the design file (``price`` and ``currency`` of each part, per piece;
a rectifier of silicon diodes takes one piece per diode). Parts without a price
are listed and counted, never priced as zero.

CSV columns (:data:`COLUMNS`): ``design, ref, rail, kind, part, description,
value, rating, quantity, unit price, total price, currency``; values and ratings
are written with their units ("330 uF", "0.5 W"). After each design's parts come
its total lines, one per currency, with ``kind`` = ``total``.
"""

from __future__ import annotations

import csv
import io
from collections.abc import Sequence
from dataclasses import dataclass

from ..design import Design, Rail
from ..parts.fuses import rating_text
from ..parts.pricing import rectifier_pieces
from ..units import format_si

COLUMNS = ("design", "ref", "rail", "kind", "part", "description", "value", "rating",
           "quantity", "unit price", "total price", "currency")


@dataclass(frozen=True)
class BomLine:
    """One part of a design (quantity pieces of the same part)."""

    ref: str  # reference designator, such as "C2" or "D1-D4"
    rail: str  # the rail it belongs to ("" for the transformer and rectifier)
    kind: str  # transformer, valve, diode, resistor, choke, capacitor, bleeder
    part: str  # catalog id, "" where the design names none
    description: str
    value: str
    rating: str
    quantity: int
    unit_price: float | None
    currency: str | None

    @property
    def total_price(self) -> float | None:
        return None if self.unit_price is None else self.unit_price * self.quantity


def _q(value: float | None, unit: str, digits: int = 4) -> str:
    """A SI value with its unit in ASCII, as design files write them ("330 uF")."""
    if value is None:
        return ""
    return format_si(value, unit, digits).replace("µ", "u")


def _watts(value: float | None) -> str:
    return "" if value is None else f"{value:.3g} W"


def _ohms(value: float) -> str:
    return f"{value:.3g} ohm"


def _join(*bits: str) -> str:
    return "; ".join(b for b in bits if b)


@dataclass(frozen=True)
class BomFuses:
    """The suggested fuses of a design (:mod:`supplydesign.evaluation.heatlife`)."""

    ht_a: float
    mains_a: float
    ht_position: str  # "in the centre-tap lead", ...
    primary_v: float
    surge_checked: bool  # False: rated from the running current only


def _fuse_lines(f: BomFuses) -> list[BomLine]:
    note = "" if f.surge_checked else "at least; switch-on surge not checked"
    return [BomLine("F1", "", "fuse", "", f"mains fuse, time-lag, in the primary "
                    f"({f.primary_v:g} V)", f"{rating_text(f.mains_a)} T",
                    _join("time-lag (T)", note), 1, None, None),
            BomLine("F2", "", "fuse", "", f"HT fuse, time-lag, {f.ht_position}",
                    f"{rating_text(f.ht_a)} T", _join("time-lag (T)", note), 1, None, None)]


def _source_lines(design: Design) -> list[BomLine]:
    t, r = design.transformer, design.rectifier
    ct = t.winding == "center-tapped"
    volts = _q(t.open_circuit_v, "V")
    lines = [BomLine(
        "T1", "", "transformer", t.part or "",
        f"HT winding, {t.winding}" + (" (voltage per half)" if ct else ""),
        _join(f"{'2 x ' if ct else ''}{volts} rms open circuit",
              f"{_q(t.resistance_ohm, 'ohm')} source resistance",
              f"{_q(t.leakage_h, 'H')} leakage" if t.leakage_h else ""),
        _join(f"{_q(t.rated_current_a, 'A', 3)} DC" + (f" ({t.rated_for})" if t.rated_for
                                                         else "") if t.rated_current_a else "",
              f"{_q(t.rated_rms_a, 'A', 3)} rms" if t.rated_rms_a else "",
              f"{t.rated_va:g} VA" if t.rated_va else ""),
        1, t.price, t.currency)]
    n = rectifier_pieces(r)
    ratings = _join(f"peak {_q(r.max_peak_current_a, 'A', 3)}" if r.max_peak_current_a else "",
                    f"surge {_q(r.max_surge_current_a, 'A', 3)}" if r.max_surge_current_a else "",
                    f"reservoir up to {_q(r.max_reservoir_f, 'F', 3)}" if r.max_reservoir_f
                    else "")
    if r.kind == "valve":
        lines.append(BomLine("V1", "", "valve", r.part or "", f"{r.arrangement} valve rectifier",
                             f"{_q(r.drop_v, 'V')} drop at {_q(r.drop_current_a, 'A')}",
                             ratings, 1, r.price, r.currency))
    else:
        lines.append(BomLine("D1" if n == 1 else f"D1-D{n}", "", "diode", r.part or "",
                             f"silicon diode, {r.arrangement} rectifier", "", ratings, n,
                             r.price, r.currency))
    return lines


def _rail_lines(k: int, rail: Rail) -> list[BomLine]:
    out = []
    link = rail.link
    if link.kind == "resistor":
        out.append(BomLine(f"R{k}", rail.name, "resistor", link.part or "", "dropping resistor",
                           _q(link.resistance_ohm, "ohm"), _watts(link.power_w), 1,
                           link.price, link.currency))
    elif link.kind == "choke":
        out.append(BomLine(f"L{k}", rail.name, "choke", link.part or "", "filter choke",
                           _join(_q(link.inductance_h, "H"),
                                 f"{_q(link.resistance_ohm, 'ohm')} DCR"),
                           _join(f"{_q(link.current_rating_a, 'A', 3)} DC"
                                 if link.current_rating_a else ""), 1,
                           link.price, link.currency))
    cap = rail.capacitor
    if cap is not None:
        out.append(BomLine(
            f"C{k}", rail.name, "capacitor", cap.part or "",
            "reservoir capacitor" if k == 1 and link.kind == "wire" else "filter capacitor",
            _join(_q(cap.capacitance_f, "F"), f"ESR {_ohms(cap.esr_ohm)}"
                  if cap.esr_ohm else ""),
            _join(_q(cap.voltage_rating_v, "V", 3),
                  f"ripple {_q(cap.ripple_rating_a, 'A', 3)}" if cap.ripple_rating_a else "",
                  f"{cap.rated_life_h:g} h at {cap.rated_temperature_c:g} degC"
                  if cap.rated_life_h and cap.rated_temperature_c is not None else ""),
            1, cap.price, cap.currency))
    if rail.bleeder_ohm is not None:
        out.append(BomLine(f"RB{k}", rail.name, "bleeder", "", "bleeder resistor",
                           _q(rail.bleeder_ohm, "ohm"), "", 1, None, None))
    return out


def rail_part_values(rail: Rail, digits: int = 3) -> list[str]:
    """The values of a rail's link (resistance or inductance) and capacitor, for tables:
    ``["110 Ω", "220 µF"]``; none for a wire or a missing capacitor."""
    out = []
    if rail.link.kind == "resistor":
        out.append(format_si(rail.link.resistance_ohm, "Ω", digits))
    elif rail.link.kind == "choke":
        out.append(format_si(rail.link.inductance_h, "H", digits))
    if rail.capacitor is not None:
        out.append(format_si(rail.capacitor.capacitance_f, "F", digits))
    return out


def bom_lines(design: Design, fuses: BomFuses | None = None) -> list[BomLine]:
    """Every part of a complete design: transformer, rectifier, then rail by rail, then
    the fuses when given."""
    lines = _source_lines(design)
    for k, rail in enumerate(design.rails, start=1):
        lines.extend(_rail_lines(k, rail))
    if fuses is not None:
        lines.extend(_fuse_lines(fuses))
    return lines


def bom_totals(lines: Sequence[BomLine]) -> dict[str, float]:
    """Total price per currency of the priced lines (a line without currency under "")."""
    out: dict[str, float] = {}
    for line in lines:
        if line.total_price is not None:
            key = line.currency or ""
            out[key] = out.get(key, 0.0) + line.total_price
    return out


def _money(x: float | None) -> str:
    return "" if x is None else f"{x:.2f}"


def bom_csv(designs: Sequence[tuple[str, Design]],
            fuses: Sequence[BomFuses | None] | None = None) -> str:
    """The BOM of several designs as one CSV text (see module docstring).

    Parameters
    ----------
    designs : sequence of (label, Design)
        Each design with the label written in the ``design`` column (a file name).
    fuses : sequence of BomFuses or None, optional
        Each design's suggested fuses, in the same order.
    """
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(COLUMNS)
    for k, (label, design) in enumerate(designs):
        lines = bom_lines(design, None if fuses is None else fuses[k])
        for b in lines:
            w.writerow([label, b.ref, b.rail, b.kind, b.part, b.description, b.value, b.rating,
                        b.quantity, _money(b.unit_price), _money(b.total_price),
                        b.currency or ""])
        unpriced = sum(1 for b in lines if b.unit_price is None)
        note = f"{unpriced} line{'s' * (unpriced != 1)} without a price" if unpriced else ""
        totals = bom_totals(lines) or {"": None}
        for currency, total in totals.items():
            w.writerow([label, "", "", "total", "", _join("parts total", note), "", "",
                        sum(b.quantity for b in lines), "", _money(total), currency])
    return buf.getvalue()


def bom_sheet(label: str, design: Design, fuses: BomFuses | None = None):
    """The BOM of one design as a console table (:class:`~supplydesign.report.layout.Sheet`):
    each value and rating on lines of their own, the totals as last rows."""
    from .layout import Column, Sheet

    lines = bom_lines(design, fuses)
    currencies = sorted({b.currency for b in lines if b.currency})
    one = currencies[0] if len(currencies) == 1 else None
    what, price, where = "parts", "price", "catalog part and description"
    cols = [Column("ref", "left", key=True), Column("rail", "left", band=what),
            Column("value", "left", band=what), Column("rating", "left", band=what),
            Column("qty", band=price), Column(f"each {one}" if one else "each", band=price),
            Column(f"total {one}" if one else "total", band=price)]
    if one is None:
        cols.append(Column("currency", "left", band=price))
    cols += [Column("part", "left", band=where),
             Column("description", "left", text=True, band=where)]
    sheet = Sheet(f"Bill of materials: {label}", cols)

    def row(*cells: str, currency: str | None) -> None:
        sheet.add_row(*cells[:7], *([] if one else [currency or ""]), *cells[7:])

    for b in lines:
        row(b.ref, b.rail, b.value.replace("; ", "\n"), b.rating.replace("; ", "\n"),
            str(b.quantity), _money(b.unit_price), _money(b.total_price), b.part, b.description,
            currency=b.currency)
    unpriced = sum(1 for b in lines if b.unit_price is None)
    for currency, total in (bom_totals(lines) or {"": None}).items():
        row("total", "", "", "", str(sum(b.quantity for b in lines)), "", _money(total), "",
            f"{unpriced} without a price" if unpriced else "", currency=currency)
    return sheet
