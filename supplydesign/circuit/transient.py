"""Switch-on transient of a batch of supplies: time stepping from a cold start.

The supply is switched on at the crest of the mains voltage (the worst case for
the rectifier's surge current) with every capacitor discharged and every choke
without current. Stages draw nothing until their valves have warmed up: the run
is a sequence of *phases*, phase j being the circuit with the loads of the first
j warm-up instants switched on (a batch of circuits of one topology, one per
phase, with per-design values).

Method
------
The same exact step as the steady-state solver (:func:`statespace.discretize`:
the linear network exactly, the junction currents linear within the step) and
the same implicit junction solve (:func:`kernels.run_steps`), stepped
forward instead of shot. Steps are set in fractions of each design's mains
period, so every design of the batch is at the same mains phase at every step
and the state at the end of each whole period (phase 0) can seed the steady-
state solver.

Step sizes, and why:

- From the crest to the end of the first period, 2048 steps per period (9.8 us
  at 50 Hz), the very first split into binary sub-steps of 1/64 ... 1/2 of it
  (0.15 us up to 4.9 us). At the crest the full emf meets discharged
  capacitors: the current jumps within nanoseconds (junction and stray
  capacitances through the winding resistance) and then decays with the
  reservoir's charging time constant (milliseconds), or rises at the leakage
  inductance's L/R (tens to hundreds of microseconds) to a peak. With 512 steps
  per period that peak came out 1.5 % low against ngspice on a 4 mH leakage;
  with 2048, 0.2 %.
- 512 steps per period up to the end of the fourth period: the later charging
  pulses of the first cycles; 512 steps per period reproduce rectifier peak
  currents of the steady state within the 3 % of the ngspice cross-check.
- 128 steps per period up to period TAIL_PERIODS, 64 after: the capacitors then
  hold most of their charge, the rectifier pulses are small, and the slow rise
  and any LC overshoot are set by the linear filter, which the exact
  discretisation follows at any step.

The surge is the highest junction current from ``SURGE_FROM_S`` on: the
nanosecond charging of the junction and stray capacitances (elements that only
regularise the network) is left out. Its I^2 t (for fuses) is that of the
rectifier's output current (the current in a centre-tap lead; the junction
currents of a bridge summed over its two paths, halved) over the whole run, by
the trapezoidal rule on the steps.

A design stops when, for two whole periods after the last warm-up, every rail
has reached 90 % of its final DC and its period mean is within ``SETTLE_REL``
of it, or falls back from an overshoot above it (whose peak is then recorded),
or moves by less than ``CREEP_REL`` of it in a period (an overshoot needs a
fast rise; a choke input without load creeps towards the crest for seconds);
or at its ``t_max_s``. The caller takes the rest of the way to the final DC
from the steady state.

References
----------
.. [1] C. F. Van Loan, "Computing integrals involving the matrix exponential",
   IEEE Trans. Automat. Control 23(3), 395-404 (1978).
.. [2] L. O. Chua, P.-M. Lin, *Computer-Aided Analysis of Electronic Circuits*,
   Prentice-Hall (1975), ch. 13 (companion models of time-stepping, implicit
   solution of the nonlinear elements at each step).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np

from . import kernels
from .netlist import Circuit
from .statespace import build_state_space, discretize
from .steady import JUNCTION_ITERATIONS, kernel_params

#: binary sub-steps of the very first step, in fractions of it
SUBSTEPS = np.array([1, 1, 2, 4, 8, 16, 32], dtype=float) / 64.0
#: steps per mains period in the first (partial) period, the surge
SURGE_STEPS = 2048
#: steps per mains period up to the end of period FINE_PERIODS, and afterwards
FINE_STEPS = 512
COARSE_STEPS = 128
FINE_PERIODS = 4
TAIL_STEPS = 64
TAIL_PERIODS = 25
#: the surge is taken from this time on [s]
SURGE_FROM_S = 10e-6
#: a rail has settled when its period mean is within this fraction of its final DC
#: (the steady state covers the rest of the way: see worstcase)
SETTLE_REL = 1e-2
#: ... or when its period mean changes by less than this fraction of it per period
CREEP_REL = 1e-3
#: steps stepped at once at most (the block's states are kept for its figures)
BLOCK_STEPS = 256
#: the 90 % of the rise time
RISE_FRACTION = 0.9


@dataclass
class SwitchOn:
    """Switch-on figures of a batch; times from switch-on [s], arrays (B,) or (B, R)."""

    peak_v: np.ndarray  # (B, R) highest capacitor voltage (rail voltage without capacitor)
    peak_t_s: np.ndarray  # (B, R) when it occurred
    surge_a: np.ndarray  # (B,) highest current in one junction, from SURGE_FROM_S on
    surge_t_s: np.ndarray  # (B,)
    i2t_a2s: np.ndarray  # (B,) integral of the rectifier output current squared over the run
    t90_s: np.ndarray  # (B, R) first time the rail reached 90 % of its final DC (NaN: never)
    last_v: np.ndarray  # (B, R) mean rail voltage over the last period run
    settled: np.ndarray  # (B,) bool: stopped by the settle rule, not by t_max_s
    end_s: np.ndarray  # (B,) length of the run
    x_end: np.ndarray  # (B, nx) state at the end (mains phase 0, as the steady solver's start)
    record: dict | None = field(default=None, repr=False)  # t_s, rail_v, cap_v, junction_a


class _Plant:
    """The phases' state-space models and their discretisations, sliced on demand.

    Several topologies of one junction law and port count make one plant: their
    states, rails and phases padded to the largest (a padded state or rail stays at
    zero; a topology with fewer phases keeps its last), so that they step as one
    batch."""

    def __init__(self, groups: Sequence[Sequence[Circuit]]):
        n_phases = max(len(g) for g in groups)
        self.ss = [[build_state_space(c) for c in g] for g in groups]
        self.ss = [m + [m[-1]] * (n_phases - len(m)) for m in self.ss]
        self.sizes = [g[0].size for g in groups]
        self.nx = max(m[0].nx for m in self.ss)
        self.R = max(len(g[0].topology.rail_nodes) for g in groups)
        self.law = groups[0][0].topology.law
        # junctions in series on each conducting path: the output current is their sum / this
        self.paths = 2.0 if groups[0][0].topology.arrangement == "bridge" else 1.0
        self.period = np.concatenate([1.0 / g[0].frequency_hz for g in groups])
        firsts = [m[0] for m in self.ss]
        self.params = {p: np.concatenate([m.port_params[p] for m in firsts])
                       for p in firsts[0].port_params}
        self.vscale = np.concatenate([
            np.max(np.stack([g[0].value(e.name, "emf") for e in g[0].topology.of_kind("W")]),
                   axis=0) for g in groups])
        self.kernel_params = kernel_params(self.law, self.params)
        self.Cy = np.concatenate([_fit(m.Cy, None, self.nx) for m in firsts])
        self.rail_rows, self.cap_rows = [], []
        for g, m in zip(groups, firsts, strict=True):
            topo = g[0].topology
            self.rail_rows.append([m.node_index[n] for n in topo.rail_nodes])
            caps = [topo.by_role("cap", i) for i in range(len(topo.rail_nodes))]
            self.cap_rows.append([m.node_index[c.a] if c is not None else m.node_index[n]
                                  for c, n in zip(caps, topo.rail_nodes, strict=True)])
        self._disc: dict = {}

    def _discrete(self, j: int, frac: float):
        key = (j, frac)
        if key not in self._disc:
            nx, R = self.nx, self.R
            parts: dict[str, list] = {k: [] for k in ("Phi", "G0", "Phis", "G1", "Rx", "Rs",
                                                      "Ru", "Cx")}
            row = 0
            for m, n, rails, caps in zip(self.ss, self.sizes, self.rail_rows, self.cap_rows,
                                         strict=True):
                ss = m[j]
                d = discretize(ss, frac * self.period[row:row + n])
                row += n
                parts["Phi"].append(_fit(d.Phi, nx, nx))
                for k in ("G0", "Phis", "G1"):
                    parts[k].append(_fit(getattr(d, k), nx, None))
                parts["Rx"].append(_fit(ss.Rx[:, rails], R, nx))
                parts["Rs"].append(_fit(ss.Rs[:, rails], R, None))
                parts["Ru"].append(_fit(ss.Ru[:, rails], R, None))
                parts["Cx"].append(_fit(ss.Rx[:, caps], R, nx))
            a = {k: np.concatenate(v) for k, v in parts.items()}
            self._disc[key] = {"Phi": a["Phi"], "G0": a["G0"], "Phis": a["Phis"], "G1": a["G1"],
                               "out_x": np.concatenate([a["Rx"], a["Cx"]], axis=1),
                               "Rs": a["Rs"], "Ru": a["Ru"]}
        return self._disc[key]

    def junction_params(self, active: np.ndarray) -> tuple[np.ndarray, ...]:
        """The junction law parameters of the active designs as the compiled step takes
        them (:func:`~supplydesign.circuit.kernels.run_steps`): a, n·V_T, v_lin, v_crit."""
        p = self.kernel_params
        return tuple(np.ascontiguousarray(v[active]) for v in p)

    def matrices(self, frac: float, phase: np.ndarray, active: np.ndarray) -> dict:
        """Step matrices of the active designs, each in its own phase."""
        js = np.unique(phase)
        out = {}
        for k, j in enumerate(js):
            full = self._discrete(int(j), frac)
            if k == 0:
                out = {n: a[active].copy() for n, a in full.items()}
                if len(js) == 1:
                    break
            mine = phase == j
            for n, a in full.items():
                out[n][mine] = a[active[mine]]
        return out


def _block_matrices(plant: _Plant, mats: dict, active: np.ndarray) -> tuple[np.ndarray, ...]:
    """Phi, G0, G1, Phis, Cy of the active designs as the compiled step takes them."""
    return tuple(np.ascontiguousarray(m) for m in
                 (mats["Phi"], mats["G0"], mats["G1"], mats["Phis"], plant.Cy[active]))


def _fit(a: np.ndarray, rows: int | None, cols: int | None) -> np.ndarray:
    """``a`` (B, n, m) padded with zeros to ``rows`` rows and ``cols`` columns (None:
    as it is)."""
    return np.pad(a, ((0, 0), (0, 0 if rows is None else rows - a.shape[1]),
                      (0, 0 if cols is None else cols - a.shape[2])))


def _oscillator(frac):
    """(sin, cos, 1) of the mains phase after ``frac`` periods from the crest: (3,) for
    one ``frac``, (n, 3) for an array of them."""
    if np.isscalar(frac):
        ang = 2.0 * math.pi * frac + 0.5 * math.pi
        return np.array([math.sin(ang), math.cos(ang), 1.0])
    ang = 2.0 * np.pi * np.asarray(frac, dtype=float) + 0.5 * np.pi
    return np.stack([np.sin(ang), np.cos(ang), np.ones_like(ang)], axis=-1)


def _schedule(max_periods: int):
    """Chunks of the run, each a list of step sizes in fractions of a period.

    The first chunk runs from the crest to the end of that period (3/4 of it),
    every later one a whole period, so each chunk ends at mains phase 0. Every
    size is a power of two, so the sums are exact.
    """
    first = 1.0 / SURGE_STEPS
    yield list(SUBSTEPS * first) + [first] * (SURGE_STEPS * 3 // 4 - 1)
    for n in range(1, max_periods + 1):
        steps = FINE_STEPS if n < FINE_PERIODS else (
            COARSE_STEPS if n < TAIL_PERIODS else TAIL_STEPS)
        yield [1.0 / steps] * steps


def switch_on(phases: Sequence[Circuit], warm_at_s: np.ndarray | None = None, *,
              final_v: np.ndarray | None = None, t_max_s: np.ndarray | float = 10.0,
              delay_s: np.ndarray | float = 0.0, record: bool = False) -> SwitchOn:
    """Step a batch from a cold start at the mains crest (see module docstring).

    Parameters
    ----------
    phases : sequence of Circuit
        One batch of designs per load phase, all of one topology and designs:
        ``phases[0]`` with no stage drawing current, ``phases[j]`` with the loads
        of the rails whose warm-up rank is below j drawing (built by the caller,
        per design). One circuit for a run without warm-ups.
    warm_at_s : (B, R) array, optional
        When each rail's load comes on, from the start of conduction [s]
        (``inf``: never); consistent with ``phases``. Default: never.
    final_v : (B, R) array, optional
        Final DC of each rail [V], for the 90 % times and the settle rule;
        without it every design runs to ``t_max_s``.
    t_max_s : float or (B,) array
        Longest run [s].
    delay_s : float or (B,) array
        Time from switch-on until the rectifier conducts [s] (a valve's warm-up);
        added to every reported time. The run starts when it conducts, at the crest.
    record : bool
        Keep every step's rail voltages, capacitor voltages and junction currents.

    Returns
    -------
    SwitchOn
    """
    return switch_on_batches([phases], warm_at_s, final_v=final_v, t_max_s=t_max_s,
                             delay_s=delay_s, record=record)[0]


def switch_on_batches(groups: Sequence[Sequence[Circuit]], warm_at_s: np.ndarray | None = None,
                      *, final_v: np.ndarray | None = None,
                      t_max_s: np.ndarray | float = 10.0, delay_s: np.ndarray | float = 0.0,
                      record: bool = False) -> list[SwitchOn]:
    """:func:`switch_on` of several topologies of one junction law and port count, run as
    one batch; one :class:`SwitchOn` per group.

    ``groups`` holds each topology's phases; the designs are those of every group in
    order, and ``warm_at_s`` and ``final_v`` are over all of them, rails padded to the
    largest rail count (with ``inf`` and 0: a padded rail stays at 0 V and is
    dropped from the results).
    """
    plant = _Plant(groups)
    out = _switch_on(plant, warm_at_s, final_v, t_max_s, delay_s, record)
    parts, row = [], 0
    for g, m in zip(groups, plant.ss, strict=True):
        rows, R, nx = slice(row, row + g[0].size), len(g[0].topology.rail_nodes), m[0].nx
        row = rows.stop
        part = SwitchOn(*(getattr(out, f)[rows, :R] if getattr(out, f).ndim == 2 else
                          getattr(out, f)[rows] for f in _RESULT_FIELDS),
                        x_end=out.x_end[rows, :nx])
        if out.record is not None:
            part.record = {k: (v[:, rows, :R] if k in ("rail_v", "cap_v") else v[:, rows])
                           for k, v in out.record.items()}
        parts.append(part)
    return parts


#: the SwitchOn fields of one value per design or per design and rail
_RESULT_FIELDS = ("peak_v", "peak_t_s", "surge_a", "surge_t_s", "i2t_a2s", "t90_s", "last_v",
                  "settled", "end_s")


def _switch_on(plant: _Plant, warm_at_s, final_v, t_max_s, delay_s, record) -> SwitchOn:
    """The run of :func:`switch_on_batches` on its padded plant."""
    B = plant.period.size
    R = plant.R
    nx = plant.nx
    P = plant.Cy.shape[1]
    n_phases = len(plant.ss[0])
    warm = np.full((B, R), np.inf) if warm_at_s is None else np.asarray(warm_at_s, dtype=float)
    warm_frac = warm / plant.period[:, None]
    # distinct warm-up instants per design, sorted, padded with inf: phase = count passed
    uniq = np.full((B, max(n_phases - 1, 1)), np.inf)
    for b in range(B):  # per design once, not per step
        u = np.unique(warm_frac[b][np.isfinite(warm_frac[b])])
        uniq[b, :u.size] = u[: uniq.shape[1]]
    last_warm = np.max(np.where(np.isfinite(uniq), uniq, 0.0), axis=1)
    t_max = np.broadcast_to(np.asarray(t_max_s, dtype=float), (B,))
    max_periods = int(np.ceil(np.max(t_max / plant.period))) + 1
    target = None if final_v is None else RISE_FRACTION * np.asarray(final_v, dtype=float)

    x = np.zeros((B, nx))
    u = np.zeros((B, P))
    y = np.zeros((B, P))
    peak_v = np.full((B, R), -np.inf)
    peak_t = np.zeros((B, R))
    surge = np.zeros(B)
    surge_t = np.zeros(B)
    i2t = np.zeros(B)
    t90 = np.full((B, R), np.nan)
    last_v = np.zeros((B, R))
    settled = np.zeros(B, dtype=bool)
    calm = np.zeros(B, dtype=int)
    top = np.full((B, R), -np.inf)  # highest period mean so far
    mean_before = np.full((B, R), np.inf)  # the previous period's mean
    end = np.zeros(B)
    x_end = np.zeros((B, nx))
    rec: dict[str, list] = {"t_s": [], "rail_v": [], "cap_v": [], "junction_a": []}
    active = np.arange(B)
    frac = 0.0
    prev_v = np.zeros((B, R))
    i_max_prev = np.zeros(B)  # junction currents are zero at rest
    i_out_prev = np.zeros(B)
    mats = None
    key = None
    def account(t, v, vc, u, h):
        """Take n steps of the active designs into the figures: end times t (n, A), rail
        voltages v and capacitor voltages vc (n, A, R), junction currents u (n, A, P)."""
        nonlocal i_max_prev, i_out_prev
        cols = np.arange(active.size)
        j = np.argmax(vc, axis=0)  # the first sample of the block's highest
        high = np.take_along_axis(vc, j[None], axis=0)[0]
        higher = high > peak_v[active]
        peak_v[active] = np.where(higher, high, peak_v[active])
        peak_t[active] = np.where(higher, t[j, cols[:, None]], peak_t[active])
        i_max = np.max(u, axis=2)  # (n, A)
        t_prev = np.concatenate([t[:1] - h * T, t[:-1]])
        if np.any(t[-1] >= SURGE_FROM_S):
            # the sample at SURGE_FROM_S itself, interpolated, then every later one
            i_before = np.concatenate([i_max_prev[None], i_max[:-1]])
            w = np.clip((SURGE_FROM_S - t_prev) / (t - t_prev), 0.0, 1.0)
            i_at = np.where(t_prev < SURGE_FROM_S, i_before + w * (i_max - i_before), i_max)
            cand = np.where(t >= SURGE_FROM_S, np.maximum(i_at, i_max), 0.0)
            j = np.argmax(cand, axis=0)
            best = cand[j, cols]
            better = best > surge[active]
            surge[active] = np.where(better, best, surge[active])
            surge_t[active] = np.where(better, np.maximum(t[j, cols], SURGE_FROM_S),
                                       surge_t[active])
        i_max_prev = i_max[-1]
        i_out = np.sum(u, axis=2) / plant.paths  # (n, A)
        i_out_before = np.concatenate([i_out_prev[None], i_out[:-1]])
        i2t[active] += np.sum(0.5 * (i_out_before ** 2 + i_out ** 2) * (t - t_prev), axis=0)
        i_out_prev = i_out[-1]
        before = np.concatenate([prev_v[active][None], v[:-1]])
        if target is not None:
            tg = target[active]
            cross = np.isnan(t90[active]) & np.any(v >= tg, axis=0)
            if np.any(cross):
                j = np.argmax(v >= tg, axis=0)  # the first step at or above 90 %
                vj = np.take_along_axis(v, j[None], axis=0)[0]
                pv = np.take_along_axis(before, j[None], axis=0)[0]
                w = np.clip((tg - pv) / np.where(vj > pv, vj - pv, 1.0), 0.0, 1.0)
                tp = t_prev[j, cols[:, None]]
                t_hit = tp + w * (t[j, cols[:, None]] - tp)
                t90[active] = np.where(cross, t_hit, t90[active])
        prev_v[active] = v[-1]
        if record:
            for k in range(t.shape[0]):
                _record(rec, active, B, t[k], v[k], vc[k], u[k])
        return 0.5 * h * np.sum(before + v, axis=0)

    warming = bool(np.isfinite(uniq).any())
    phase = np.zeros(B, dtype=int)
    y_prev = y_prev2 = y
    law = kernels.VALVE if plant.law == "valve" else kernels.SILICON
    for chunk in _schedule(max_periods):
        T = plant.period[active]
        area = np.zeros((active.size, R))
        span = 0.0
        pos = 0
        while pos < len(chunk):
            h = chunk[pos]
            if warming:
                phase = np.sum(uniq[active] <= frac + h + 1e-12, axis=1)
            new_key = (h, tuple(phase[:active.size]))
            if new_key != key:
                mats, key = plant.matrices(h, phase[:active.size], active), new_key
                steppers = _block_matrices(plant, mats, active)
            # a block of steps of size h in one load phase: up to the chunk's next step
            # size, the next warm-up instant or BLOCK_STEPS
            n = 1
            while pos + n < len(chunk) and chunk[pos + n] == h and n < BLOCK_STEPS:
                n += 1
            ahead = uniq[active]
            later = ahead[(ahead > frac + h + 1e-12) & np.isfinite(ahead)]
            if later.size:  # the steps before the next warm-up instant
                n = max(1, min(n, int(np.floor((later.min() - frac - 1e-12) / h))))
            fr = frac + h * np.arange(n + 1)
            A = active.size
            xs, us, ys = np.empty((A, nx, n + 1)), np.empty((A, P, n + 1)), \
                np.empty((A, P, n + 1))
            x, u, y, y_prev, y_prev2 = (np.array(v, dtype=float, order="C")
                                        for v in (x, u, y, y_prev, y_prev2))
            kernels.run_steps(np.arange(A), x, u, y, y_prev, y_prev2, False, *steppers,
                              _oscillator(fr), law, *plant.junction_params(active),
                              1e-7 * plant.vscale[active], np.empty((1, 1, 1, 1)),
                              np.empty((1, 1, 1, 1)), JUNCTION_ITERATIONS, False,
                              np.empty((1, 1, 1)), True, np.arange(A), xs, us, ys)
            # rail and capacitor voltages of the block, (A, ., n) as stepped, then steps
            # first as account takes them
            vv = mats["out_x"] @ xs[:, :, 1:]
            v = (vv[:, :R] + mats["Rs"] @ _oscillator(fr[1:]).T + mats["Ru"] @ us[:, :, 1:])
            area += account(fr[1:, None] * T[None, :], v.transpose(2, 0, 1),
                            vv[:, R:].transpose(2, 0, 1), us[:, :, 1:].transpose(2, 0, 1), h)
            frac = fr[-1]
            span += n * h
            pos += n
        last_v[active] = area / span
        done = frac * T >= t_max[active] - 1e-12
        if target is not None:
            fv = np.asarray(final_v)[active]
            lv = last_v[active]
            top[active] = np.maximum(top[active], lv)
            # near the final DC, falling back from an overshoot already recorded, or
            # creeping towards the final DC too slowly for an overshoot to come
            near = np.abs(lv - fv) <= SETTLE_REL * np.abs(fv)
            near |= (top[active] > fv + SETTLE_REL * np.abs(fv)) & (lv < top[active])
            near |= np.abs(lv - mean_before[active]) <= CREEP_REL * np.abs(fv)
            mean_before[active] = lv
            near = np.all(near & ~np.isnan(t90[active]), axis=1) & (frac >= last_warm[active])
            calm[active] = np.where(near, calm[active] + 1, 0)
            ok = calm[active] >= 2
            settled[active] = ok
            done |= ok
        if np.any(done):
            fin = active[done]
            end[fin] = frac * plant.period[fin]
            x_end[fin] = x[done]
            keep = ~done
            active, x, u, y = active[keep], x[keep], u[keep], y[keep]
            y_prev, y_prev2 = y_prev[keep], y_prev2[keep]
            i_max_prev, i_out_prev = i_max_prev[keep], i_out_prev[keep]
            key = None
        if active.size == 0:
            break
    delay = np.broadcast_to(np.asarray(delay_s, dtype=float), (B,))
    out = SwitchOn(peak_v, peak_t + delay[:, None], surge, surge_t + delay, i2t,
                   t90 + delay[:, None], last_v, settled, end + delay, x_end)
    if record:
        out.record = {k: np.array(v) for k, v in rec.items()}
    return out


def _record(rec: dict, active: np.ndarray, B: int, t, v, vc, u) -> None:
    """Append one step of the active designs (NaN for designs already stopped)."""
    for name, val in (("t_s", t), ("rail_v", v), ("cap_v", vc), ("junction_a", u)):
        full = np.full((B, *val.shape[1:]), np.nan)
        full[active] = val
        rec[name].append(full)



def phase_circuits(cold: Circuit, warm: Circuit, warm_at_s: np.ndarray) -> list[Circuit]:
    """The load phases of a run in which each rail's stage comes on at its own time.

    Parameters
    ----------
    cold, warm : Circuit
        The same designs with no stage drawing, and with every stage drawing.
    warm_at_s : (B, R) array
        When each rail's stage comes on [s] (``inf``: never).

    Returns
    -------
    list of Circuit
        Phase 0 (nothing drawing) and phase j (the stages of the first j distinct
        instants of each design drawing), as :func:`switch_on` expects.
    """
    topo = cold.topology
    B = cold.size
    warm_at_s = np.asarray(warm_at_s, dtype=float)
    uniq = [np.unique(w[np.isfinite(w)]) for w in warm_at_s]
    n = max((u.size for u in uniq), default=0)
    at = np.full((B, n), np.inf)
    for b, u in enumerate(uniq):  # per design once
        at[b, :u.size] = u
        at[b, u.size:] = u[-1] if u.size else np.inf
    out = [cold]
    for j in range(n):
        on = warm_at_s <= at[:, j:j + 1]  # (B, R)
        values = {name: dict(params) for name, params in cold.values.items()}
        for i in range(len(topo.rail_nodes)):
            e = topo.by_role("load", i)
            for p in values[e.name]:
                values[e.name][p] = np.where(on[:, i], warm.value(e.name, p),
                                             cold.value(e.name, p))
        out.append(Circuit(topo, values, cold.frequency_hz, cold.designs))
    return out


def settle_time_estimate(circuit: Circuit, index: int = 0) -> float:
    """A run length [s] after which a switch-on run should have settled.

    Sums, along each path from the rectifier to a rail, a time constant per
    section: reservoir ``5 R_s C`` (source resistance over a conduction fraction
    of about a fifth), resistor ``R C`` and choke ``2 L / (R_dcr + R_s)`` (the
    envelope decay of an LC section without load damping), where ``C`` is all
    the capacitance at and beyond that rail and ``R_s`` the winding (and diode)
    resistance. Returns 8 times the slowest path plus
    1 s, between 2 s and 60 s, rounded up to half a second. An estimate: check
    the settle figures of :func:`supplydesign.circuit.ngspice.measure_steady`.
    """
    topo = circuit.topology

    def val(name: str, param: str) -> float:
        return float(circuit.values[name][param][index])

    windings = topo.of_kind("W")
    r_source = sum(val(w.name, "r") for w in windings) / max(len(windings), 1)
    for e in topo.elements:
        if e.role and e.role[0] == "diode_r":
            r_source += val(e.name, "r")
            break
    n = len(topo.rail_nodes)
    parent = [-1] * n
    link = {}
    for e in topo.elements:
        if e.role and e.role[0] == "link":
            link[e.role[1]] = e
    for i in range(n):
        up = link[i].a if i in link else topo.rectifier_node
        parent[i] = max((j for j in range(i) if topo.rail_nodes[j] == up), default=-1)
    cap = [0.0] * n
    for e in topo.elements:
        if e.kind == "C" and e.role and e.role[0] == "cap":
            cap[e.role[1]] = val(e.name, "c")
    below = cap[:]
    for i in reversed(range(n)):
        if parent[i] >= 0:
            below[parent[i]] += below[i]
    tau = [0.0] * n
    for i in range(n):
        e = link.get(i)
        if e is None:
            own = 5.0 * r_source * below[i]
        elif e.kind == "R":
            own = val(e.name, "r") * below[i]
            own = 0.0 if math.isinf(own) else own
        else:
            own = 2.0 * val(e.name, "l") / max(val(e.name, "r") + r_source, 1.0)
        tau[i] = own + (tau[parent[i]] if parent[i] >= 0 else 0.0)
    t = 8.0 * max(tau, default=0.0) + 1.0
    return min(max(math.ceil(2.0 * t) / 2.0, 2.0), 60.0)
