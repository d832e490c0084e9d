"""The figures of one design in one operating case: plain dataclasses of SI floats.

Produced by :mod:`supplydesign.evaluation.analysis`, consumed by reports, exports and the
synthesis. Names end in their unit (``_v``, ``_a``, ``_w``, ``_s``).
"""

from __future__ import annotations

from dataclasses import asdict, dataclass, field

import numpy as np


@dataclass
class RailFigures:
    name: str
    dc_v: float  # mean rail voltage over one period
    ripple_rms_v: float  # rms of the rail voltage about its mean
    ripple_pp_v: float  # peak-to-peak of the rail voltage
    peak_v: float  # highest instantaneous voltage on the rail's capacitor (or node)
    load_a: float  # DC current drawn by the stage at this rail
    link_dc_a: float  # DC current through the link from the parent (0 for a wire)
    link_power_w: float  # power dissipated in the link (resistor, or choke DCR)
    link_rms_a: float  # rms current through the link
    cap_ripple_rms_a: float | None  # rms ripple current in the capacitor (None: no capacitor)
    cap_power_w: float | None  # power dissipated in the capacitor's ESR


@dataclass
class RectifierFigures:
    peak_a: float  # peak current in one anode / diode (the largest of them)
    rms_a: float  # rms current in one anode / diode
    avg_a: float  # average current in one anode / diode
    power_w: float  # mean power dissipated in one anode / diode


@dataclass
class TransformerFigures:
    rms_a: float  # rms current in one half-winding (the whole winding if single)
    power_w: float  # copper loss of the whole winding (all halves), from `resistance`


@dataclass
class Waveforms:
    """Two mains periods... or one: arrays sampled uniformly over the steady-state period."""

    t_s: np.ndarray  # (N,)
    rail_v: dict[str, np.ndarray]  # rail name -> (N,)
    anode_a: list[np.ndarray]  # one array per anode / diode
    winding_a: list[np.ndarray]  # one array per winding half


@dataclass
class Figures:
    case: str
    rails: list[RailFigures]
    rectifier: RectifierFigures
    transformer: TransformerFigures
    converged: bool = True
    iterations: int = 0
    residual: float = 0.0  # final shooting residual, relative to the largest state
    note: str = ""  # why the steady state did not converge (empty when it did)
    waveforms: Waveforms | None = field(default=None, repr=False)

    def rail(self, name: str) -> RailFigures:
        for r in self.rails:
            if r.name == name:
                return r
        raise KeyError(name)

    def as_dict(self) -> dict:
        d = asdict(self)
        d.pop("waveforms", None)
        return d
