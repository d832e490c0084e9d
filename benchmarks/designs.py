"""Random but plausible four-rail designs for benchmarks (invented, demo only)."""

from __future__ import annotations

import numpy as np

from supplydesign.design import Capacitor, Design, Link, Mains, Rail, Rectifier, Transformer


def four_rail_batch(n: int, seed: int = 1, kind: str = "silicon") -> list[Design]:
    """``n`` designs of one topology: reservoir, choke section and two RC sections."""
    rng = np.random.default_rng(seed)
    out = []
    for i in range(n):
        if kind == "valve":
            rect = Rectifier(kind="valve", arrangement="full-wave",
                             drop_v=float(rng.uniform(15, 50)), drop_current_a=0.25)
        else:
            rect = Rectifier(kind="silicon", arrangement="full-wave")
        rails = (
            Rail("plates", None, Link("wire"),
                 Capacitor(float(rng.choice([33, 47, 68, 100, 150])) * 1e-6,
                           esr_ohm=float(rng.uniform(0.3, 2))),
                 current_a=float(rng.uniform(0.08, 0.25))),
            Rail("screens", "plates",
                 Link("choke", resistance_ohm=float(rng.uniform(60, 250)),
                      inductance_h=float(rng.choice([3, 5, 8, 10, 15]))),
                 Capacitor(float(rng.choice([22, 33, 47, 100])) * 1e-6,
                           esr_ohm=float(rng.uniform(0.5, 3))),
                 current_a=float(rng.uniform(0.01, 0.04))),
            Rail("driver", "screens",
                 Link("resistor", resistance_ohm=float(rng.choice([1, 2.2, 4.7, 10])) * 1e3),
                 Capacitor(float(rng.choice([10, 22, 47])) * 1e-6,
                           esr_ohm=float(rng.uniform(1, 5))),
                 current_a=float(rng.uniform(0.002, 0.01))),
            Rail("input", "driver",
                 Link("resistor", resistance_ohm=float(rng.choice([4.7, 10, 22])) * 1e3),
                 Capacitor(float(rng.choice([10, 22, 47])) * 1e-6,
                           esr_ohm=float(rng.uniform(1, 5))),
                 current_a=float(rng.uniform(0.0005, 0.003))),
        )
        tr = Transformer("center-tapped", open_circuit_v=float(rng.uniform(250, 400)),
                         resistance_ohm=float(rng.uniform(20, 120)),
                         leakage_h=float(rng.uniform(1e-3, 8e-3)))
        out.append(Design(f"bench {i}", Mains(50.0), tr, rect, rails))
    return out


def random_designs(n: int, seed: int = 7) -> list[Design]:
    """``n`` random designs over the whole range builders use (demo data, invented).

    Structure comes from a few dozen layouts (winding and arrangement, valve or
    silicon, leakage or none, capacitor or choke input, one to four rails), so that
    designs share batches; every value is drawn log-uniformly over a wide range:
    tiny and huge capacitors, stiff silicon with no leakage, lightly loaded choke
    inputs, loads from nothing to more than the transformer can give.
    """
    rng = np.random.default_rng(seed)

    def log(lo, hi):
        return float(10 ** rng.uniform(np.log10(lo), np.log10(hi)))

    arrangements = [("center-tapped", "full-wave"), ("single", "bridge"), ("single", "half-wave")]
    out = []
    for k in range(n):
        winding, arrangement = arrangements[rng.integers(3)]
        if rng.random() < 0.5:
            rect = Rectifier(kind="valve", arrangement=arrangement, drop_v=log(8, 60),
                             drop_current_a=log(0.05, 0.3))
        else:
            rect = Rectifier(kind="silicon", arrangement=arrangement)
        tr = Transformer(winding, open_circuit_v=log(100, 500), resistance_ohm=log(1, 300),
                         leakage_h=0.0 if rng.random() < 0.5 else log(0.5e-3, 20e-3))
        n_rails = int(rng.integers(1, 5))
        choke_input = rng.random() < 0.3
        rails = []
        for i in range(n_rails):
            if i == 0 and not choke_input:
                link = Link("wire")
            elif i % 2 == 1 or (i == 0 and choke_input):
                link = Link("choke", inductance_h=log(0.5, 30), resistance_ohm=log(5, 1000))
            else:
                link = Link("resistor", resistance_ohm=log(10, 100e3))
            cap = Capacitor(log(1e-6, 1e-3), esr_ohm=log(0.01, 10))
            light = rng.random() < 0.2
            current = log(1e-4, 3e-3) if light else log(1e-3, 0.3)
            rails.append(Rail(f"r{i}", None if i == 0 else f"r{i - 1}", link, cap,
                              current_a=current))
        out.append(Design(f"random {k}", Mains(float(rng.choice([50.0, 60.0]))), tr, rect,
                          tuple(rails)))
    return out
