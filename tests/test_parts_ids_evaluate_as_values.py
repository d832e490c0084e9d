"""Acceptance: designs written with catalog part ids evaluate identically to the same
values given directly.

Two sets of TOML files are written: one naming every part by its catalog id, one
writing the catalog's values (as a builder would type them, "100 uF", "1.1 ohm")
without any id. Both are read with the catalog and evaluated; the figures must be
equal to the last bit. The built-in catalogs (invented demo data) serve as input
only; no figure is checked against them.
"""

from __future__ import annotations

from dataclasses import replace

import pytest

from supplydesign.evaluation.analysis import IDLE, evaluate
from supplydesign.io.designfile import load_design
from supplydesign.io.tomlwrite import format_quantity
from supplydesign.parts import load_catalog

CATALOG = load_catalog()


def q(value: float, dimension: str) -> str:
    return f'"{format_quantity(value, dimension)}"'


def optional(r: dict, keys) -> list[str]:
    """``key = "value"`` for the optional columns the row fills: (key, field, dimension)."""
    return [f"{key} = {q(r[field], dim)}" for key, field, dim in keys if r[field] is not None]


def transformer_values(part: str) -> str:
    r = CATALOG.row("transformer", part)
    return "\n".join([
        f'winding = "{r["winding"]}"', f"open_circuit = {q(r['open_circuit_v'], 'voltage')}",
        f"resistance = {q(r['resistance_ohm'], 'resistance')}",
        f"leakage = {q(r['leakage_h'], 'inductance')}",
        *optional(r, (("rated_current", "rated_current_a", "current"),
                      ("rated_rms_current", "rated_rms_a", "current"),
                      ("rated_power", "rated_va", "apparent_power"),
                      ("primary", "primary_v", "voltage"))),
        *([f'rated_for = "{r["rated_for"]}"'] if r["rated_for"] else [])])


def rectifier_values(part: str) -> str:
    r = CATALOG.row("rectifier", part)
    lines = [f'kind = "{r["kind"]}"', 'arrangement = "full-wave"',
             f"max_peak_current = {q(r['max_peak_current_a'], 'current')}"]
    if r["kind"] == "valve":
        lines += [f"drop = {q(r['drop_v'], 'voltage')}",
                  f"drop_current = {q(r['drop_current_a'], 'current')}"]
        for key, field, dim in (("max_reservoir", "max_reservoir_f", "capacitance"),
                                ("min_source_resistance", "min_source_resistance_ohm",
                                 "resistance")):
            if r[field] is not None:
                lines.append(f"{key} = {q(r[field], dim)}")
    else:
        lines += [f"saturation_current = {q(r['saturation_current_a'], 'current')}",
                  f"emission = {r['emission']!r}",
                  f"series_resistance = {q(r['series_resistance_ohm'], 'resistance')}",
                  f"max_surge_current = {q(r['max_surge_current_a'], 'current')}"]
    return "\n".join(lines)


def capacitor_values(part: str) -> str:
    r = CATALOG.row("capacitor", part)
    return (f"{{ capacitance = {q(r['capacitance_f'], 'capacitance')}, "
            f"esr = {q(r['esr_ohm'], 'resistance')}, "
            f"voltage = {q(r['voltage_rating_v'], 'voltage')}, "
            f"ripple_rating = {q(r['ripple_rating_a'], 'current')}"
            + "".join(f", {x}" for x in optional(r, (
                ("diameter", "diameter_m", "length"), ("height", "height_m", "length"),
                ("rated_life", "rated_life_h", "lifetime"),
                ("rated_temperature", "rated_temperature_c", "temperature")))) + " }")


def choke_values(part: str) -> str:
    r = CATALOG.row("choke", part)
    return (f'{{ kind = "choke", inductance = {q(r["inductance_h"], "inductance")}, '
            f'resistance = {q(r["resistance_ohm"], "resistance")}, '
            f'current_rating = {q(r["current_rating_a"], "current")} }}')


def resistor_values(part: str) -> str:
    r = CATALOG.row("resistor", part)
    return (f'{{ kind = "resistor", resistance = "4.7 kohm", power = {q(r["power_w"], "power")}, '
            f'upper_temperature = {q(r["upper_temperature_c"], "temperature")} }}')


def design_text(parts: dict[str, str], by_id: bool) -> str:
    """A three-rail CLC-R design whose every part is given by id or by its values."""
    def section(family: str, values) -> str:
        return f'part = "{parts[family]}"' if by_id else values(parts[family])

    def cap(name: str) -> str:
        return f'{{ part = "{parts[name]}" }}' if by_id else capacitor_values(parts[name])

    choke = (f'{{ kind = "choke", part = "{parts["choke"]}" }}' if by_id
             else choke_values(parts["choke"]))
    resistor = (f'{{ kind = "resistor", part = "{parts["resistor"]}", resistance = "4.7 kohm" }}'
                if by_id else resistor_values(parts["resistor"]))
    rectifier = section("rectifier", rectifier_values)
    if by_id and CATALOG.row("rectifier", parts["rectifier"])["kind"] == "silicon":
        rectifier += '\narrangement = "full-wave"'  # the circuit's, not the part's
    return f"""title = "ids or values (test)"
[mains]
frequency = "50 Hz"
[transformer]
{section("transformer", transformer_values)}
[rectifier]
{rectifier}
[[rail]]
name = "reservoir"
link = "wire"
capacitor = {cap("cap1")}
current = "60 mA"
idle_current = "40 mA"
[[rail]]
name = "filtered"
link = {choke}
capacitor = {cap("cap2")}
current = "20 mA"
[[rail]]
name = "preamp"
link = {resistor}
capacitor = {cap("cap3")}
current = "3 mA"
"""


def combinations() -> list[dict[str, str]]:
    """Every capacitor of the catalog once as reservoir, with the other families cycled."""
    caps = CATALOG.ids("capacitor")
    trafos = [i for i in CATALOG.ids("transformer")
              if CATALOG.row("transformer", i)["winding"] == "center-tapped"]
    rects = [i for i in CATALOG.ids("rectifier")
             if CATALOG.row("rectifier", i)["arrangement"] in ("full-wave", None)]
    chokes, resistors = CATALOG.ids("choke"), CATALOG.ids("resistor")
    return [{"cap1": c, "cap2": caps[(k + 7) % len(caps)], "cap3": caps[(k + 13) % len(caps)],
             "transformer": trafos[k % len(trafos)], "rectifier": rects[k % len(rects)],
             "choke": chokes[k % len(chokes)], "resistor": resistors[k % len(resistors)]}
            for k, c in enumerate(caps)]


def load_both(tmp_path):
    by_id, by_value = [], []
    for k, parts in enumerate(combinations()):
        for flag, out in ((True, by_id), (False, by_value)):
            path = tmp_path / f"{'ids' if flag else 'values'}-{k}.toml"
            path.write_text(design_text(parts, flag), encoding="utf-8")
            out.append(load_design(path, catalog=CATALOG))
    return by_id, by_value


def without_ids(design):
    """The design with part ids, prices and currencies removed (what the values file holds)."""
    def bare(x):
        return None if x is None else replace(x, part=None, price=None, currency=None)

    rails = [replace(r, link=r.link if r.link.kind == "wire" else bare(r.link),
                     capacitor=bare(r.capacitor)) for r in design.rails]
    return replace(design, transformer=bare(design.transformer),
                   rectifier=bare(design.rectifier), rails=tuple(rails), title="", source="")


def test_the_values_files_hold_the_same_designs(tmp_path):
    by_id, by_value = load_both(tmp_path)
    assert len(by_id) >= 20
    for a, b in zip(by_id, by_value, strict=True):
        assert without_ids(a) == without_ids(b)


@pytest.mark.parametrize("case", [None, IDLE], ids=["nominal", "idle"])
def test_part_ids_evaluate_identically_to_values(tmp_path, case):
    by_id, by_value = load_both(tmp_path)
    kwargs = {} if case is None else {"case": case}
    figs_id = evaluate(by_id, **kwargs)
    figs_value = evaluate(by_value, **kwargs)
    for a, b in zip(figs_id, figs_value, strict=True):
        assert a.as_dict() == b.as_dict()  # exactly: same floats in, same floats out
