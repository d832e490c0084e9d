"""Operating cases to figures: the evaluator's public face.

``evaluate(designs, case)`` groups the designs by topology, solves each group's
periodic steady state as one batch, and turns the sampled period into
:class:`~supplydesign.figures.Figures`.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from .circuit.netlist import GROUND, NOMINAL, Circuit, OperatingCase, build, group_by_topology
from .circuit.statespace import build_state_space
from .circuit.steady import STEPS_PER_PERIOD, SteadyState, periodic_steady_state
from .design import Design
from .figures import Figures, RailFigures, RectifierFigures, TransformerFigures, Waveforms

IDLE = OperatingCase("idle", 1.0, "idle")


@dataclass
class Solved:
    """A solved batch and the means to read any node voltage or element current from it."""

    circuit: Circuit
    steady: SteadyState

    def __post_init__(self):
        st = self.steady
        ss = st.ss
        self._xi = (np.einsum("bij,kbj->kbi", ss.Rx, st.x)
                    + np.einsum("bij,kj->kbi", ss.Rs, st.s)
                    + np.einsum("bij,kbj->kbi", ss.Ru, st.u))  # (K+1, B, N+M)
        self._dx = None

    @property
    def t_s(self) -> np.ndarray:
        """Sample instants of design 0's period [s] (each design has its own frequency)."""
        k = np.arange(self.steady.steps + 1)
        return k[:, None] / (self.steady.steps * self.circuit.frequency_hz[None, :])

    def node_v(self, node: str) -> np.ndarray:
        """Voltage of ``node`` against ground over the period [V], shape (K+1, B)."""
        if node == GROUND:
            return np.zeros(self._xi.shape[:2])
        return self._xi[:, :, self.steady.ss.node_index[node]]

    def _node_dvdt(self, node: str) -> np.ndarray:
        if node == GROUND:
            return np.zeros(self._xi.shape[:2])
        st = self.steady
        ss = st.ss
        if self._dx is None:
            self._dx = (np.einsum("bij,kbj->kbi", ss.A, st.x)
                        + np.einsum("bij,kj->kbi", ss.Bs, st.s)
                        + np.einsum("bij,kbj->kbi", ss.Bu, st.u))
        row = ss.Rx[0, ss.node_index[node]]
        col = np.flatnonzero(row)
        if len(col) != 1 or np.any(ss.Ru[:, ss.node_index[node]] != 0):
            raise ValueError(f"node {node} holds no capacitance")
        return self._dx[:, :, col[0]]

    def current(self, name: str) -> np.ndarray:
        """Current through element ``name`` from its node a to its node b [A], (K+1, B)."""
        c = self.circuit
        e = next(x for x in c.topology.elements if x.name == name)
        if e.kind == "R":
            return (self.node_v(e.a) - self.node_v(e.b)) / c.value(name, "r")[None, :]
        if e.kind == "L":
            return self._xi[:, :, self.steady.ss.inductor_index[name]]
        if e.kind == "W":
            s = self.steady.s
            emf = c.value(name, "emf")[None, :]
            emf_t = emf * (np.cos(e.phase) * s[:, 0:1] + np.sin(e.phase) * s[:, 1:2])
            return (self.node_v(e.a) - self.node_v(e.b) + emf_t) / c.value(name, "r")[None, :]
        if e.kind == "C":
            dv = self._node_dvdt(e.a) - self._node_dvdt(e.b)
            return c.value(name, "c")[None, :] * dv
        if e.kind == "D":
            return self.steady.u[:, :, self.steady.ss.ports.index(e)]
        if e.kind == "J":
            return np.broadcast_to(c.value(name, "i")[None, :], self._xi.shape[:2])
        raise ValueError(e.kind)


def _period(w: np.ndarray) -> np.ndarray:
    """Drop the repeated last sample: (K+1, B) -> (K, B)."""
    return w[:-1]


def detrended(w: np.ndarray) -> np.ndarray:
    """Remove the residual drift of a converged period (w[K] - w[0], spread linearly).

    The shooting leaves a drift of the order of its tolerance; on a rail whose
    ripple is microvolts it would otherwise show up as ripple.
    """
    K = w.shape[0] - 1
    ramp = np.arange(K + 1)[:, None] / K
    return w - ramp * (w[-1] - w[0])[None, :]


def mean(w: np.ndarray) -> np.ndarray:
    return np.mean(_period(w), axis=0)


def rms(w: np.ndarray) -> np.ndarray:
    return np.sqrt(np.mean(_period(w) ** 2, axis=0))


def peak(w: np.ndarray) -> np.ndarray:
    """Largest value of a periodic sampled waveform, refined by a parabola through the
    highest sample and its neighbours (never below the highest sample). Shape (B,)."""
    p = _period(w)
    K = p.shape[0]
    k = np.argmax(p, axis=0)
    cols = np.arange(p.shape[1])
    a, b, c = p[(k - 1) % K, cols], p[k, cols], p[(k + 1) % K, cols]
    den = a - 2.0 * b + c
    with np.errstate(divide="ignore", invalid="ignore"):
        off = np.where(den < 0, 0.5 * (a - c) / den, 0.0)
    off = np.clip(off, -0.5, 0.5)
    return np.maximum(b - 0.25 * (a - c) * off, b)


def solve(designs: Sequence[Design], case: OperatingCase = NOMINAL,
          steps: int = STEPS_PER_PERIOD) -> list[tuple[list[int], Solved]]:
    """Solve the designs' steady state, one batch per topology: [(indices, Solved)]."""
    out = []
    for idx in group_by_topology(designs):
        circuit = build([designs[i] for i in idx], case)
        steady = periodic_steady_state(build_state_space(circuit), steps=steps)
        out.append((idx, Solved(circuit, steady)))
    return out


def figures_of(solved: Solved, case: OperatingCase = NOMINAL,
               waveforms: bool = False) -> list[Figures]:
    """Figures of every design of a solved batch."""
    c = solved.circuit
    topo = c.topology
    B = c.size
    rails: list[list[RailFigures]] = [[] for _ in range(B)]
    for i, (name, node) in enumerate(zip(topo.rail_names, topo.rail_nodes, strict=True)):
        v = detrended(solved.node_v(node))
        dc = mean(v)
        ripple = np.std(_period(v), axis=0)
        pp = np.max(_period(v), axis=0) - np.min(_period(v), axis=0)
        cap = topo.by_role("cap", i)
        esr = topo.by_role("esr", i)
        v_cap = solved.node_v(cap.a) if cap is not None else v
        pk = peak(v_cap)
        load = topo.by_role("load", i)
        load_a = mean(solved.current(load.name))
        link = topo.by_role("link", i)
        if link is not None:
            il = solved.current(link.name)
            link_dc, link_rms = mean(il), rms(il)
            link_p = rms(il) ** 2 * c.value(link.name, "r")
        else:
            link_dc = link_rms = link_p = np.zeros(B)
        if cap is not None:
            ic = solved.current(cap.name)
            cap_rms = np.std(_period(ic), axis=0)
            cap_p = rms(ic) ** 2 * (c.value(esr.name, "r") if esr is not None else 0.0)
        for b in range(B):
            rails[b].append(RailFigures(
                name=name, dc_v=float(dc[b]), ripple_rms_v=float(ripple[b]),
                ripple_pp_v=float(pp[b]), peak_v=float(pk[b]), load_a=float(load_a[b]),
                link_dc_a=float(link_dc[b]), link_power_w=float(link_p[b]),
                link_rms_a=float(link_rms[b]),
                cap_ripple_rms_a=None if cap is None else float(cap_rms[b]),
                cap_power_w=None if cap is None else float(cap_p[b])))
    diodes = topo.of_kind("D")
    i_d = [solved.current(d.name) for d in diodes]
    y = solved.steady.y
    d_peak = np.max([peak(i) for i in i_d], axis=0)
    d_rms = np.max([rms(i) for i in i_d], axis=0)
    d_avg = np.max([mean(i) for i in i_d], axis=0)
    powers = []
    for p, d in enumerate(diodes):
        pw = mean(i_d[p] * y[:, :, p])
        r_el = topo.by_role("diode_r", d.role[1])
        if r_el is not None:
            pw = pw + rms(i_d[p]) ** 2 * c.value(r_el.name, "r")
        powers.append(pw)
    d_pow = np.max(powers, axis=0)
    windings = topo.of_kind("W")
    i_w = [solved.current(w.name) for w in windings]
    w_rms = np.max([rms(i) for i in i_w], axis=0)
    w_pow = np.sum([rms(i) ** 2 * c.value(w.name, "r") for i, w in zip(i_w, windings,
                                                                       strict=True)], axis=0)
    st = solved.steady
    out = []
    for b in range(B):
        wf = None
        if waveforms:
            wf = Waveforms(
                t_s=solved.t_s[:, b],
                rail_v={n: solved.node_v(node)[:, b]
                        for n, node in zip(topo.rail_names, topo.rail_nodes, strict=True)},
                anode_a=[i[:, b] for i in i_d],
                winding_a=[i[:, b] for i in i_w],
            )
        out.append(Figures(
            case=case.name, rails=rails[b],
            rectifier=RectifierFigures(float(d_peak[b]), float(d_rms[b]), float(d_avg[b]),
                                       float(d_pow[b])),
            transformer=TransformerFigures(float(w_rms[b]), float(w_pow[b])),
            converged=bool(st.converged[b]), iterations=int(st.iterations[b]),
            residual=float(st.residual[b]), waveforms=wf))
    return out


def evaluate(designs: Sequence[Design], case: OperatingCase = NOMINAL, *,
             steps: int = STEPS_PER_PERIOD, waveforms: bool = False) -> list[Figures]:
    """Figures of every design in one operating case, in the order given.

    Parameters
    ----------
    designs : sequence of Design
        Complete designs, of any mix of topologies.
    case : OperatingCase
        Mains factor and load (default: nominal mains, full-signal load).
    steps : int
        Time steps per mains period of the steady-state solver.
    waveforms : bool
        Keep the sampled waveforms of the period in each result.
    """
    result: list[Figures | None] = [None] * len(designs)
    for idx, solved in solve(designs, case, steps):
        for i, fig in zip(idx, figures_of(solved, case, waveforms), strict=True):
            result[i] = fig
    return result  # type: ignore[return-value]


def regulation_pct(full: Figures, idle: Figures) -> list[float]:
    """DC change per rail from idle to full-signal current, in % of the full-signal DC."""
    return [100.0 * (ri.dc_v - rf.dc_v) / rf.dc_v if rf.dc_v else float("nan")
            for rf, ri in zip(full.rails, idle.rails, strict=True)]
