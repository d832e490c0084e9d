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
            rect = Rectifier(kind="valve", arrangement="full-wave", drop_v=float(rng.uniform(15, 50)),
                             drop_current_a=0.25)
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
                 Capacitor(float(rng.choice([10, 22, 47])) * 1e-6, esr_ohm=float(rng.uniform(1, 5))),
                 current_a=float(rng.uniform(0.002, 0.01))),
            Rail("input", "driver",
                 Link("resistor", resistance_ohm=float(rng.choice([4.7, 10, 22])) * 1e3),
                 Capacitor(float(rng.choice([10, 22, 47])) * 1e-6, esr_ohm=float(rng.uniform(1, 5))),
                 current_a=float(rng.uniform(0.0005, 0.003))),
        )
        tr = Transformer("center-tapped", open_circuit_v=float(rng.uniform(250, 400)),
                         resistance_ohm=float(rng.uniform(20, 120)),
                         leakage_h=float(rng.uniform(1e-3, 8e-3)))
        out.append(Design(f"bench {i}", Mains(50.0), tr, rect, rails))
    return out
