"""Compiled inner loop of the solver: the exact step with the implicit junction solve.

The shooting (:mod:`.steady`) and the switch-on run (:mod:`.transient`) both step the
discretised network of :func:`~.statespace.discretize` forward,

    x[k+1] = Phi x[k] + Phis s[k] + G0 u[k] + G1 u[k+1],

the junction currents u[k+1] implicit through their law at the junction voltages
y[k+1] = Cy x[k+1]. :func:`run_steps` does it for every design of a batch, one design
after another, in code compiled by numba (``cache=True``: the machine code is kept
beside this module, or in numba's user cache where that is not writable, so only the
first run after an install pays the compilation). Each design steps on its own: its
junction solve iterates only while its own junctions need it, and its sensitivity is
carried only through the steps in which its own junctions conduct.

A step is *off* when every junction of the design stays reverse-biased even with no
current (a valve anode at or below its cathode; a silicon junction more than
``OFF_BELOW_NVT`` n·V_T reverse-biased): its currents are then their off value (0; the
saturation current -I_s, to within e^-20 of it) and their slope 0. The sensitivity of
the state to the period's start, dx[k]/dx[0], moves through an off step as Phi alone;
a run of n off steps is applied at once as Phi^n from its binary powers. Otherwise the
junction voltages are found by Newton's method on y = b + Z f(y) (Z = Cy G1), silicon
steps limited as SPICE limits them.

The kernels follow numpy's floating-point rules (``error_model="numpy"``): a division by
zero gives inf or NaN, as the array code they replaced did, for the shooting to flag,
rather than an exception.

Everything is in SI units: states are node voltages [V] and inductor currents [A],
junction voltages [V], junction currents [A].

References
----------
.. [1] L. O. Chua, P.-M. Lin, *Computer-Aided Analysis of Electronic Circuits*,
   Prentice-Hall (1975), ch. 13 (implicit solution of the nonlinear elements at
   each step).
.. [2] L. W. Nagel, "SPICE2: A computer program to simulate semiconductor circuits",
   ERL Memo UCB/ERL M520, University of California, Berkeley (1975) (pn limiting).
.. [3] T. J. Aprille, T. N. Trick, "Steady-state analysis of nonlinear circuits with
   periodic inputs", Proc. IEEE 60(1), 108-114 (1972) (the monodromy matrix).
.. [4] S. K. Lam, A. Pitrou, S. Seibert, "Numba: a LLVM-based Python JIT compiler",
   Proc. 2nd Workshop on the LLVM Compiler Infrastructure in HPC (2015).
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

#: junction laws as the kernel numbers them
VALVE = 0
SILICON = 1
#: a silicon junction counts as off below this many n·V_T of reverse bias: it then
#: passes its saturation current to within exp(-20) = 2e-9 of it
OFF_BELOW_NVT = 20.0
#: junction Newton iterations stop when the last step changes a current by less [A]
CURRENT_TOLERANCE_A = 1e-9
#: floating-point liberties the compiler may take: reassociating sums (so that dot
#: products vectorise) and fused multiply-adds; never assuming away NaN or infinity
FAST = {"reassoc", "contract"}


@njit(cache=True, fastmath=FAST, error_model="numpy")
def _law(law, v, a, nvt, v_lin):
    """Junction current [A] and slope [S] at voltage v [V]: Child-Langmuir with
    perveance a [A/V^1.5] (valve), or Shockley with saturation current a [A] and n·V_T
    [V], continued linearly above v_lin [V] (silicon); as
    :func:`~supplydesign.circuit.devices.junction`."""
    if law == VALVE:
        if v <= 0.0:
            return 0.0, 0.0
        root = math.sqrt(v)
        return a * v * root, 1.5 * a * root
    e = math.exp(min(v, v_lin) / nvt)
    i = a * (e - 1.0)
    g = a * e / nvt
    if v > v_lin:
        i += g * (v - v_lin)
    return i, g


@njit(cache=True, fastmath=FAST, error_model="numpy")
def _limit(v_new, v_old, nvt, v_crit):
    """SPICE's pn limiting of a silicon Newton step from v_old to v_new [V], as
    :func:`~supplydesign.circuit.devices.limit_step`."""
    dv = v_new - v_old
    if v_new <= v_crit or abs(dv) <= 2.0 * nvt:
        return v_new
    if v_old > 0.0:
        arg = 1.0 + dv / nvt
        if arg > 0.0:
            return v_old + nvt * math.log(arg)
        return v_crit
    return nvt * math.log(max(v_new / nvt, 1e-300))


@njit(cache=True, fastmath=FAST, error_model="numpy")
def _lu(A, piv, n):
    """LU factorisation of A[:n, :n] in place with partial pivoting (rows in piv)."""
    for c in range(n):
        p = c
        for r in range(c + 1, n):
            if abs(A[r, c]) > abs(A[p, c]):
                p = r
        piv[c] = p
        if p != c:
            for j in range(n):
                A[c, j], A[p, j] = A[p, j], A[c, j]
        for r in range(c + 1, n):
            A[r, c] /= A[c, c]
            for j in range(c + 1, n):
                A[r, j] -= A[r, c] * A[c, j]


@njit(cache=True, fastmath=FAST, error_model="numpy")
def _lu_solve(A, piv, n, rhs):
    """Solve with the factors of :func:`_lu` for the columns of rhs (n, m), in place."""
    m = rhs.shape[1]
    for c in range(n):
        p = piv[c]
        if p != c:
            for j in range(m):
                rhs[c, j], rhs[p, j] = rhs[p, j], rhs[c, j]
    for r in range(1, n):
        for c in range(r):
            for j in range(m):
                rhs[r, j] -= A[r, c] * rhs[c, j]
    for r in range(n - 1, -1, -1):
        for c in range(r + 1, n):
            for j in range(m):
                rhs[r, j] -= A[r, c] * rhs[c, j]
        for j in range(m):
            rhs[r, j] /= A[r, r]


@njit(cache=True, fastmath=FAST, error_model="numpy")
def _solve_in_place(A, piv, n, rhs):
    """Solve A[:n, :n] X = rhs (n, m) in place of rhs (A overwritten): closed form for
    one or two junctions, LU with partial pivoting for more."""
    m = rhs.shape[1]
    if n == 1:
        for j in range(m):
            rhs[0, j] /= A[0, 0]
        return
    if n == 2:
        det = A[0, 0] * A[1, 1] - A[0, 1] * A[1, 0]
        for j in range(m):
            r0, r1 = rhs[0, j], rhs[1, j]
            rhs[0, j] = (A[1, 1] * r0 - A[0, 1] * r1) / det
            rhs[1, j] = (A[0, 0] * r1 - A[1, 0] * r0) / det
        return
    _lu(A, piv, n)
    _lu_solve(A, piv, n, rhs)


@njit(cache=True, fastmath=FAST, error_model="numpy")
def _matmul_into(out, A, B):
    """out = A B for square blocks (out must not alias A or B)."""
    n, m, q = A.shape[0], A.shape[1], B.shape[1]
    for i in range(n):
        for j in range(q):
            out[i, j] = 0.0
        for k in range(m):
            a = A[i, k]
            if a != 0.0:
                for j in range(q):
                    out[i, j] += a * B[k, j]


@njit(cache=True, fastmath=FAST, error_model="numpy")
def run_steps(sel, x, u, y, y_prev, y_prev2, init, Phi, G0, G1, Phis, Cy, s, law, a, nvt,
              v_lin, v_crit, vtol, powers, ahead, max_iter, sens, S, record, rec_rows, xs, us,
              ys):
    """Step designs ``sel`` of a batch ``s.shape[0] - 1`` steps on.

    Parameters
    ----------
    sel : (n,) int
        Rows of the batch's matrices; row j of the state arrays is design sel[j].
    x : (n, nx) float
        States at the start [V, A]; overwritten with the states at the end.
    u, y, y_prev, y_prev2 : (n, P) float
        Junction currents [A] and voltages [V] at the start, and the voltages one and
        two steps before (the junction solve starts from their quadratic
        extrapolation); overwritten with those at the end.
    init : bool
        Work out u and y from x first (the start of a period; y_prev, y_prev2 = y).
    Phi, G0, G1, Phis, Cy : (B, nx, nx), (B, nx, P), (B, nx, P), (B, nx, 3), (B, P, nx)
        The discrete step of each design of the batch (:class:`~.statespace.Discrete`)
        and its junction voltages y = Cy x.
    s : (steps + 1, 3) float
        The oscillator (sin, cos, 1) of the mains phase at each step's start.
    law : int
        ``VALVE`` or ``SILICON``.
    a, nvt, v_lin, v_crit : (B, P) float
        Junction law parameters: perveance [A/V^1.5] or saturation current [A]; n·V_T,
        the start of the linear continuation and SPICE's critical voltage [V] (silicon).
    vtol : (B,) float
        Voltage tolerance of each design's junction solve [V].
    powers : (B, L, nx + 3, nx + 3) float
        The i-th binary power Phi_off^(2^i), i < L, of each design's step with every
        junction off, on the augmented state z = (x, s) (2^L above any run of off
        steps); its top left block is Phi^(2^i), which carries the sensitivity over a
        run of off steps. Without ``record``, a run of off steps found by ``ahead`` is
        jumped at once.
    ahead : (B, LA, P, nx + 3) float
        The junction voltages j = 1 .. LA steps on with every junction off, as rows on
        z: Cy Phi_off^j restricted to x. Unused with ``record`` (shape (1, 1, 1, 1)).
    max_iter : int
        Newton iterations of a junction solve at most.
    sens : bool
        Carry the sensitivity dx/dx[start] along in S (n, nx, nx), which holds it at
        the start (the identity for a period) and is overwritten with it at the end.
    record : bool
        Write x, u, y after each step k into xs[r, :, k + 1], us[r, :, k + 1],
        ys[r, :, k + 1] with r = rec_rows[j] (arrays (., nx, steps + 1), (., P, steps + 1):
        each state's waveform together, as the figures read them); and the start into
        xs[r, :, 0] ... when ``init``.
    rec_rows : (n,) int
        Where each design's samples go in xs, us, ys.
    """
    nx = x.shape[1]
    P = u.shape[1]
    for j in range(sel.shape[0]):
        d = sel[j]
        xj, uj, yj, ypj, yppj = x[j].copy(), u[j].copy(), y[j].copy(), y_prev[j].copy(), \
            y_prev2[j].copy()
        y_on = np.empty(P)
        u_off = np.empty(P)
        for p in range(P):
            if law == VALVE:
                y_on[p] = 0.0
                u_off[p] = 0.0
            else:
                y_on[p] = -OFF_BELOW_NVT * nvt[d, p]
                u_off[p] = -a[d, p]
        if init:
            for p in range(P):
                acc = 0.0
                for i in range(nx):
                    acc += Cy[d, p, i] * xj[i]
                yj[p] = acc
                ypj[p] = acc
                yppj[p] = acc
                if acc <= y_on[p]:
                    uj[p] = u_off[p]
                else:
                    uj[p] = _law(law, acc, a[d, p], nvt[d, p], v_lin[d, p])[0]
            if record:
                xs[rec_rows[j], :, 0] = xj
                us[rec_rows[j], :, 0] = uj
                ys[rec_rows[j], :, 0] = yj
        _design_steps(xj, uj, yj, ypj, yppj, y_on, u_off, Phi[d], G0[d], G1[d], Phis[d],
                      Cy[d], s, law, a[d], nvt[d], v_lin[d], v_crit[d], vtol[d], powers[d],
                      ahead[d] if not record else ahead[0],
                      max_iter, sens, S[j] if sens else S[0], record, rec_rows[j], xs, us, ys)
        x[j] = xj
        u[j] = uj
        y[j] = yj
        y_prev[j] = ypj
        y_prev2[j] = yppj


@njit(cache=True, fastmath=FAST, error_model="numpy")
def _design_steps(x, u, y, y_prev, y_prev2, y_on, u_off, Phi, G0, G1, Phis, Cy, s, law, a,
                  nvt, v_lin, v_crit, tol, powers, ahead, max_iter, sens, S, record, r, xs, us,
                  ys):
    """The steps of :func:`run_steps` for one design, on its own arrays; its samples go
    to row r of xs, us, ys."""
    nx = x.shape[0]
    P = u.shape[0]
    steps = s.shape[0] - 1
    xn = np.empty(nx)
    b = np.empty(P)
    g = np.empty(P)
    g_before = np.empty(P)
    res = np.empty((P, 1))
    J = np.empty((P, P))
    piv = np.empty(P, dtype=np.int64)
    CS = np.empty((P, nx))
    R = np.empty((nx, nx))
    T = np.empty((nx, nx))
    Z = np.empty((P, P))
    for p in range(P):
        for q in range(P):
            acc = 0.0
            for i in range(nx):
                acc += Cy[p, i] * G1[i, q]
            Z[p, q] = acc
        g[p] = 0.0 if y[p] <= y_on[p] else _law(law, y[p], a[p], nvt[p], v_lin[p])[1]
    pending = 0  # off steps not yet applied to S
    na = nx + 3
    z = np.empty(na)
    zt = np.empty(na)
    LA = ahead.shape[0]
    k = -1
    while k < steps - 1:
        k += 1
        if not record:
            still = True  # every junction off now: how many steps it stays so
            for p in range(P):
                if g[p] != 0.0 or y[p] > y_on[p]:
                    still = False
            n = 0
            if still:
                for i in range(nx):
                    z[i] = x[i]
                z[nx], z[nx + 1], z[nx + 2] = s[k, 0], s[k, 1], s[k, 2]
                for jj in range(min(LA, steps - k)):
                    on = False
                    for p in range(P):
                        acc = 0.0
                        for i in range(na):
                            acc += ahead[jj, p, i] * z[i]
                        if acc > y_on[p]:
                            on = True
                    if on:
                        break
                    n += 1
            if n >= 2:
                _jump_state(z, powers, n, zt)
                for i in range(nx):
                    x[i] = z[i]
                for p in range(P):
                    acc = 0.0
                    for i in range(nx):
                        acc += Cy[p, i] * x[i]
                    y[p] = acc
                    y_prev[p] = acc
                    y_prev2[p] = acc
                    u[p] = u_off[p]
                pending += n
                k += n - 1
                continue
        # the state with no current at the step's end, and its junction voltages b
        s0, s1 = s[k, 0], s[k, 1]
        for i in range(nx):
            acc = Phis[i, 0] * s0 + Phis[i, 1] * s1 + Phis[i, 2]
            for m in range(nx):
                acc += Phi[i, m] * x[m]
            for p in range(P):
                acc += G0[i, p] * u[p]
            xn[i] = acc
        off = True
        for p in range(P):
            acc = 0.0
            for i in range(nx):
                acc += Cy[p, i] * xn[i]
            b[p] = acc
            if acc > y_on[p]:
                off = False
            g_before[p] = g[p]
        if off:
            for p in range(P):
                y_prev2[p] = y_prev[p]
                y_prev[p] = y[p]
                acc = b[p]
                for q in range(P):
                    acc += Z[p, q] * u_off[q]
                y[p] = acc
                u[p] = u_off[p]
                g[p] = 0.0
        else:
            # Newton from the quadratic extrapolation of the last three voltages
            for p in range(P):
                guess = 3.0 * (y[p] - y_prev[p]) + y_prev2[p]
                y_prev2[p] = y_prev[p]
                y_prev[p] = y[p]
                y[p] = guess
            for _it in range(max_iter):
                for p in range(P):
                    u[p], g[p] = _law(law, y[p], a[p], nvt[p], v_lin[p])
                for p in range(P):
                    acc = y[p] - b[p]
                    for q in range(P):
                        acc -= Z[p, q] * u[q]
                        J[p, q] = -Z[p, q] * g[q]
                    J[p, p] += 1.0
                    res[p, 0] = acc
                _solve_in_place(J, piv, P, res)
                done = True
                for p in range(P):
                    v_new = y[p] - res[p, 0]
                    if law == SILICON:
                        v_new = _limit(v_new, y[p], nvt[p], v_crit[p])
                    dy = abs(v_new - y[p])
                    # converged when the last step moves neither voltage nor current
                    if dy > tol or dy * g[p] > CURRENT_TOLERANCE_A:
                        done = False
                    y[p] = v_new
                if done:
                    break
            for p in range(P):
                u[p], g[p] = _law(law, y[p], a[p], nvt[p], v_lin[p])
        for i in range(nx):
            acc = xn[i]
            for p in range(P):
                acc += G1[i, p] * u[p]
            x[i] = acc
        if record:
            xs[r, :, k + 1] = x
            us[r, :, k + 1] = u
            ys[r, :, k + 1] = y
        if not sens:
            continue
        quiet = True
        for p in range(P):
            if g[p] != 0.0 or g_before[p] != 0.0:
                quiet = False
        if quiet:
            pending += 1
            continue
        if pending:
            _jump(S, powers, pending, T)
            pending = 0
        # chain rule through the step: dx[k+1] = Phi dx + G0 du[k] + G1 du[k+1],
        # du = g Cy dx, the last one implicit through the junction solve
        _matmul_into(CS, Cy, S)
        for p in range(P):
            for m in range(nx):
                CS[p, m] *= g_before[p]
        _matmul_into(R, Phi, S)
        for i in range(nx):
            for p in range(P):
                c = G0[i, p]
                if c != 0.0:
                    for m in range(nx):
                        R[i, m] += c * CS[p, m]
        _matmul_into(CS, Cy, R)
        for p in range(P):
            for m in range(nx):
                CS[p, m] *= g[p]
            for q in range(P):
                J[p, q] = -g[p] * Z[p, q]
            J[p, p] += 1.0
        _solve_in_place(J, piv, P, CS)
        for i in range(nx):
            for m in range(nx):
                acc = R[i, m]
                for p in range(P):
                    acc += G1[i, p] * CS[p, m]
                S[i, m] = acc
    if sens and pending:
        _jump(S, powers, pending, T)


@njit(cache=True, fastmath=FAST, error_model="numpy")
def _jump(S, powers, n, T):
    """S = Phi^n S in place, from the top left blocks (Phi^(2^i)) of the binary powers
    of the off map (T: workspace)."""
    nx = S.shape[0]
    i = 0
    while n:
        if n & 1:
            _matmul_into(T, powers[i, :nx, :nx], S)
            S[:, :] = T
        n >>= 1
        i += 1


@njit(cache=True, fastmath=FAST, error_model="numpy")
def _jump_state(z, powers, n, zt):
    """z = Phi_off^n z in place, from the binary powers of the off map (zt: workspace)."""
    na = z.shape[0]
    i = 0
    while n:
        if n & 1:
            for r in range(na):
                acc = 0.0
                for c in range(na):
                    acc += powers[i, r, c] * z[c]
                zt[r] = acc
            for r in range(na):
                z[r] = zt[r]
        n >>= 1
        i += 1
