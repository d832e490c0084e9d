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
junction currents, second order in the step. All of it runs on whole batches
as arrays, one Python loop over the steps of a period.

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

import numpy as np

from .devices import junction, limit_step, with_constants
from .netlist import GROUND
from .statespace import Discrete, StateSpace, _stamp, discretize

#: junction Newton iterations stop when the last step changes a current by less [A]
CURRENT_TOLERANCE_A = 1e-9
#: relative residual at which a steady state counts as found (energy norm)
SHOOTING_TOLERANCE = 1e-9
#: relative residual below which Newton reuses the last monodromy matrix (a chord step,
#: the matrix corrected along each step by Broyden's update)
CHORD_BELOW = 1e-5
#: a chord step must cut the residual this much for the next to be one too
CHORD_RATE = 0.1
#: periods of plain stepping before each further Newton attempt on designs that failed
FALLBACK_PERIODS = 10
#: further Newton attempts at most (each after FALLBACK_PERIODS plain periods)
FALLBACK_ROUNDS = 3
#: largest period-to-period decay ratio the extrapolation after plain periods assumes
MAX_DECAY_RATIO = 0.999
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

    @property
    def steps(self) -> int:
        return self.x.shape[0] - 1


class _Junctions:
    """The implicit junction solve of one step, y = b + Z f(y), for a (sub)batch, with
    what every step shares worked out once (see :func:`solve_junctions`).

    One or two junctions (half-wave, full-wave) are solved entry by entry on
    contiguous arrays: numpy's stacked products of 2 x 2 matrices cost more than the
    few element-wise operations they stand for."""

    def __init__(self, law: str, params: dict[str, np.ndarray], Z: np.ndarray,
                 vscale: np.ndarray, max_iter: int = 60):
        self.law, self.params, self.Z = law, params, Z
        self.P = Z.shape[-1]
        self.tol = 1e-7 * np.max(vscale)  # [V]
        self.eye = np.eye(self.P)
        self.max_iter = max_iter
        if law == "silicon":
            self.off_below = -OFF_BELOW_NVT * params["nvt"]
        if self.P <= 2:
            self.z = [[np.ascontiguousarray(Z[:, p, q]) for q in range(self.P)]
                      for p in range(self.P)]

    def times_Z(self, i: np.ndarray) -> np.ndarray:
        """Z i for currents i (B, P)."""
        if self.P == 1:
            return self.z[0][0][:, None] * i
        if self.P == 2:
            z, i0, i1 = self.z, i[:, 0], i[:, 1]
            return np.stack([z[0][0] * i0 + z[0][1] * i1, z[1][0] * i0 + z[1][1] * i1], axis=1)
        return (self.Z @ i[..., None])[..., 0]

    def _newton(self, g: np.ndarray, res: np.ndarray) -> np.ndarray:
        """(I - Z diag(g))^-1 res for res (B, P): the junction Newton step."""
        if self.P == 1:
            return res / (1.0 - self.z[0][0][:, None] * g)
        if self.P == 2:
            z, g0, g1, r0, r1 = self.z, g[:, 0], g[:, 1], res[:, 0], res[:, 1]
            a, b = 1.0 - z[0][0] * g0, z[0][1] * g1  # J = [[a, -b], [-c, d]]
            c, d = z[1][0] * g0, 1.0 - z[1][1] * g1
            det = a * d - b * c
            return np.stack([(d * r0 + b * r1) / det, (a * r1 + c * r0) / det], axis=1)
        return np.linalg.solve(self.eye - self.Z * g[:, None, :], res[..., None])[..., 0]

    def solve_linear(self, g: np.ndarray, r: np.ndarray) -> np.ndarray:
        """(I - diag(g) Z)^-1 r for r (B, P, K): the junction currents' response to a
        change of the junction voltages with no current."""
        if self.P == 1:
            return r / (1.0 - self.z[0][0] * g[:, 0])[:, None, None]
        if self.P == 2:
            z, g0, g1 = self.z, g[:, 0, None], g[:, 1, None]
            a, b = 1.0 - g0 * z[0][0][:, None], g0 * z[0][1][:, None]
            c, d = g1 * z[1][0][:, None], 1.0 - g1 * z[1][1][:, None]
            r0, r1 = r[:, 0], r[:, 1]
            det = a * d - b * c
            return np.stack([(d * r0 + b * r1) / det, (a * r1 + c * r0) / det], axis=1)
        return np.linalg.solve(self.eye - g[:, :, None] * self.Z, r)

    def solve(self, b: np.ndarray, y0: np.ndarray):
        """Junction voltages y, currents f(y) and slopes f'(y), (B, P) each, from the
        voltages b with no junction current [V] and a starting guess y0 [V]."""
        law, params = self.law, self.params
        # every junction of the batch reverse-biased even with no current: no iteration
        # needed (a valve passes nothing; a silicon junction its saturation current)
        if law == "valve":
            if np.all(b <= 0.0):
                return b, np.zeros_like(b), np.zeros_like(b)
        elif np.all(b < self.off_below):
            i, g = junction(law, b, params)
            return b + self.times_Z(i), i, g
        y = y0
        for _ in range(self.max_iter):
            i, g = junction(law, y, params)
            res = y - b - self.times_Z(i)
            y_new = limit_step(law, y - self._newton(g, res), y, params)
            dy = np.abs(y_new - y)
            # converged when the last step moves neither voltage nor current noticeably
            done = np.max(dy) <= self.tol and np.max(dy * g) <= CURRENT_TOLERANCE_A
            y = y_new
            if done:
                break
        i, g = junction(law, y, params)
        return y, i, g


def solve_junctions(b: np.ndarray, Z: np.ndarray, y0: np.ndarray, law: str,
                    params: dict[str, np.ndarray], vscale: np.ndarray,
                    max_iter: int = 60) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Solve y = b + Z f(y) for the junction voltages y of one step.

    Newton's method on the few junction voltages of each design, the silicon
    steps limited as SPICE limits them (:func:`~supplydesign.circuit.devices.limit_step`),
    until the last step moves neither a voltage by more than 1e-7 of the largest
    winding emf nor a current by more than ``CURRENT_TOLERANCE_A``.

    Parameters
    ----------
    b : (B, P) junction voltages with zero junction current at the step's end [V]
    Z : (B, P, P) their sensitivity to the junction currents [ohm]
    y0 : (B, P) starting guess [V]
    vscale : (B,) a voltage scale of each design for the tolerance [V]

    Returns
    -------
    y, f(y), f'(y) with shapes (B, P).
    """
    return _Junctions(law, params, Z, vscale, max_iter).solve(b, y0)


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


#: a silicon junction counts as off below this many n·V_T of reverse bias: it then
#: passes its saturation current to within exp(-20) = 2e-9 of it
OFF_BELOW_NVT = 20.0
#: steps ahead the turn-on of a junction is looked for at once (see _OffMap)
LOOKAHEAD_STEPS = 64


class _OffMap:
    """The exact period map over stretches in which no junction of the batch conducts.

    While every junction is off (a valve anode at or below its cathode; a silicon
    junction reverse-biased beyond ``OFF_BELOW_NVT`` n·V_T, passing its saturation
    current), the network is linear and driven by the mains alone. One step is then
    z -> Phi_off z for z = (x, s), the oscillator s turning by one step's angle, and
    the junction currents held at their off value; n steps are Phi_off^n, applied as
    the binary powers Phi_off^(2^i) that n is made of. This is the step-by-step map
    itself, not an approximation of it: only the rounding differs.

    When the next junction turns on is found by looking ``LOOKAHEAD_STEPS`` ahead at
    once: the junction voltages j steps on are Cy Phi_off^j z (j = 1..L, the rows of
    ``ahead``), and the stretch ends before the first step at which any junction of
    the batch would be on.
    """

    def __init__(self, law: str, params: dict[str, np.ndarray], Phi: np.ndarray,
                 Phis: np.ndarray, G0: np.ndarray, G1: np.ndarray, Cy: np.ndarray,
                 turn: float, steps: int, lookahead: int = LOOKAHEAD_STEPS):
        """The map of one step for the designs of arrays (B, ...), the mains turning by
        ``turn`` [rad] a step; jumps of up to ``steps`` steps."""
        B, nx, P = G0.shape
        na = nx + 3
        if law == "valve":
            self.u_off = np.zeros((B, P))
            self.y_on = np.zeros((B, P))
        else:
            self.u_off = -params["isat"]
            self.y_on = -OFF_BELOW_NVT * params["nvt"]
        phi = np.zeros((B, na, na))
        phi[:, :nx, :nx] = Phi
        phi[:, :nx, nx:] = Phis
        phi[:, :nx, nx + 2] += ((G0 + G1) @ self.u_off[..., None])[..., 0]
        phi[:, nx:, nx:] = [[np.cos(turn), np.sin(turn), 0.0],
                            [-np.sin(turn), np.cos(turn), 0.0], [0.0, 0.0, 1.0]]
        self.powers = [phi]
        while 2 ** len(self.powers) <= steps:
            self.powers.append(self.powers[-1] @ self.powers[-1])
        self.powers_x = [p[:, :nx, :nx].copy() for p in self.powers]
        L = min(lookahead, steps)
        ahead = np.empty((B, L, P, na))
        row = np.zeros((B, P, na))
        row[:, :, :nx] = Cy
        for j in range(L):
            row = row @ phi
            ahead[:, j] = row
        self.ahead = ahead.reshape(B, L * P, na)
        self.lookahead = L

    @classmethod
    def of_batch(cls, batch: _Batch, steps: int) -> _OffMap:
        """The map of a batch stepping ``steps`` steps per mains period."""
        return cls(batch.law, batch.params, batch.Phi, batch.Phis, batch.G0, batch.G1,
                   batch.Cy, 2.0 * np.pi / steps, steps)

    def subset(self, sel: np.ndarray) -> _OffMap:
        out = object.__new__(_OffMap)
        out.u_off, out.y_on = self.u_off[sel], self.y_on[sel]
        out.powers = [p[sel] for p in self.powers]
        out.powers_x = [p[sel] for p in self.powers_x]
        out.ahead, out.lookahead = self.ahead[sel], self.lookahead
        return out

    def off_steps(self, z: np.ndarray, most: int) -> int:
        """How many steps from state z (B, na) every junction stays off, up to ``most``."""
        L = min(self.lookahead, most)
        P = self.y_on.shape[1]
        y = (self.ahead[:, : L * P] @ z[..., None])[..., 0].reshape(z.shape[0], L, P)
        on = np.any(y > self.y_on[:, None, :], axis=(0, 2))
        return int(np.argmax(on)) if on.any() else L

    def jump(self, z: np.ndarray, n: int) -> np.ndarray:
        """The state n steps on, (B, na)."""
        for i, p in enumerate(self.powers):
            if n >> i & 1:
                z = (p @ z[..., None])[..., 0]
        return z

    def states(self, z: np.ndarray, n: int) -> np.ndarray:
        """The states 1..n steps on, (n, B, na), by doubling: the second m of them are
        Phi_off^m times the first m."""
        block = self.powers[0] @ z[..., None]  # (B, na, m) with m = 2^i states so far
        i = 0
        while block.shape[2] < n:
            take = min(block.shape[2], n - block.shape[2])
            block = np.concatenate([block, self.powers[i] @ block[..., :take]], axis=2)
            i += 1
        return block.transpose(2, 0, 1)

    def jump_sensitivity(self, S: np.ndarray, n: int) -> np.ndarray:
        """The sensitivity of the state to the period's start, n steps on."""
        for i, p in enumerate(self.powers_x):
            if n >> i & 1:
                S = p @ S
        return S


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
    """One-period stepping of a (sub)batch, with optional monodromy."""

    def __init__(self, batch: _Batch, steps: int, start: int = 0):
        self.batch = batch
        self.law = batch.law
        self.params_all = batch.params
        self.steps = steps
        self.s = self.oscillator(steps, start)  # the period runs from phase start/steps
        # oscillator forcing of every step: (steps, B, nx), and its junction voltages
        self.forcing_all = np.einsum("bij,kj->kbi", batch.Phis, self.s[:-1])
        self.forcing_b = np.einsum("bpi,kbi->kbp", batch.Cy, self.forcing_all)
        self.Z_all = batch.Cy @ batch.G1  # (B, P, P)
        self.step_x = np.concatenate([batch.Phi, batch.G0, batch.G1], axis=2)
        self.step_b = batch.Cy @ self.step_x[:, :, :-batch.Cy.shape[1]]
        self.off_all = _OffMap.of_batch(batch, steps)

    @staticmethod
    def oscillator(steps: int, start: int = 0) -> np.ndarray:
        """(sin, cos, 1) of the mains phase at steps start .. start + steps, (steps + 1, 3)."""
        phase = 2.0 * np.pi * (np.arange(steps + 1) + start) / steps
        return np.stack([np.sin(phase), np.cos(phase), np.ones_like(phase)], axis=1)

    @classmethod
    def of(cls, ss: StateSpace, disc: Discrete, steps: int) -> _Stepper:
        return cls(_Batch.of([ss], [disc]), steps)

    def run(self, x0: np.ndarray, sel: np.ndarray, sens: bool, record: bool = True):
        """One period from states x0 of designs ``sel``.

        Returns the states, junction currents and junction voltages at every step,
        (steps + 1, len(sel), ...), and the sensitivity of the end state to x0
        (None without ``sens``). Without ``record`` only the end state is kept: states
        of shape (1, len(sel), nx), currents and voltages None.
        """
        bt = self.batch
        full = sel.size == bt.size
        pick = (lambda a: a) if full else (lambda a: a[sel])
        Phi, G0, G1, Cy = pick(bt.Phi), pick(bt.G0), pick(bt.G1), pick(bt.Cy)
        step_x, step_b = pick(self.step_x), pick(self.step_b)
        params = {p: pick(v) for p, v in self.params_all.items()}
        junctions = _Junctions(self.law, params, pick(self.Z_all), pick(bt.vscale))
        forcing = self.forcing_all if full else self.forcing_all[:, sel]
        forcing_b = self.forcing_b if full else self.forcing_b[:, sel]
        off = self.off_all if full else self.off_all.subset(sel)
        law, steps, s = self.law, self.steps, self.s
        B, nx = x0.shape
        P = Cy.shape[1]
        if record:
            xs = np.empty((steps + 1, B, nx))
            us = np.empty((steps + 1, B, P))
            ys = np.empty((steps + 1, B, P))
        # [x[k]; u[k]; u[k+1]]: x[k+1] = [Phi G0 G1] of it, plus the mains forcing
        xuu = np.empty((B, nx + 2 * P, 1))
        xu, u_now, u_next = xuu[:, :nx + P], xuu[:, nx:nx + P, 0], xuu[:, nx + P:, 0]
        x = x0
        y = np.einsum("bpi,bi->bp", Cy, x)
        u, g = junction(law, y, params)
        if record:
            xs[0], us[0], ys[0] = x, u, y
        S = None
        if sens:
            S = np.broadcast_to(np.eye(nx), (B, nx, nx)).copy()
        k = 0
        y_prev = y_prev2 = y
        while k < steps:
            if np.all(y <= off.y_on):
                # every junction is off: jump over the steps until one turns on
                z = np.concatenate([x, np.broadcast_to(s[k], (B, 3))], axis=1)
                n = off.off_steps(z, steps - k)
                if n > 0:
                    if record:
                        zs = off.states(z, n)
                        xs[k + 1:k + n + 1] = zs[:, :, :nx]
                        ys[k + 1:k + n + 1] = np.einsum("bpi,kbi->kbp", Cy, zs[:, :, :nx])
                        us[k + 1:k + n + 1] = junction(law, ys[k + 1:k + n + 1], params)[0]
                        z = zs[-1]
                    else:
                        z = off.jump(z, n)
                    if sens:
                        S = off.jump_sensitivity(S, n)
                    k += n
                    x = z[:, :nx]
                    y = np.einsum("bpi,bi->bp", Cy, x)
                    y_prev = y_prev2 = y
                    u, g = junction(law, y, params)
                    continue
            xuu[:, :nx, 0] = x
            u_now[...] = u
            # junction voltages with no junction current at the step's end, and the solve
            # for the currents from a quadratic extrapolation of the last three voltages
            b = (step_b @ xu)[..., 0] + forcing_b[k]
            guess = 3.0 * (y - y_prev) + y_prev2
            y_prev2, y_prev = y_prev, y
            g_before = g
            y, u, g = junctions.solve(b, guess)
            u_next[...] = u
            x = (step_x @ xuu)[..., 0] + forcing[k]
            k += 1
            if record:
                xs[k], us[k], ys[k] = x, u, y
            if sens:
                # chain rule through the step: d x[k+1] = Phi dx + G0 du[k] + G1 du[k+1],
                # du = g Cy dx, the last one implicit through the junction solve
                R = Phi @ S + G0 @ (g_before[:, :, None] * (Cy @ S))
                S = R + G1 @ junctions.solve_linear(g, g[:, :, None] * (Cy @ R))
        if not record:
            return x[None], None, None, S
        return xs, us, ys, S


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
                           fallback_periods: int | None = None) -> list[SteadyState]:
    """:func:`periodic_steady_state` of several batches at once, in the order given.

    Batches of one junction law, one port count (rectifier arrangement) and one
    number of steps are solved as one array, their states padded to the largest
    (see :class:`_Batch`): one Python loop over the steps of a period for all of
    them, however many topologies they hold. ``steps`` and ``x0s`` are one value
    for all or one per model.
    """
    n = len(models)
    steps_of = [steps] * n if isinstance(steps, int) else list(steps)
    x0s = [None] * n if x0s is None else list(x0s)
    groups: dict[tuple, list[int]] = {}
    for i, ss in enumerate(models):
        key = (ss.circuit.topology.law, ss.Cy.shape[1], steps_of[i], _choke_input(ss))
        groups.setdefault(key, []).append(i)
    out: list[SteadyState | None] = [None] * n
    for (_law, _ports, n_steps, choke_input), members in groups.items():
        mods = [models[i] for i in members]
        discs = [discretize(ss, 1.0 / (ss.circuit.frequency_hz * n_steps)) for ss in mods]
        batch = _Batch.of(mods, discs)
        x0 = np.zeros((batch.size, batch.nx))
        row = 0
        for i, ss in zip(members, mods, strict=True):
            x0[row:row + ss.A.shape[0], :ss.nx] = initial_guess(ss) if x0s[i] is None else x0s[i]
            row += ss.A.shape[0]
        # A choke input commutates from one anode to the next at the zero crossings of
        # the mains; a period cut there makes the period map kink (Newton overshoots and
        # needs further attempts), so it is shot from the crest, mid-conduction, and the
        # samples are put back in phase order afterwards. The discrete steady state is
        # the same sequence of samples wherever the period is cut.
        start = n_steps // 4 if choke_input else 0
        x, u, y, s, converged, iterations, residual = _shoot(batch, n_steps, tol, max_iter, x0,
                                                             fallback_periods, start)
        x, u, y = (_from_phase_zero(a, start) for a in (x, u, y))
        row = 0
        for i, ss, disc in zip(members, mods, discs, strict=True):
            rows = slice(row, row + ss.A.shape[0])
            row = rows.stop
            out[i] = SteadyState(ss, disc, x[:, rows, :ss.nx], u[:, rows], y[:, rows], s,
                                 converged[rows], iterations[rows], residual[rows])
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
           fallback_periods: int | None, start: int = 0):
    """Newton shooting on a batch from states x at step ``start`` of the period (see the
    module docstring)."""
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
    # Near the fixed point Newton converges quadratically: once every active design's
    # residual is below CHORD_BELOW, the period runs without sensitivities and the
    # step reuses the last monodromy matrix (a chord step).
    monodromy = np.zeros((B, nx, nx))
    near = np.zeros(B, dtype=bool)
    best_res = np.zeros((B, nx))  # P(x) - x at best_x
    # the period of each design's best start, kept from the chord runs, which record it
    P = batch.Cy.shape[1]
    out_x = np.empty((steps + 1, B, nx))
    out_u = np.empty((steps + 1, B, P))
    out_y = np.empty((steps + 1, B, P))
    recorded = np.zeros(B, dtype=bool)

    def newton(active: np.ndarray, n_iter: int) -> None:
        near[active] = False
        lam[active] = 1.0
        step[active] = 0.0
        for _it in range(n_iter):
            sens = not np.all(near[active])
            start = trial[active]
            xs, us, ys, S = stepper.run(start, active, sens=sens, record=not sens)
            r = xs[-1] - start
            rel = _weighted_norm(w[active], r) / np.maximum(_weighted_norm(w[active], start),
                                                             1e-300)
            iterations[active] += 1
            improved = rel < best_r[active]
            # accept improved trials; the others go back towards the best point
            acc = active[improved]
            if not sens:
                _broyden(monodromy, acc, trial[acc] - best_x[acc], r[improved] - best_res[acc],
                         w[acc])
                out_x[:, acc], out_u[:, acc] = xs[:, improved], us[:, improved]
                out_y[:, acc] = ys[:, improved]
            recorded[acc] = not sens
            before = best_r[active]
            best_r[acc] = rel[improved]
            best_x[acc] = trial[acc]
            best_res[acc] = r[improved]
            residual[acc] = rel[improved]
            done = improved & (rel < tol)
            converged[active[done]] = True
            go = improved & ~done
            if sens:
                monodromy[active] = S
            # chord steps go on while each cuts the residual CHORD_RATE-fold
            near[active] = improved & (rel < CHORD_BELOW) & (sens | (rel < CHORD_RATE * before))
            if np.any(go):
                ag = active[go]
                step[ag] = _limit_step(_newton_step(monodromy[ag], r[go], slow),
                                       best_x[ag], limit[ag], Cy[ag], y_max[ag])
                lam[active[go]] = 1.0
            back = ~improved
            lam[active[back]] *= 0.5
            keep = go | (back & (lam[active] > 1e-3))
            active = active[keep]
            if active.size == 0:
                break
            trial[active] = best_x[active] + lam[active, None] * step[active]

    newton(np.arange(B), max_iter)
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
        xs, us, ys, _ = stepper.run(best_x[missing], missing, sens=False)
        out_x[:, missing], out_u[:, missing], out_y[:, missing] = xs, us, ys
    return out_x, out_u, out_y, _Stepper.oscillator(steps), converged, iterations, residual
