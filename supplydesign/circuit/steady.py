"""Periodic steady state of a batch of rectifier supplies: Newton shooting.

Method
------
A rectifier supply is a linear time-invariant network driven by the mains and
closed through a few nonlinear junctions. Its LC and RC sections have time
constants of seconds, so integrating until the transient dies out costs hundreds
of mains periods. Instead we solve for the state x0 at the start of a period
that the period map P returns unchanged, x0 = P(x0), by Newton's method
("shooting"):

1. The linear part is discretised exactly (:func:`statespace.discretize`), with
   the junction currents linear over each of ``steps`` equal steps per period.
2. One period is stepped; at each step the junction currents at the step's end
   are found by Newton's method on the few junction voltages (implicit in the
   junction law, hence stable for the stiff junction and node capacitances).
3. Alongside, the sensitivity of the state to x0 is carried through every step
   (the chain rule through the exact linear map and the junction law); after a
   period it is the monodromy matrix, and Newton's update solves
   (I - M) dx = P(x0) - x0.
4. The Newton step is kept to a trust region (see :func:`_trust_region`) and
   damped per design when the residual grows.
5. Designs left unsettled run a few plain periods, whose slowest decay is
   extrapolated (Aitken's delta-squared idea along the last change), and shoot
   again, up to ``FALLBACK_ROUNDS`` times.

Because step 1 is exact and the steady state is a fixed point of the very map a
long transient would iterate, the result equals the long-run steady state of the
discretised circuit; the remaining error is that of the first-order hold on the
junction currents, second order in the step. The Newton iteration runs on whole
batches as arrays; the steps of a period run in compiled code, each design on its own
(:func:`~supplydesign.circuit.kernels.run_steps`).

Sensitivities cost a matrix product per conducting step, a plain period a vector
product: a design computes them once (its first Newton step), then takes chord steps
corrected by Broyden's update, and computes them again only when a chord step does not
cut the residual CHORD_RATE-fold. A neighbouring case of the same designs (another
load, another mains voltage) starts from the first case's state and monodromy matrix
with chord steps (:class:`WarmStart`).

References
----------
.. [1] T. J. Aprille, T. N. Trick, "Steady-state analysis of nonlinear circuits
   with periodic inputs", Proc. IEEE 60(1), 108-114 (1972).
.. [2] K. S. Kundert, J. K. White, A. Sangiovanni-Vincentelli, *Steady-State
   Methods for Simulating Analog and Microwave Circuits*, Kluwer (1990), ch. 7.
.. [3] A. C. Aitken, "On Bernoulli's numerical solution of algebraic equations",
   Proc. Roy. Soc. Edinburgh 46, 289-305 (1926) (the delta-squared extrapolation;
   cited from memory).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import NamedTuple

import numpy as np

from . import kernels
from .devices import with_constants
from .netlist import GROUND
from .statespace import Discrete, StateSpace, _stamp, discretize

#: relative residual at which a steady state counts as found (energy norm)
SHOOTING_TOLERANCE = 1e-9
#: relative residual below which Newton reuses the last monodromy matrix (a chord step,
#: the matrix corrected along each step by Broyden's update)
CHORD_BELOW = 0.1
#: a chord step must cut the residual this much for the next to be one too
CHORD_RATE = 0.25
#: a chord period from a residual below this keeps its samples (it is likely the last)
RECORD_BELOW = 1e-6
#: periods of plain stepping before each further Newton attempt on designs that failed
FALLBACK_PERIODS = 10
#: further Newton attempts at most (each after FALLBACK_PERIODS plain periods)
FALLBACK_ROUNDS = 3
#: largest period-to-period decay ratio the extrapolation after plain periods assumes
MAX_DECAY_RATIO = 0.999
#: steps ahead the next turn-on of a junction is looked for at once (see _off_map)
LOOKAHEAD_STEPS = 32
#: Newton iterations of one step's junction solve at most
JUNCTION_ITERATIONS = 60
#: default number of steps per mains period
STEPS_PER_PERIOD = 512


@dataclass
class SteadyState:
    """Steady state of a batch over one period, sampled at steps+1 instants (k = 0..steps)."""

    ss: StateSpace
    disc: Discrete
    x: np.ndarray  # (steps + 1, B, nx)
    u: np.ndarray  # (steps + 1, B, P) junction currents
    y: np.ndarray  # (steps + 1, B, P) junction voltages
    s: np.ndarray  # (steps + 1, 3) oscillator (same for every design)
    converged: np.ndarray  # (B,) bool
    iterations: np.ndarray  # (B,) int
    residual: np.ndarray  # (B,) relative energy-norm residual
    # where the shooting ended: the state at step ``start`` of the period and the period
    # map's Jacobian there (the last monodromy matrix, Broyden-corrected), for starting a
    # neighbouring case of the same designs (see periodic_steady_states)
    start: int = 0
    x_start: np.ndarray | None = None  # (B, nx)
    monodromy: np.ndarray | None = None  # (B, nx, nx)

    @property
    def steps(self) -> int:
        return self.x.shape[0] - 1

    def warm_start(self, rows: np.ndarray, voltage_factor: np.ndarray) -> WarmStart:
        """A start for designs ``rows`` of this batch in a neighbouring case: the states
        where this shooting ended, node voltages scaled by ``voltage_factor`` (B',) (the
        ratio of the winding emfs), and its monodromy matrices."""
        x = self.x_start[rows].copy()
        x[:, : self.ss.n_dynamic_nodes] *= np.asarray(voltage_factor, dtype=float)[:, None]
        return WarmStart(x, self.monodromy[rows])


class WarmStart(NamedTuple):
    """Where Newton starts a batch: states (B, nx) at the shooting's first step and a
    monodromy matrix (B, nx, nx) for its first (chord) steps."""

    x: np.ndarray
    monodromy: np.ndarray


def _newton_step(M: np.ndarray, r: np.ndarray, slow: np.ndarray) -> np.ndarray:
    """Solve (I - M) dx = r where M holds only the columns of the slow states.

    The other columns of the monodromy matrix are taken as zero: a perturbation
    of a junction or stray node capacitance dies out within a step.
    """
    Mss = M[:, slow, :]
    ns = slow.size
    dx_slow = np.linalg.solve(np.eye(ns) - Mss, r[:, slow, None])[..., 0]
    dx = r + np.einsum("bij,bj->bi", M, dx_slow)
    dx[:, slow] = dx_slow
    return dx


def _broyden(M: np.ndarray, rows: np.ndarray, dx: np.ndarray, dr: np.ndarray,
             w: np.ndarray) -> None:
    """Broyden's update of the monodromy matrices M[rows] after steps dx changed the
    residual P(x) - x by dr, in the energy-weighted coordinates w x (padded states,
    of weight 0, are left alone).

    The Jacobian of the residual, M - I, is corrected along the step just taken so
    that it reproduces the change seen (Broyden's "good" rank-one update), so that
    chord steps near the fixed point keep converging fast without new sensitivities.

    References
    ----------
    .. [1] C. G. Broyden, "A class of methods for solving nonlinear simultaneous
       equations", Math. Comp. 19(92), 577-593 (1965).
    """
    if rows.size == 0:
        return
    ws = np.where(w > 0, w, 1.0)
    sx, sr = w * dx, w * dr
    Mt = M[rows] * ws[:, :, None] / ws[:, None, :]  # diag(w) M diag(1/w)
    miss = sr - np.einsum("bij,bj->bi", Mt, sx) + sx  # what (M - I) dx failed to predict
    nrm = np.sum(sx * sx, axis=1)
    ok = nrm > 0
    Mt[ok] += miss[ok, :, None] * sx[ok, None, :] / nrm[ok, None, None]
    M[rows] = Mt / ws[:, :, None] * ws[:, None, :]


def _trust_region(ss: StateSpace) -> tuple[np.ndarray, np.ndarray]:
    """Largest sensible change of each state in one Newton step, (B, nx), and the
    largest sensible junction voltage, (B, P) [V].

    A periodic steady state of a passive filter fed through rectifiers holds its
    capacitor voltages within a small multiple of the winding emf and its choke
    currents within what the emf can drive through the winding resistance (the
    short-circuit current, largest emf over smallest winding resistance); no
    junction passes more than that current either. A Newton step of a nearly
    singular (I - M), which lightly damped sections and barely conducting
    rectifiers produce, can point far outside; such a step is shortened (see
    :func:`_limit_step`), so that no trial period starts from absurd voltages,
    where the junction law cannot be solved.
    """
    c = ss.circuit
    emf = _max_emf(ss)  # [V]
    rw = np.min(np.stack([c.value(e.name, "r") for e in c.topology.of_kind("W")]), axis=0)
    i_sc = emf / np.maximum(rw, 1e-3)  # [A]
    limit = np.empty((emf.size, ss.nx))
    limit[:, : ss.n_dynamic_nodes] = emf[:, None]
    limit[:, ss.n_dynamic_nodes:] = i_sc[:, None]
    params = ss.port_params
    if c.topology.law == "valve":
        y_max = (i_sc[:, None] / params["k"]) ** (2.0 / 3.0)
    else:
        y_max = params["nvt"] * np.log1p(i_sc[:, None] / params["isat"])
    return limit, y_max


def _limit_step(step: np.ndarray, x: np.ndarray, limit: np.ndarray, Cy: np.ndarray,
                y_max: np.ndarray) -> np.ndarray:
    """Shorten Newton steps (B, nx) from states x to the trust region: no state moves by
    more than ``limit`` and no junction voltage Cy x ends beyond ``y_max``."""
    over = np.max(np.abs(step) / limit, axis=1)
    step = step / np.maximum(over, 1.0)[:, None]
    y = np.einsum("bpi,bi->bp", Cy, x)
    dy = np.einsum("bpi,bi->bp", Cy, step)
    room = np.maximum(y_max - y, 0.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        frac = np.where(dy > room, room / dy, 1.0)
    return step * np.min(frac, axis=1)[:, None]


def _weighted_norm(w: np.ndarray, v: np.ndarray) -> np.ndarray:
    return np.sqrt(np.sum((w * v) ** 2, axis=-1))


@dataclass
class _Batch:
    """What the shooting works on: the discrete step of one or several state-space
    models of one junction law and one port count, their states padded with inert
    zeros to the largest model (a padded state starts at 0, is never driven and never
    moves), so that designs of several topologies are stepped as one array."""

    law: str
    params: dict[str, np.ndarray]  # (B, P) each, with the constants of with_constants
    Cy: np.ndarray  # (B, P, nx)
    Phi: np.ndarray  # (B, nx, nx)
    Phis: np.ndarray  # (B, nx, 3)
    G0: np.ndarray  # (B, nx, P)
    G1: np.ndarray  # (B, nx, P)
    weights: np.ndarray  # (B, nx), 0 for padded states
    vscale: np.ndarray  # (B,) largest winding emf [V]
    limit: np.ndarray  # (B, nx) trust region of each state
    y_max: np.ndarray  # (B, P) largest sensible junction voltage [V]

    @classmethod
    def of(cls, models: Sequence[StateSpace], discs: Sequence[Discrete]) -> _Batch:
        """The batch of ``models`` (one law and port count), each with its discretisation."""
        nx = max(ss.nx for ss in models)
        law = models[0].circuit.topology.law

        def pad(arrays, cols_too):
            out = []
            for a in arrays:
                width = [(0, 0)] * a.ndim
                width[1] = (0, nx - a.shape[1])
                if cols_too:
                    width[2] = (0, nx - a.shape[2])
                out.append(np.pad(a, width))
            return np.concatenate(out)

        def cols(arrays):
            return np.concatenate([np.pad(a, ((0, 0), (0, 0), (0, nx - a.shape[2])))
                                   for a in arrays])

        trust = [_trust_region(ss) for ss in models]
        params = {p: np.concatenate([ss.port_params[p] for ss in models])
                  for p in models[0].port_params}
        return cls(
            law=law, params=with_constants(law, params),
            Cy=cols([ss.Cy for ss in models]),
            Phi=pad([d.Phi for d in discs], True), Phis=pad([d.Phis for d in discs], False),
            G0=pad([d.G0 for d in discs], False), G1=pad([d.G1 for d in discs], False),
            weights=np.concatenate([np.pad(ss.weights, ((0, 0), (0, nx - ss.nx)))
                                    for ss in models]),
            vscale=np.concatenate([_max_emf(ss) for ss in models]),
            limit=np.concatenate([np.pad(t[0], ((0, 0), (0, nx - t[0].shape[1])),
                                         constant_values=1.0) for t in trust]),
            y_max=np.concatenate([t[1] for t in trust]))

    @property
    def size(self) -> int:
        return self.Phi.shape[0]

    @property
    def nx(self) -> int:
        return self.Phi.shape[1]


class _Stepper:
    """One-period stepping of a (sub)batch, with optional monodromy (the compiled loop of
    :func:`~supplydesign.circuit.kernels.run_steps`, one design after another)."""

    def __init__(self, batch: _Batch, steps: int, start: int = 0):
        self.batch = batch
        self.law = kernels.VALVE if batch.law == "valve" else kernels.SILICON
        self.steps = steps
        self.s = self.oscillator(steps, start)  # the period runs from phase start/steps
        self.a, self.nvt, self.v_lin, self.v_crit = kernel_params(batch.law, batch.params)
        self.vtol = 1e-7 * batch.vscale  # [V]
        self.powers, self.ahead = _off_map(batch, self.a, steps)
        self.mats = tuple(np.ascontiguousarray(m) for m in
                          (batch.Phi, batch.G0, batch.G1, batch.Phis, batch.Cy))

    @staticmethod
    def oscillator(steps: int, start: int = 0) -> np.ndarray:
        """(sin, cos, 1) of the mains phase at steps start .. start + steps, (steps + 1, 3)."""
        phase = 2.0 * np.pi * (np.arange(steps + 1) + start) / steps
        return np.stack([np.sin(phase), np.cos(phase), np.ones_like(phase)], axis=1)

    @classmethod
    def of(cls, ss: StateSpace, disc: Discrete, steps: int) -> _Stepper:
        return cls(_Batch.of([ss], [disc]), steps)

    def run(self, x0: np.ndarray, sel: np.ndarray, sens: bool, record: bool = True,
            into: tuple[np.ndarray, np.ndarray, np.ndarray] | None = None):
        """One period from states x0 of designs ``sel``.

        Returns the states, junction currents and junction voltages at every step,
        (steps + 1, len(sel), ...), and the sensitivity of the end state to x0
        (None without ``sens``). Without ``record`` only the end state is kept: states
        of shape (1, len(sel), nx), currents and voltages None. With ``into``, arrays
        (B, nx, steps + 1), (B, P, steps + 1) of the whole batch, the samples are
        written to their rows ``sel`` there, and only the end state is returned, as
        without ``record``.
        """
        n, nx = x0.shape
        P = self.a.shape[1]
        steps = self.steps
        sel = np.asarray(sel, dtype=np.int64)
        x = np.array(x0, dtype=float, order="C")
        u, y, y_prev, y_prev2 = (np.empty((n, P)) for _ in range(4))
        rows = np.arange(n)
        if into is not None:
            xs, us, ys = into
            rows = sel
        elif record:
            xs, us, ys = np.empty((n, nx, steps + 1)), np.empty((n, P, steps + 1)), \
                np.empty((n, P, steps + 1))
        else:
            xs = us = ys = np.empty((1, 1, 1))
        S = np.broadcast_to(np.eye(nx), (n, nx, nx)).copy() if sens else np.empty((1, 1, 1))
        kernels.run_steps(sel, x, u, y, y_prev, y_prev2, True, *self.mats, self.s, self.law,
                          self.a, self.nvt, self.v_lin, self.v_crit, self.vtol, self.powers,
                          np.empty((1, 1, 1, 1)) if record else self.ahead,
                          JUNCTION_ITERATIONS, sens, S, record, rows, xs, us, ys)
        if not record or into is not None:
            return x[None], None, None, S if sens else None
        # each waveform lies together; the callers index steps first
        return (xs.transpose(2, 0, 1), us.transpose(2, 0, 1), ys.transpose(2, 0, 1),
                S if sens else None)


def kernel_params(law: str, params: dict[str, np.ndarray]) -> tuple[np.ndarray, ...]:
    """The junction law parameters (B, P) as :func:`~supplydesign.circuit.kernels.run_steps`
    takes them: perveance [A/V^1.5] (valve) or saturation current [A] (silicon), n·V_T,
    the start of the linear continuation and SPICE's critical voltage [V] (0 for a
    valve)."""
    params = with_constants(law, params)
    first = params["k" if law == "valve" else "isat"]
    zeros = np.zeros(first.shape)
    return tuple(np.ascontiguousarray(params.get(k, zeros), dtype=float)
                 for k in ("k" if law == "valve" else "isat", "nvt", "v_lin", "v_crit"))


def _off_map(batch: _Batch, a: np.ndarray, steps: int,
             lookahead: int = LOOKAHEAD_STEPS) -> tuple[np.ndarray, np.ndarray]:
    """The step of each design with every junction off, on the augmented state
    z = (x, s): its binary powers Phi_off^(2^i) (2^L > steps), (B, L, nx + 3, nx + 3),
    and the junction voltages 1 .. ``lookahead`` steps on, Cy Phi_off^j as rows on z,
    (B, lookahead, P, nx + 3).

    With every junction off the network is linear and driven by the mains alone: one
    step is x -> Phi x + Phis s + (G0 + G1) u_off, the oscillator s turning by one
    step's angle, the junction currents at their off value u_off (0 for a valve, -I_s
    [A] for silicon, ``a`` being the saturation current there). Its powers are the
    step-by-step map itself over a run of off steps, up to rounding."""
    B, nx, P = batch.G0.shape
    na = nx + 3
    u_off = np.zeros((B, P)) if batch.law == "valve" else -a
    turn = 2.0 * np.pi / steps
    phi = np.zeros((B, na, na))
    phi[:, :nx, :nx] = batch.Phi
    phi[:, :nx, nx:] = batch.Phis
    phi[:, :nx, nx + 2] += ((batch.G0 + batch.G1) @ u_off[..., None])[..., 0]
    phi[:, nx:, nx:] = [[np.cos(turn), np.sin(turn), 0.0],
                        [-np.sin(turn), np.cos(turn), 0.0], [0.0, 0.0, 1.0]]
    powers = [phi]
    while 2 ** len(powers) <= steps:
        powers.append(powers[-1] @ powers[-1])
    L = min(lookahead, steps)
    ahead = np.empty((B, L, P, na))
    row = np.zeros((B, P, na))
    row[:, :, :nx] = batch.Cy
    for j in range(L):
        row = row @ phi
        ahead[:, j] = row
    return np.ascontiguousarray(np.stack(powers, axis=1)), ahead


def _max_emf(ss: StateSpace) -> np.ndarray:
    c = ss.circuit
    emfs = [c.value(e.name, "emf") for e in c.topology.elements if e.kind == "W"]
    return np.max(np.stack(emfs), axis=0)


def initial_guess(ss: StateSpace) -> np.ndarray:
    """A DC estimate of the state to start Newton from, shape (B, nx).

    The rectifier and winding are replaced by a Thevenin source at the rectifier
    output: about the emf peak behind a few times the winding resistance for a
    capacitor input, the mean of the rectified sine behind the winding
    resistance for a choke input (the textbook limits of both filters). The
    filter is then solved at DC (capacitors open, chokes as their resistance).
    """
    c = ss.circuit
    topo = c.topology
    B = c.size
    front = {"winding", "leakage", "leakage_damping", "diode", "diode_r", "junction_c",
             "junction_g", "node_c"}
    filt = [e for e in topo.elements if e.role and e.role[0] not in front]
    fnodes = sorted({n for e in filt for n in (e.a, e.b) if n != GROUND}
                    | {topo.rectifier_node}, key=topo.nodes.index)
    fi = {n: i for i, n in enumerate(fnodes)}
    nf = len(fnodes)
    G = np.zeros((B, nf, nf))
    inj = np.zeros((B, nf))
    for e in filt:
        if e.kind == "R":
            _stamp(G, fi, e.a, e.b, 1.0 / c.value(e.name, "r"))
        elif e.kind == "L":
            _stamp(G, fi, e.a, e.b, 1.0 / np.maximum(c.value(e.name, "r"), 1e-3))
        elif e.kind == "J":
            for node, sgn in ((e.a, -1.0), (e.b, 1.0)):
                if node != GROUND:
                    inj[:, fi[node]] += sgn * c.value(e.name, "i")
    windings = [e for e in topo.elements if e.kind == "W"]
    emf = np.max(np.stack([c.value(e.name, "emf") for e in windings]), axis=0)
    rw = np.mean(np.stack([c.value(e.name, "r") for e in windings]), axis=0)
    cap_input = any(e.kind == "C" and e.role[0] == "cap" and topo.rectifier_node in (e.a, e.b)
                    for e in topo.elements) or any(
        e.role[0] == "esr" and topo.rectifier_node in (e.a, e.b) for e in topo.elements)
    total_i = np.sum(inj * 0 - np.minimum(inj, 0), axis=1)  # stage currents drawn
    if topo.law == "valve":
        k = c.value(next(e.name for e in topo.elements if e.kind == "D"), "k")
        peak_i = (4.0 if cap_input else 1.0) * np.maximum(total_i, 1e-3)
        drop = (peak_i / k) ** (2.0 / 3.0)
    else:
        drop = 0.8 * np.ones(B)
    if topo.arrangement == "bridge":
        drop = 2.0 * drop
    if cap_input:
        v0 = emf - drop
        r0 = 3.0 * rw
    else:
        v0 = (1.0 if topo.arrangement == "half-wave" else 2.0) * emf / np.pi - drop
        r0 = rw
    ir = fi[topo.rectifier_node]
    G[:, ir, ir] += 1.0 / r0
    inj[:, ir] += v0 / r0
    v = np.linalg.solve(G, inj[..., None])[..., 0]

    x0 = np.zeros((B, ss.nx))
    # map node voltages and choke currents onto the states (Rx is identity on them)
    for n, j in fi.items():
        row = ss.node_index[n]
        col = np.flatnonzero(ss.Rx[0, row] == 1.0)
        if len(col) == 1 and np.count_nonzero(ss.Rx[0, row]) == 1:
            x0[:, col[0]] = v[:, j]
    for e in filt:
        if e.kind == "L":
            row = ss.inductor_index[e.name]
            col = np.flatnonzero(ss.Rx[0, row] == 1.0)[0]
            va = 0 if e.a == GROUND else v[:, fi[e.a]]
            vb = 0 if e.b == GROUND else v[:, fi[e.b]]
            x0[:, col] = (va - vb) / np.maximum(c.value(e.name, "r"), 1e-3)
    # anode nodes sit near the rectifier output at the start of a period
    for e in topo.elements:
        if e.kind == "D" and e.b in fi and e.a in ss.node_index:
            row = ss.node_index[e.a]
            col = np.flatnonzero(ss.Rx[0, row] == 1.0)
            if len(col) == 1:
                x0[:, col[0]] = v[:, fi[e.b]] * 0.0
    return x0


def periodic_steady_state(ss: StateSpace, steps: int = STEPS_PER_PERIOD,
                          tol: float = SHOOTING_TOLERANCE,
                          max_iter: int = 12, x0: np.ndarray | None = None,
                          fallback_periods: int | None = None) -> SteadyState:
    """Find the periodic steady state of every design of the batch (see module docstring).

    Parameters
    ----------
    ss : StateSpace
        The batch's linear model.
    steps : int
        Steps per mains period.
    tol : float
        Convergence threshold on the residual |P(x0) - x0| relative to |x0|, both
        in the energy norm (each state weighted by the square root of the
        capacitance or inductance holding it).
    max_iter : int
        Newton iterations at most per attempt; designs that have not converged after
        the last attempt are flagged.
    x0 : array, optional
        Starting state (B, nx); by default :func:`initial_guess`.
    fallback_periods : int, optional
        Periods of plain stepping before each further attempt (``FALLBACK_ROUNDS`` at
        most) on designs that did not converge (default ``FALLBACK_PERIODS``; 0 for
        none, as in the search, where an unsettled candidate is simply infeasible).
    """
    return periodic_steady_states([ss], steps, tol, max_iter, [x0], fallback_periods)[0]


def periodic_steady_states(models: Sequence[StateSpace],
                           steps: int | Sequence[int] = STEPS_PER_PERIOD,
                           tol: float = SHOOTING_TOLERANCE, max_iter: int = 12,
                           x0s: Sequence[np.ndarray | None] | None = None,
                           fallback_periods: int | None = None,
                           near: Sequence[WarmStart | None] | None = None
                           ) -> list[SteadyState]:
    """:func:`periodic_steady_state` of several batches at once, in the order given.

    Batches of one junction law, one port count (rectifier arrangement) and one
    number of steps are solved as one array, their states padded to the largest
    (see :class:`_Batch`). ``steps`` and ``x0s`` are one value for all or one per
    model.

    ``near`` may give, per model, a :class:`WarmStart` from the steady state of the
    same designs in a neighbouring case (:meth:`SteadyState.warm_start`; the same
    topology and steps, another load or mains voltage): Newton then starts from its
    states (unless ``x0s`` gives them) with chord steps on its monodromy matrices,
    corrected by Broyden's update as it goes, and computes sensitivities only for
    designs whose residual the chord steps do not cut fast enough.
    """
    n = len(models)
    steps_of = [steps] * n if isinstance(steps, int) else list(steps)
    x0s = [None] * n if x0s is None else list(x0s)
    near = [None] * n if near is None else list(near)
    groups: dict[tuple, list[int]] = {}
    for i, ss in enumerate(models):
        key = (ss.circuit.topology.law, ss.Cy.shape[1], steps_of[i], _choke_input(ss))
        groups.setdefault(key, []).append(i)
    out: list[SteadyState | None] = [None] * n
    for (_law, _ports, n_steps, choke_input), members in groups.items():
        mods = [models[i] for i in members]
        discs = [discretize(ss, 1.0 / (ss.circuit.frequency_hz * n_steps)) for ss in mods]
        batch = _Batch.of(mods, discs)
        # A choke input commutates from one anode to the next at the zero crossings of
        # the mains; a period cut there makes the period map kink (Newton overshoots and
        # needs further attempts), so it is shot from the crest, mid-conduction, and the
        # samples are put back in phase order afterwards. The discrete steady state is
        # the same sequence of samples wherever the period is cut.
        start = n_steps // 4 if choke_input else 0
        x0 = np.zeros((batch.size, batch.nx))
        m0 = np.full((batch.size, batch.nx, batch.nx), np.nan)
        row = 0
        for i, ss in zip(members, mods, strict=True):
            rows = slice(row, row + ss.A.shape[0])
            row = rows.stop
            lead = near[i]
            if x0s[i] is not None:
                x0[rows, :ss.nx] = x0s[i]
            elif lead is not None:
                x0[rows, :ss.nx] = lead.x
            else:
                x0[rows, :ss.nx] = initial_guess(ss)
            if lead is not None:
                m0[rows] = 0.0
                m0[rows, :ss.nx, :ss.nx] = lead.monodromy
        x, u, y, s, converged, iterations, residual, x_end, mono = _shoot(
            batch, n_steps, tol, max_iter, x0, fallback_periods, start, m0)
        x, u, y = (_from_phase_zero(a, start) for a in (x, u, y))
        row = 0
        for i, ss, disc in zip(members, mods, discs, strict=True):
            rows = slice(row, row + ss.A.shape[0])
            row = rows.stop
            out[i] = SteadyState(ss, disc, x[:, rows, :ss.nx], u[:, rows], y[:, rows], s,
                                 converged[rows], iterations[rows], residual[rows], start,
                                 x_end[rows, :ss.nx], mono[rows, :ss.nx, :ss.nx])
    return out  # type: ignore[return-value]


def _choke_input(ss: StateSpace) -> bool:
    """Whether the filter starts with a choke (the netlist damps such a choke)."""
    return any(e.role and e.role[0] == "choke_damping" for e in ss.circuit.topology.elements)


def _from_phase_zero(a: np.ndarray, start: int) -> np.ndarray:
    """Samples (steps + 1, ...) of a period shot from step ``start`` put back in order
    from mains phase 0. The shooting's small remaining drift (last sample against the
    first) is spread linearly over the period in shooting order first, so that the
    result is exactly periodic, as :func:`~supplydesign.evaluation.analysis.detrended`
    would make it."""
    if start == 0:
        return a
    steps = a.shape[0] - 1
    ramp = (np.arange(steps + 1) / steps).reshape(-1, *([1] * (a.ndim - 1)))
    a = a - ramp * (a[-1] - a[0])
    return np.concatenate([a[steps - start:steps], a[:steps - start + 1]])


def _shoot(batch: _Batch, steps: int, tol: float, max_iter: int, x: np.ndarray,
           fallback_periods: int | None, start: int = 0, m0: np.ndarray | None = None):
    """Newton shooting on a batch from states x at step ``start`` of the period (see the
    module docstring); designs whose monodromy matrix m0 (B, nx, nx) is given (not NaN)
    start with chord steps on it."""
    if fallback_periods is None:
        fallback_periods = FALLBACK_PERIODS
    B, nx = batch.size, batch.nx
    stepper = _Stepper(batch, steps, start)
    w = batch.weights
    limit, y_max, Cy = batch.limit, batch.y_max, batch.Cy
    slow = np.arange(nx)

    best_x = x.copy()
    best_r = np.full(B, np.inf)
    step = np.zeros((B, nx))
    lam = np.ones(B)
    converged = np.zeros(B, dtype=bool)
    iterations = np.zeros(B, dtype=int)
    residual = np.full(B, np.inf)
    trial = x.copy()
    # Near the fixed point Newton converges quadratically: once a design's residual is
    # below CHORD_BELOW, its period runs without sensitivities and its step reuses the
    # last monodromy matrix (a chord step), corrected by Broyden's update.
    given = np.zeros(B, dtype=bool) if m0 is None else ~np.isnan(m0[:, 0, 0])
    monodromy = np.zeros((B, nx, nx)) if m0 is None else np.where(given[:, None, None], m0,
                                                                    0.0)
    near = np.zeros(B, dtype=bool)
    backtrack = np.zeros(B, dtype=bool)  # the trial is a shorter one along a rejected step
    best_res = np.zeros((B, nx))  # P(x) - x at best_x
    # the period from each design's best start, for the figures, and whether it is there
    P = Cy.shape[1]
    # as the kernel writes them: (B, nx or P, steps + 1)
    outs = (np.empty((B, nx, steps + 1)), np.empty((B, P, steps + 1)),
            np.empty((B, P, steps + 1)))
    recorded = np.zeros(B, dtype=bool)

    def newton(active: np.ndarray, n_iter: int, chord: np.ndarray | None = None) -> None:
        near[active] = False if chord is None else chord[active]
        backtrack[active] = False
        lam[active] = 1.0
        step[active] = 0.0
        for _it in range(n_iter):
            # each design runs with sensitivities or, near its fixed point, without; a
            # chord period from a residual below RECORD_BELOW is likely the last, and
            # keeps its samples for the figures. A shorter trial along a rejected step
            # runs without; its sensitivities are worked out only if it is taken.
            sens = ~near[active] & ~backtrack[active]
            start = trial[active]
            r = np.empty_like(start)
            kind = np.where(sens, 0, np.where(near[active] & (best_r[active] < RECORD_BELOW),
                                              2, 1))
            for run_kind in (0, 1, 2):
                part = np.flatnonzero(kind == run_kind)
                if part.size == 0:
                    continue
                x_end, _, _, S = stepper.run(start[part], active[part], sens=run_kind == 0,
                                             record=run_kind == 2,
                                             into=outs if run_kind == 2 else None)
                r[part] = x_end[-1] - start[part]
                if run_kind == 0:
                    monodromy[active[part]] = S
            rel = _weighted_norm(w[active], r) / np.maximum(_weighted_norm(w[active], start),
                                                             1e-300)
            iterations[active] += 1
            improved = rel < best_r[active]
            late = np.flatnonzero(improved & backtrack[active] & ~near[active])
            if late.size:
                monodromy[active[late]] = stepper.run(start[late], active[late], sens=True,
                                                      record=False)[3]
                sens[late] = True
            # accept improved trials; the others go back towards the best point
            acc = active[improved]
            chorded = improved & ~sens
            acc_chord = active[chorded]
            _broyden(monodromy, acc_chord, trial[acc_chord] - best_x[acc_chord],
                     r[chorded] - best_res[acc_chord], w[acc_chord])
            # a recorded period is kept if its trial is taken (a rejected one wrote over
            # the samples of the best start, which are then recorded again at the end)
            recorded[acc] = False
            recorded[active[kind == 2]] = improved[kind == 2]
            before = best_r[active]
            best_r[acc] = rel[improved]
            best_x[acc] = trial[acc]
            best_res[acc] = r[improved]
            residual[acc] = rel[improved]
            done = improved & (rel < tol)
            converged[active[done]] = True
            go = improved & ~done
            # chord steps follow a Newton step that ended below CHORD_BELOW, and go on
            # while each cuts the residual CHORD_RATE-fold (a given monodromy matrix
            # gets its first step whatever the residual)
            near[active] = improved & np.where(sens, rel < CHORD_BELOW, rel < CHORD_RATE * before)
            if np.any(go):
                ag = active[go]
                step[ag] = _limit_step(_newton_step(monodromy[ag], r[go], slow),
                                       best_x[ag], limit[ag], Cy[ag], y_max[ag])
                lam[active[go]] = 1.0
            back = ~improved
            lam[active[back]] *= 0.5
            backtrack[active] = back
            keep = go | (back & (lam[active] > 1e-3))
            active = active[keep]
            if active.size == 0:
                break
            trial[active] = best_x[active] + lam[active, None] * step[active]

    newton(np.arange(B), max_iter, given)
    # Further attempts for the designs Newton could not settle (lightly damped LC
    # sections, choke inputs below critical): let the circuit itself run for a few
    # periods from the best point found, so that the modes Newton stumbled over die
    # down, extrapolate the slowest decay, then shoot again from there. Each design
    # keeps the best result of all attempts.
    rec = None
    for _round in range(FALLBACK_ROUNDS if fallback_periods > 0 else 0):
        failed = np.flatnonzero(~converged)
        if failed.size == 0:
            break
        if rec is None:
            rec = (best_r.copy(), best_x.copy(), residual.copy())
        else:
            better = failed[best_r[failed] < rec[0][failed]]
            for kept, now in zip(rec, (best_r, best_x, residual), strict=True):
                kept[better] = now[better]
        # the plain periods, then the rest of their geometric decay at once: the last two
        # changes d_prev, d give the ratio q of the slowest mode, and the remaining
        # changes sum to d q / (1 - q) (Aitken's extrapolation along d), kept to the
        # trust region like a Newton step
        xr = best_x[failed]
        d = d_prev = np.zeros_like(xr)
        for _ in range(fallback_periods):
            xn = stepper.run(xr, failed, sens=False, record=False)[0][-1]
            d_prev, d, xr = d, xn - xr, xn
        wf = w[failed]
        q = np.clip(_weighted_norm(wf, d) / np.maximum(_weighted_norm(wf, d_prev), 1e-300),
                    0.0, MAX_DECAY_RATIO if fallback_periods > 1 else 0.0)
        xr = xr + _limit_step(d * (q / (1.0 - q))[:, None], xr, limit[failed],
                              Cy[failed], y_max[failed])
        trial[failed] = xr
        best_r[failed] = np.inf
        newton(failed, max_iter)
    if rec is not None:
        worse = np.flatnonzero(~converged & (rec[0] < best_r))
        best_r[worse], best_x[worse], residual[worse] = (rec[0][worse], rec[1][worse],
                                                         rec[2][worse])
        recorded[worse] = False
    missing = np.flatnonzero(~recorded)
    if missing.size:
        stepper.run(best_x[missing], missing, sens=False, into=outs)
    out_x, out_u, out_y = (a.transpose(2, 0, 1) for a in outs)
    return (out_x, out_u, out_y, _Stepper.oscillator(steps), converged, iterations, residual,
            best_x, monodromy)
