"""Hypothesis strategies: random but valid designs over the whole range builders use."""

from __future__ import annotations

from hypothesis import strategies as st

from supplydesign.design import Capacitor, Design, Link, Mains, Rail, Rectifier, Transformer

ARRANGEMENTS = [("center-tapped", "full-wave"), ("single", "bridge"), ("single", "half-wave")]


def _log(lo: float, hi: float):
    """Log-uniform floats in [lo, hi]."""
    import math

    return st.floats(math.log10(lo), math.log10(hi)).map(lambda e: float(10.0**e))


@st.composite
def designs(draw, max_rails: int = 4) -> Design:
    winding, arrangement = draw(st.sampled_from(ARRANGEMENTS))
    kind = draw(st.sampled_from(["valve", "silicon"]))
    if kind == "valve":
        rect = Rectifier(kind="valve", arrangement=arrangement, drop_v=draw(_log(8.0, 60.0)),
                         drop_current_a=draw(_log(0.05, 0.3)))
    else:
        rect = Rectifier(kind="silicon", arrangement=arrangement)
    leakage = draw(st.one_of(st.just(0.0), _log(0.5e-3, 20e-3)))
    tr = Transformer(winding=winding, open_circuit_v=draw(_log(100.0, 500.0)),
                     resistance_ohm=draw(_log(1.0, 300.0)), leakage_h=leakage)
    n = draw(st.integers(1, max_rails))
    rails = []
    for i in range(n):
        parent = None if i == 0 else rails[draw(st.integers(0, i - 1))].name
        if i == 0:
            link_kind = draw(st.sampled_from(["wire", "wire", "choke", "resistor"]))
        else:
            link_kind = draw(st.sampled_from(["resistor", "choke"]))
        if link_kind == "wire":
            link = Link("wire")
        elif link_kind == "resistor":
            link = Link("resistor", resistance_ohm=draw(_log(10.0, 100e3)))
        else:
            link = Link("choke", inductance_h=draw(_log(0.5, 30.0)),
                        resistance_ohm=draw(_log(5.0, 1000.0)))
        cap = None
        if i == 0 and link_kind == "wire" or draw(st.booleans()) or link_kind == "choke":
            cap = Capacitor(capacitance_f=draw(_log(1e-6, 1e-3)),
                            esr_ohm=draw(st.one_of(st.just(0.0), _log(0.01, 10.0))))
        if draw(st.booleans()):
            rail = Rail(f"r{i}", parent, link, cap, current_a=draw(st.floats(0.0, 0.3)))
        else:
            rail = Rail(f"r{i}", parent, link, cap, load_resistance_ohm=draw(_log(1e3, 1e5)))
        rails.append(rail)
    freq = draw(st.sampled_from([50.0, 60.0]))
    return Design("fuzz", Mains(frequency_hz=freq), tr, rect, tuple(rails))
