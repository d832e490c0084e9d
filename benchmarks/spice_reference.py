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
#: ripple below this fraction of its rail's DC is not held to SETTLED_CHANGE: ngspice's
#: own error at its RELTOL (a few 1e-4 of the node voltage, or less) is larger than such
#: a ripple, whose figure then wanders from window to window however long the run (a
#: 10 uV ripple on a 360 V preamp rail moved 3x and then 1 % between runs of 4.5 s and
#: 9 s, while every DC had settled to 4e-7)
RESOLVED_RIPPLE = 1e-6


def settled_run(design: Design, reltol: float = DEFAULT_RELTOL) -> tuple[float, float, dict]:
    """Run ``design`` through ngspice from rest, the way a SPICE user finds its steady
    state: start with :func:`settle_time_estimate` of circuit time and double it until
    DC and ripple stop moving (``SETTLED_CHANGE``, at most 60 s of circuit time).

    Settled means that no rail's DC, nor any resolved ripple, moves by more than
    ``SETTLED_CHANGE`` between the two windows of :func:`measure_steady`. Returns
    the wall time of the last (settled) run [s], its circuit time [s] and the
    figures of it.
    """
    c = build([design])
    t_stop = settle_time_estimate(c)
    while True:
        w0 = time.perf_counter()
        res = run_ngspice(c, 0, t_stop_s=t_stop, timeout_s=600, reltol=reltol)
        elapsed = time.perf_counter() - w0
        m = measure_steady(res, design.mains.frequency_hz)
        if settled_change(m) < SETTLED_CHANGE or t_stop >= 60:
            return elapsed, t_stop, m
        t_stop *= 2


def settled_change(m: dict) -> float:
    """The largest relative change between the windows of :func:`measure_steady`'s
    figures ``m`` of a rail's DC, or of its ripple where that is resolved
    (``RESOLVED_RIPPLE``)."""
    out = 0.0
    for rail in m["rails"]:
        key = f"rails.{rail['name']}."
        out = max(out, m["change"][key + "dc_v"])
        if rail["ripple_rms_v"] >= RESOLVED_RIPPLE * abs(rail["dc_v"]):
            out = max(out, m["change"][key + "ripple_rms_v"])
    return out
