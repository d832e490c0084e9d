"""Linear part of the supply as a batched state-space model, and its exact discretisation.

Everything in the netlist but the rectifier junctions is linear and time
invariant. Modified nodal analysis gives, for a batch of B designs,

.. math::  \\mathcal{M} \\dot{\\xi} = F \\xi + S s + U u

with :math:`\\xi` the node voltages and inductor currents, :math:`s = (\\sin\\omega t,
\\cos\\omega t, 1)` the mains oscillator (the winding emfs and the constant stage
currents are fixed combinations of it), and :math:`u` the junction currents.
Nodes without capacitance are eliminated (Schur complement on their
conductances), leaving :math:`\\dot x = A x + B_s s + B_u u`.

The discretisation over a step h is exact for the linear part, with the
junction currents taken linear over the step (first-order hold), by one matrix
exponential of an augmented matrix (Van Loan's block method). The oscillator is
a state of that augmented system, so the mains sine is reproduced exactly too.

References
----------
.. [1] C.-W. Ho, A. E. Ruehli, P. A. Brennan, "The modified nodal approach to
   network analysis", IEEE Trans. Circuits Syst. 22(6), 504-509 (1975).
.. [2] C. F. Van Loan, "Computing integrals involving the matrix exponential",
   IEEE Trans. Automat. Control 23(3), 395-404 (1978).
.. [3] G. F. Franklin, J. D. Powell, M. L. Workman, *Digital Control of Dynamic
   Systems*, 3rd ed., Addison-Wesley (1998), §4.3.4 (triangle-hold equivalent).
.. [4] N. J. Higham, "The scaling and squaring method for the matrix exponential
   revisited", SIAM J. Matrix Anal. Appl. 26(4), 1179-1193 (2005).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .netlist import GROUND, Circuit, Element


@dataclass
class StateSpace:
    """Continuous-time model of a batch; arrays carry the batch as their first axis."""

    circuit: Circuit
    A: np.ndarray  # (B, nx, nx)
    Bs: np.ndarray  # (B, nx, 3)
    Bu: np.ndarray  # (B, nx, P)
    # full node voltages and inductor currents from (x, s, u): xi = Rx x + Rs s + Ru u
    Rx: np.ndarray  # (B, N + M, nx)
    Rs: np.ndarray  # (B, N + M, 3)
    Ru: np.ndarray  # (B, N + M, P)
    Cy: np.ndarray  # (B, P, nx): junction voltages y = Cy x (every junction node is a state)
    weights: np.ndarray  # (B, nx): sqrt of the energy-storing element of each state
    slow: np.ndarray  # (ns,) state columns whose monodromy columns Newton uses
    node_index: dict[str, int]  # node name -> row of xi
    inductor_index: dict[str, int]  # element name -> row of xi
    ports: tuple[Element, ...]  # the D elements, in port order
    omega: np.ndarray  # (B,) mains angular frequency [rad/s]
    n_dynamic_nodes: int = 0

    @property
    def nx(self) -> int:
        return self.A.shape[1]

    @property
    def port_params(self) -> dict[str, np.ndarray]:
        """Junction law parameters, each of shape (B, P)."""
        c = self.circuit
        names = list(c.values[self.ports[0].name])
        return {p: np.stack([c.value(e.name, p) for e in self.ports], axis=1) for p in names}


def _stamp(mat: np.ndarray, idx: dict[str, int], a: str, b: str, val: np.ndarray) -> None:
    """Add a two-terminal admittance-like value between nodes a and b (ground skipped)."""
    ia, ib = idx.get(a), idx.get(b)
    if ia is not None:
        mat[:, ia, ia] += val
    if ib is not None:
        mat[:, ib, ib] += val
    if ia is not None and ib is not None:
        mat[:, ia, ib] -= val
        mat[:, ib, ia] -= val


def _incidence(vec: np.ndarray, idx: dict[str, int], a: str, b: str, col: int,
               val=1.0) -> None:
    """Column ``col`` of an incidence-like matrix: +val at a, -val at b (ground skipped)."""
    if a != GROUND:
        vec[:, idx[a], col] += val
    if b != GROUND:
        vec[:, idx[b], col] -= val


def build_state_space(circuit: Circuit) -> StateSpace:
    """Assemble the batched state-space model of ``circuit`` (see module docstring)."""
    topo = circuit.topology
    B = circuit.size
    nodes = list(topo.nodes)
    N = len(nodes)
    idx = {n: i for i, n in enumerate(nodes)}
    inductive = [e for e in topo.elements if e.kind == "L"]
    M = len(inductive)
    ind_idx = {e.name: N + j for j, e in enumerate(inductive)}
    ports = tuple(e for e in topo.elements if e.kind == "D")
    P = len(ports)
    n = N + M
    omega = 2.0 * np.pi * circuit.frequency_hz

    mass = np.zeros((B, n, n))
    F = np.zeros((B, n, n))
    S = np.zeros((B, n, 3))
    U = np.zeros((B, n, P))
    G = np.zeros((B, N, N))
    Cn = np.zeros((B, N, N))
    for e in topo.elements:
        if e.kind == "R":
            _stamp(G, idx, e.a, e.b, 1.0 / circuit.value(e.name, "r"))
        elif e.kind == "C":
            _stamp(Cn, idx, e.a, e.b, circuit.value(e.name, "c"))
        elif e.kind == "J":
            # current leaving a, entering b: moved to the right-hand side
            _incidence(S, idx, e.a, e.b, 2, -circuit.value(e.name, "i"))
        elif e.kind == "D":
            _incidence(U, idx, e.a, e.b, ports.index(e), -1.0)
        elif e.kind == "L":
            j = ind_idx[e.name]
            mass[:, j, j] = circuit.value(e.name, "l")
            F[:, j, j] = -circuit.value(e.name, "r")
            # L di/dt = v_a - v_b - r i ; the current leaves a and enters b
            for node, sgn in ((e.a, 1.0), (e.b, -1.0)):
                if node != GROUND:
                    F[:, j, idx[node]] += sgn
                    F[:, idx[node], j] -= sgn
        elif e.kind == "W":
            # emf e(t) = emf_row . s behind r: a conductance plus a current source
            emf = circuit.value(e.name, "emf")
            emf_row = np.stack([emf * np.cos(e.phase), emf * np.sin(e.phase),
                                np.zeros_like(emf)], axis=1)
            g = 1.0 / circuit.value(e.name, "r")
            _stamp(G, idx, e.a, e.b, g)
            for node, sgn in ((e.a, -1.0), (e.b, 1.0)):
                if node != GROUND:
                    S[:, idx[node], :] += sgn * g[:, None] * emf_row
        else:  # pragma: no cover
            raise ValueError(f"unknown element kind {e.kind!r}")
    F[:, :N, :N] -= G
    mass[:, :N, :N] = Cn

    diag = np.einsum("bii->bi", mass)
    dyn_mask = np.all(diag > 0, axis=0)
    if np.any(np.any(diag > 0, axis=0) != dyn_mask):  # pragma: no cover - topology is shared
        raise ValueError("capacitance pattern differs within a batch")
    d = np.flatnonzero(dyn_mask)
    a = np.flatnonzero(~dyn_mask)
    Fdd, Fda = F[:, d][:, :, d], F[:, d][:, :, a]
    Sd, Ud = S[:, d], U[:, d]
    Rx = np.zeros((B, n, len(d)))
    Rx[:, d, np.arange(len(d))] = 1.0
    Rs = np.zeros((B, n, 3))
    Ru = np.zeros((B, n, P))
    if len(a):
        Faa_inv = np.linalg.inv(F[:, a][:, :, a])
        Tx = -Faa_inv @ F[:, a][:, :, d]
        Ts = -Faa_inv @ S[:, a]
        Tu = -Faa_inv @ U[:, a]
        Fdd = Fdd + Fda @ Tx
        Sd = Sd + Fda @ Ts
        Ud = Ud + Fda @ Tu
        Rx[:, a] = Tx
        Rs[:, a] = Ts
        Ru[:, a] = Tu
    Mdd = mass[:, d][:, :, d]
    A = np.linalg.solve(Mdd, Fdd)
    Bs = np.linalg.solve(Mdd, Sd)
    Bu = np.linalg.solve(Mdd, Ud)

    Cy = np.zeros((B, P, len(d)))
    for p, e in enumerate(ports):
        row = np.zeros((B, len(d)))
        for node, sgn in ((e.a, 1.0), (e.b, -1.0)):
            if node != GROUND:
                if np.any(Ru[:, idx[node]] != 0) or np.any(Rs[:, idx[node]] != 0):
                    raise ValueError("a junction node must carry capacitance")
                row += sgn * Rx[:, idx[node]]
        Cy[:, p] = row
    weights = np.sqrt(np.einsum("bii->bi", Mdd))
    # Newton shooting needs the monodromy columns of every state that can hold memory
    # over a period. Choosing them by structure (filter capacitors and inductors only)
    # proved fragile (a bridge's floating winding, choke inputs with steep junctions),
    # so every state is kept.
    slow = np.arange(len(d))
    return StateSpace(circuit, A, Bs, Bu, Rx, Rs, Ru, Cy, weights, slow, idx, ind_idx, ports,
                      omega, n_dynamic_nodes=int(np.sum(d < N)))


@dataclass
class Discrete:
    """Exact step of the linear part over h, junction currents linear within the step.

    x[k+1] = Phi x[k] + Phis s[k] + G0 u[k] + G1 u[k+1]
    """

    h: np.ndarray  # (B,)
    Phi: np.ndarray  # (B, nx, nx)
    Phis: np.ndarray  # (B, nx, 3)
    G0: np.ndarray  # (B, nx, P)
    G1: np.ndarray  # (B, nx, P)


def oscillator(omega: np.ndarray) -> np.ndarray:
    """Generator of s = (sin wt, cos wt, 1): ds/dt = Omega s. Shape (B, 3, 3)."""
    om = np.zeros((omega.shape[0], 3, 3))
    om[:, 0, 1] = omega
    om[:, 1, 0] = -omega
    return om


#: coefficients b_0..b_13 of the degree-13 Padé approximant to exp (Higham 2005, [4])
_PADE13 = (64764752532480000.0, 32382376266240000.0, 7771770303897600.0,
           1187353796428800.0, 129060195264000.0, 10559470521600.0, 670442572800.0,
           33522128640.0, 1323241920.0, 40840800.0, 960960.0, 16380.0, 182.0, 1.0)
#: largest 1-norm for which the degree-13 Padé approximant is accurate to double
#: precision without scaling (theta_13 of [4], Table 2.3)
_THETA13 = 5.371920351148152


def expm_batched(M: np.ndarray) -> np.ndarray:
    """Matrix exponential of every matrix of a stack, shape (B, m, m).

    Scaling and squaring with the degree-13 Padé approximant (Higham 2005, [4],
    Algorithm 2.3, always at degree 13): each matrix is scaled by its own power of
    two so that its 1-norm is at most theta_13, the approximant is evaluated for
    the whole stack at once (six products and one solve), and each result is
    squared as often as its own matrix was halved.

    The squaring works on F = e^A - I (from the approximant, F = (V - U)^-1 2U;
    then (I + F)^2 = I + (2F + F^2)) rather than on e^A itself. A supply's network
    is stiff (nanosecond junction and stray capacitances beside time constants of
    seconds; a 1-norm near 10^6 over one step, 17 squarings): squaring e^A rounds
    the slow decays 1 - e^(-h/tau) to the absolute error of the whole matrix, about
    1e-10 here (1e-6 of the decay of a one-second section), where F keeps them
    to their own relative precision (1e-12 against a 40-digit reference).
    """
    norm = np.max(np.sum(np.abs(M), axis=1), axis=-1)  # 1-norm of each matrix
    with np.errstate(divide="ignore"):
        s = np.maximum(np.ceil(np.log2(norm / _THETA13)), 0.0)
    s = np.where(np.isfinite(s), s, 0.0).astype(int)
    A = M * (0.5 ** s)[:, None, None]
    b = _PADE13
    eye = np.eye(M.shape[-1])
    A2 = A @ A
    A4 = A2 @ A2
    A6 = A4 @ A2
    U = A @ (A6 @ (b[13] * A6 + b[11] * A4 + b[9] * A2)
             + b[7] * A6 + b[5] * A4 + b[3] * A2 + b[1] * eye)
    V = (A6 @ (b[12] * A6 + b[10] * A4 + b[8] * A2)
         + b[6] * A6 + b[4] * A4 + b[2] * A2 + b[0] * eye)
    F = np.linalg.solve(V - U, 2.0 * U)
    for k in range(int(s.max(initial=0))):
        more = s > k
        if np.all(more):
            F = 2.0 * F + F @ F
        else:
            F[more] = 2.0 * F[more] + F[more] @ F[more]
    return eye + F


def discretize(ss: StateSpace, h: np.ndarray) -> Discrete:
    """Discretise ``ss`` exactly over steps ``h`` [s] (shape (B,)), first-order hold on u."""
    B, nx, P = ss.Bu.shape
    m = nx + 3 + 2 * P
    big = np.zeros((B, m, m))
    big[:, :nx, :nx] = ss.A
    big[:, :nx, nx:nx + 3] = ss.Bs
    big[:, nx:nx + 3, nx:nx + 3] = oscillator(ss.omega)
    big[:, :nx, nx + 3:nx + 3 + P] = ss.Bu
    big[:, nx + 3:nx + 3 + P, nx + 3 + P:] = np.eye(P)[None] / h[:, None, None]
    E = expm_batched(big * h[:, None, None])
    Phi = E[:, :nx, :nx]
    Phis = E[:, :nx, nx:nx + 3]
    G_nu = E[:, :nx, nx + 3:nx + 3 + P]
    G_beta = E[:, :nx, nx + 3 + P:]
    return Discrete(h, Phi, Phis, G_nu - G_beta, G_beta)
