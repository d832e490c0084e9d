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


def _sig3(x: float) -> float:
    """``x`` rounded to 3 significant figures, so that a design file written with
    any sensible precision reads back to the same value."""
    return float(f"{x:.3g}")


def five_rail_valve_batch(n: int, seed: int = 3) -> list[Design]:
    """``n`` variants of one five-rail valve-rectifier topology (invented, demo only).

    Full-wave valve rectifier on a centre-tapped winding with leakage, a reservoir
    for the output stage, a choke to the screens, then RC sections to the driver,
    the input stage and the preamp, every rail with a target, an allowance and an
    idle current. Every value is drawn at random and rounded to 3 significant
    figures.
    """
    rng = np.random.default_rng(seed)

    def u(lo, hi):
        return _sig3(rng.uniform(lo, hi))

    out = []
    for i in range(n):
        rect = Rectifier(kind="valve", arrangement="full-wave", drop_v=u(15, 50),
                         drop_current_a=0.25, max_peak_current_a=1.0,
                         max_surge_current_a=3.0)
        plates_a = u(0.08, 0.2)
        rails = (
            Rail("plates", None, Link("wire"),
                 Capacitor(float(rng.choice([22, 33, 47])) * 1e-6, esr_ohm=u(0.3, 2),
                           voltage_rating_v=550.0),
                 current_a=plates_a, idle_current_a=_sig3(0.6 * plates_a),
                 voltage_v=u(330, 420), tolerance=0.08, hum_v=3.0),
            Rail("screens", "plates",
                 Link("choke", resistance_ohm=u(60, 250),
                      inductance_h=float(rng.choice([3, 5, 8, 10])), current_rating_a=0.1),
                 Capacitor(float(rng.choice([22, 33, 47])) * 1e-6, esr_ohm=u(0.5, 3),
                           voltage_rating_v=500.0),
                 current_a=u(0.01, 0.04), voltage_v=u(320, 400), tolerance=0.08,
                 hum_v=0.05),
            Rail("driver", "screens",
                 Link("resistor", resistance_ohm=float(rng.choice([1, 1.5, 2.2])) * 1e3,
                      power_w=2.0),
                 Capacitor(float(rng.choice([10, 22])) * 1e-6, esr_ohm=u(1, 5),
                           voltage_rating_v=450.0),
                 current_a=u(0.004, 0.012), voltage_v=u(280, 380), tolerance=0.1,
                 hum_v=0.01),
            Rail("input", "driver",
                 Link("resistor", resistance_ohm=float(rng.choice([1.5, 2.2, 3.3])) * 1e3,
                      power_w=1.0),
                 Capacitor(float(rng.choice([10, 22])) * 1e-6, esr_ohm=u(1, 5),
                           voltage_rating_v=450.0),
                 current_a=u(0.001, 0.004), voltage_v=u(250, 360), tolerance=0.1,
                 hum_v=0.003),
            Rail("preamp", "input",
                 Link("resistor", resistance_ohm=float(rng.choice([3.3, 4.7, 6.8])) * 1e3,
                      power_w=0.5),
                 Capacitor(float(rng.choice([10, 22])) * 1e-6, esr_ohm=u(1, 5),
                           voltage_rating_v=400.0),
                 current_a=u(0.0005, 0.002), voltage_v=u(200, 340), tolerance=0.12,
                 hum_v=0.001),
        )
        tr = Transformer("center-tapped", open_circuit_v=u(300, 400),
                         resistance_ohm=u(40, 120), leakage_h=_sig3(rng.uniform(2e-3, 8e-3)),
                         rated_current_a=0.25)
        out.append(Design(f"five-rail valve variant {i}", Mains(50.0, 0.1, 0.1), tr, rect,
                          rails))
    return out


def mixed_topologies(n: int = 34, seed: int = 5) -> list[Design]:
    """``n`` plausible designs spread over 34 distinct topologies (invented, demo only).

    Design ``k`` takes layout ``k % 34``: centre-tapped full-wave, bridge and
    half-wave; valve and silicon; with and without leakage; capacitor and choke
    input (with a bleeder); one to seven rails; resistor and choke links; branches
    (two rails fed from one); a resistive load; 50 and 60 Hz. Values are drawn at
    random within ranges a builder would use (each dropping resistor drops 3 to
    20 V at the current it carries) and rounded to 3 significant figures.
    """
    rng = np.random.default_rng(seed)

    def u(lo, hi):
        return _sig3(rng.uniform(lo, hi))

    arrangements = [("center-tapped", "full-wave"), ("single", "bridge"),
                    ("single", "half-wave")]
    # (arrangement index, valve, leakage, choke input, links after the first rail, branch)
    layouts = []
    for n_links in range(0, 7):
        for a in range(3):
            layouts.append((a, a != 1 and n_links % 2 == 0, (n_links + a) % 2 == 0, False,
                            n_links, False))
    layouts += [(0, False, True, True, 2, False), (1, False, False, True, 3, False),
                (0, True, True, True, 1, False), (1, False, True, True, 2, False),
                (0, False, True, False, 4, True), (1, False, True, False, 5, True),
                (0, True, False, False, 3, True), (2, True, True, False, 2, True),
                (1, False, False, False, 6, True), (0, False, False, False, 2, True),
                (0, True, True, False, 5, True), (1, False, True, True, 4, True),
                (2, False, False, False, 5, True)]
    out = []
    for k in range(n):
        layout = k % len(layouts)
        a, valve, leak, choke_input, n_links, branch = layouts[layout]
        winding, arrangement = arrangements[a]
        if valve:
            rect = Rectifier(kind="valve", arrangement=arrangement, drop_v=u(15, 50),
                             drop_current_a=0.25)
        else:
            rect = Rectifier(kind="silicon", arrangement=arrangement)
        half_wave = arrangement == "half-wave"
        parents = [-1] + [i - 2 if branch and i == 2 else i - 1 for i in range(1, n_links + 1)]
        own = [u(0.03, 0.06) if half_wave else u(0.06, 0.2)]
        own += [u(0.001, 0.01) for _ in range(n_links)]
        through = list(own)
        for i in reversed(range(1, n_links + 1)):
            through[parents[i]] += through[i]
        rails = []
        first_link = (Link("choke", inductance_h=float(rng.choice([10, 15, 20])),
                           resistance_ohm=u(50, 150)) if choke_input else Link("wire"))
        rails.append(Rail("r0", None, first_link,
                          Capacitor(float(rng.choice([33, 47, 100])) * 1e-6,
                                    esr_ohm=u(0.3, 2)),
                          current_a=own[0],
                          bleeder_ohm=u(20e3, 47e3) if choke_input else None))
        for i in range(1, n_links + 1):
            if i == 1 and not choke_input:
                link = Link("choke", inductance_h=float(rng.choice([3, 5, 10])),
                            resistance_ohm=u(60, 250))
            else:
                link = Link("resistor", resistance_ohm=_sig3(rng.uniform(3, 20) / through[i]))
            resistive = i == n_links and layout % 4 == 0
            rails.append(Rail(f"r{i}", f"r{parents[i]}", link,
                              Capacitor(float(rng.choice([10, 22])) * 1e-6,
                                        esr_ohm=0.0 if i == 3 else u(1, 5)),
                              current_a=0.0 if resistive else own[i],
                              load_resistance_ohm=_sig3(300.0 / own[i]) if resistive else None))
        tr = Transformer(winding, open_circuit_v=u(250, 380), resistance_ohm=u(20, 120),
                         leakage_h=_sig3(rng.uniform(2e-3, 8e-3)) if leak else 0.0)
        out.append(Design(f"mixed topology {layout}, variant {k // len(layouts)}",
                          Mains(60.0 if layout % 3 == 2 else 50.0), tr, rect, tuple(rails)))
    return out
