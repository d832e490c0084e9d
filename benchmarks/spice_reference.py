"""ngspice's time to a settled steady state, the yardstick of the speed benchmarks."""

from __future__ import annotations

import time

from supplydesign.circuit.netlist import build
from supplydesign.circuit.ngspice import measure_steady, run_ngspice
from supplydesign.circuit.spice import DEFAULT_RELTOL
from supplydesign.circuit.transient import settle_time_estimate
from supplydesign.design import Design

#: largest relative change of a rail's DC or ripple between the two windows of a run
#: that counts as settled
SETTLED_CHANGE = 1e-3


def settled_run(design: Design, reltol: float = DEFAULT_RELTOL) -> tuple[float, float, dict]:
    """Run ``design`` through ngspice from rest, the way a SPICE user finds its steady
    state: start with :func:`settle_time_estimate` of circuit time and double it until
    DC and ripple stop moving (``SETTLED_CHANGE``, at most 60 s of circuit time).

    Returns the wall time of the last (settled) run [s], its circuit time [s] and
    :func:`measure_steady`'s figures of it.
    """
    c = build([design])
    t_stop = settle_time_estimate(c)
    while True:
        w0 = time.perf_counter()
        res = run_ngspice(c, 0, t_stop_s=t_stop, timeout_s=600, reltol=reltol)
        elapsed = time.perf_counter() - w0
        m = measure_steady(res, design.mains.frequency_hz)
        moving = max(v for k, v in m["change"].items()
                     if k.endswith("ripple_rms_v") or k.endswith("dc_v"))
        if moving < SETTLED_CHANGE or t_stop >= 60:
            return elapsed, t_stop, m
        t_stop *= 2
