"""Operating cases to figures: the evaluator's public face.

``evaluate(designs, case)`` groups the designs by topology, solves each group's
periodic steady state as one batch, and turns the sampled period into
:class:`~supplydesign.evaluation.figures.Figures`.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from ..circuit import formulas
from ..circuit.netlist import GROUND, NOMINAL, Circuit, OperatingCase, build, solving_groups
from ..circuit.statespace import build_state_space
from ..circuit.steady import STEPS_PER_PERIOD, SteadyState, periodic_steady_states
from ..design import Design
from .figures import Figures, RailFigures, RectifierFigures, TransformerFigures, Waveforms

IDLE = OperatingCase("idle", 1.0, "idle")


@dataclass
class Solved:
    """A solved batch and the means to read any node voltage or element current from it."""

    circuit: Circuit
    steady: SteadyState

    def __post_init__(self):
        st = self.steady
        # each state's and junction current's waveform contiguous: (B, nx, K+1), (B, P, K+1)
        # (the solver records them so; a choke input's period, put back in phase order, is
        # copied here)
        self._xk = np.ascontiguousarray(st.x.transpose(1, 2, 0))
        self._uk = np.ascontiguousarray(st.u.transpose(1, 2, 0))
        self._rows: dict = {}  # waveforms worked out so far, (K+1, B) each

    @property
    def _samples(self) -> tuple[int, int]:
        """(K+1, B): the shape of one waveform of the batch."""
        return (self._xk.shape[2], self._xk.shape[0])

    def _row(self, key: str, X: np.ndarray, S: np.ndarray, U: np.ndarray,
             row: int) -> np.ndarray:
        """Row ``row`` of X x + S s + U u over the period, (K+1, B), worked out once: a
        state itself where the row picks one state alone (a node holding capacitance,
        an inductor current), else from every state, the mains and the junctions."""
        if (key, row) not in self._rows:
            xr, sr, ur = X[:, row], S[:, row], U[:, row]
            nz = np.flatnonzero(np.any(xr != 0.0, axis=0))
            if (nz.size == 1 and np.all(xr[:, nz[0]] == 1.0) and not np.any(sr)
                    and not np.any(ur)):
                out = self._xk[:, nz[0]]
            else:
                out = ((xr[:, None, :] @ self._xk)[:, 0] + sr @ self.steady.s.T
                       + (ur[:, None, :] @ self._uk)[:, 0])
            self._rows[key, row] = out.T
        return self._rows[key, row]

    @property
    def t_s(self) -> np.ndarray:
        """Sample instants of design 0's period [s] (each design has its own frequency)."""
        k = np.arange(self.steady.steps + 1)
        return k[:, None] / (self.steady.steps * self.circuit.frequency_hz[None, :])

    def node_v(self, node: str) -> np.ndarray:
        """Voltage of ``node`` against ground over the period [V], shape (K+1, B)."""
        if node == GROUND:
            return np.zeros(self._samples)
        ss = self.steady.ss
        return self._row("xi", ss.Rx, ss.Rs, ss.Ru, ss.node_index[node])

    def _node_dvdt(self, node: str) -> np.ndarray:
        if node == GROUND:
            return np.zeros(self._samples)
        ss = self.steady.ss
        row = ss.Rx[0, ss.node_index[node]]
        col = np.flatnonzero(row)
        if len(col) != 1 or np.any(ss.Ru[:, ss.node_index[node]] != 0):
            raise ValueError(f"node {node} holds no capacitance")
        return self._row("dx", ss.A, ss.Bs, ss.Bu, col[0])

    def current(self, name: str) -> np.ndarray:
        """Current through element ``name`` from its node a to its node b [A], (K+1, B)."""
        c = self.circuit
        e = next(x for x in c.topology.elements if x.name == name)
        if e.kind == "R":
            return (self.node_v(e.a) - self.node_v(e.b)) / c.value(name, "r")[None, :]
        if e.kind == "L":
            ss = self.steady.ss
            return self._row("xi", ss.Rx, ss.Rs, ss.Ru, ss.inductor_index[name])
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
            return np.broadcast_to(c.value(name, "i")[None, :], self._samples)
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
    """Solve the designs' steady state, one batch per topology: [(indices, Solved)].

    ``steps`` per mains period at least; designs with a fast charging loop get more
    (:func:`~supplydesign.circuit.netlist.steps_needed`) and a batch of their own.
    """
    groups = solving_groups(designs, steps)
    circuits = [build([designs[i] for i in idx], case) for idx, _ in groups]
    steadies = periodic_steady_states([build_state_space(c) for c in circuits],
                                      [n for _, n in groups])
    return [(idx, Solved(c, st))
            for (idx, _), c, st in zip(groups, circuits, steadies, strict=True)]


@dataclass
class FigureArrays:
    """The figures of a solved batch as arrays: rails (B, R), the rest (B,)."""

    dc_v: np.ndarray
    ripple_rms_v: np.ndarray
    ripple_pp_v: np.ndarray
    peak_v: np.ndarray
    load_a: np.ndarray
    link_dc_a: np.ndarray
    link_rms_a: np.ndarray
    link_power_w: np.ndarray
    cap_ripple_rms_a: np.ndarray  # NaN where a rail has no capacitor
    cap_power_w: np.ndarray
    rect_peak_a: np.ndarray
    rect_rms_a: np.ndarray
    rect_avg_a: np.ndarray
    rect_power_w: np.ndarray
    winding_rms_a: np.ndarray
    winding_power_w: np.ndarray
    converged: np.ndarray
    iterations: np.ndarray
    residual: np.ndarray


def figure_arrays(solved: Solved) -> FigureArrays:
    """Every figure of every design of a solved batch, computed on whole arrays."""
    c = solved.circuit
    topo = c.topology
    B = c.size
    R = len(topo.rail_nodes)
    cols = {k: np.zeros((B, R)) for k in (
        "dc_v", "ripple_rms_v", "ripple_pp_v", "peak_v", "load_a", "link_dc_a", "link_rms_a",
        "link_power_w")}
    cap_rms = np.full((B, R), np.nan)
    cap_p = np.full((B, R), np.nan)
    for i, node in enumerate(topo.rail_nodes):
        v = detrended(solved.node_v(node))
        cols["dc_v"][:, i] = mean(v)
        cols["ripple_rms_v"][:, i] = np.std(_period(v), axis=0)
        cols["ripple_pp_v"][:, i] = np.max(_period(v), axis=0) - np.min(_period(v), axis=0)
        cap = topo.by_role("cap", i)
        esr = topo.by_role("esr", i)
        cols["peak_v"][:, i] = peak(solved.node_v(cap.a) if cap is not None else v)
        cols["load_a"][:, i] = mean(solved.current(topo.by_role("load", i).name))
        link = topo.by_role("link", i)
        if link is not None:
            il = solved.current(link.name)
            cols["link_dc_a"][:, i] = mean(il)
            cols["link_rms_a"][:, i] = rms(il)
            cols["link_power_w"][:, i] = rms(il) ** 2 * c.value(link.name, "r")
        if cap is not None:
            ic = solved.current(cap.name)
            cap_rms[:, i] = np.std(_period(ic), axis=0)
            cap_p[:, i] = rms(ic) ** 2 * (c.value(esr.name, "r") if esr is not None else 0.0)
    diodes = topo.of_kind("D")
    i_d = [solved.current(d.name) for d in diodes]
    y = solved.steady.y
    powers = []
    for p, d in enumerate(diodes):
        pw = mean(i_d[p] * y[:, :, p])
        r_el = topo.by_role("diode_r", d.role[1])
        if r_el is not None:
            pw = pw + rms(i_d[p]) ** 2 * c.value(r_el.name, "r")
        powers.append(pw)
    windings = topo.of_kind("W")
    i_w = [solved.current(w.name) for w in windings]
    st = solved.steady
    return FigureArrays(
        **cols, cap_ripple_rms_a=cap_rms, cap_power_w=cap_p,
        rect_peak_a=np.max([peak(i) for i in i_d], axis=0),
        rect_rms_a=np.max([rms(i) for i in i_d], axis=0),
        rect_avg_a=np.max([mean(i) for i in i_d], axis=0),
        rect_power_w=np.max(powers, axis=0),
        winding_rms_a=np.max([rms(i) for i in i_w], axis=0),
        winding_power_w=np.sum([rms(i) ** 2 * c.value(w.name, "r")
                                for i, w in zip(i_w, windings, strict=True)], axis=0),
        # a rail at 0 V or below is no working steady state: the stages' constant currents
        # are drawn through the rectifier the wrong way round (see convergence_note)
        converged=st.converged & np.all(cols["dc_v"] > 0.0, axis=1),
        iterations=st.iterations, residual=st.residual)


def stack_rows(parts: list[tuple[np.ndarray, FigureArrays]], n: int) -> FigureArrays:
    """Scatter figure arrays of several batches, each with its row indices, into one."""
    first = parts[0][1]
    out = {}
    for name in first.__dataclass_fields__:
        ref = getattr(first, name)
        arr = np.zeros((n, *ref.shape[1:]), dtype=ref.dtype)
        for rows, fa in parts:
            arr[np.asarray(rows)] = getattr(fa, name)
        out[name] = arr
    return FigureArrays(**out)


def evaluate_arrays(designs: Sequence[Design], case: OperatingCase = NOMINAL, *,
                    steps: int = STEPS_PER_PERIOD) -> FigureArrays:
    """Figure arrays of designs of any topologies, rows in the order given."""
    parts = [(idx, figure_arrays(solved)) for idx, solved in solve(designs, case, steps)]
    return stack_rows(parts, len(designs))


def convergence_note(fa: FigureArrays, b: int, design: Design | None = None) -> str:
    """Why design ``b`` of a batch has no converged steady state ("" when it has one).

    With the design at hand, a stopped Newton shooting is followed by what in the
    circuit makes a steady state hard to reach (see :func:`settling_hint`).
    """
    if fa.converged[b]:
        return ""
    dc = fa.dc_v[b]
    if not np.all(np.isfinite(dc)) or not np.isfinite(fa.residual[b]):
        return "the solution diverged: no periodic steady state was found"
    if np.any(dc <= 0.0):
        low = int(np.argmin(dc))
        name = f"rail {design.rails[low].name!r}" if design is not None else "a rail"
        return (f"the supply cannot carry the stage currents: {name} falls to {dc[low]:.3g} V, "
                f"where no stage has a working point")
    note = (f"Newton shooting stopped after {int(fa.iterations[b])} iterations at a residual "
            f"of {fa.residual[b]:.1e}")
    hint = settling_hint(design, fa.dc_v[b], fa.link_dc_a[b]) if design is not None else ""
    return f"{note}; {hint}" if hint else note


#: Q of an LC section above which its ringing is named as a cause of slow settling
RINGING_Q = 3.0


def settling_hint(design: Design, dc_v: np.ndarray, link_dc_a: np.ndarray) -> str:
    """What in ``design`` keeps its supply from settling to one repeating mains cycle.

    Two circumstances account for nearly every design the shooting cannot settle
    (benchmarks/robustness.py): a choke input below its critical inductance at the
    load it carries, whose rectifier then conducts in bursts (the choke current
    falls to zero every cycle; Wikipedia, "Ripple (electrical)", L_c = R_L/3ω),
    and an LC section with little damping (Q from :func:`formulas.lc_section`),
    whose slow ringing the rectifier keeps exciting, be it a choke with its own
    capacitor or with a small capacitor before it. ``dc_v`` and ``link_dc_a``
    are the rail DC voltages [V] and link currents [A] of the best cycle found.
    Returns "" when neither applies.
    """
    hints = []
    first = design.rails[0]
    if first.link.kind == "choke" and link_dc_a[0] > 0.0 and dc_v[0] > 0.0:
        lc = float(formulas.critical_inductance_h(dc_v[0] / link_dc_a[0],
                                                  design.mains.frequency_hz,
                                                  design.rectifier.arrangement))
        if first.link.inductance_h < lc:
            hints.append(f"the choke input is below its critical inductance "
                         f"({first.link.inductance_h:.3g} H against {lc:.3g} H at "
                         f"{1e3 * link_dc_a[0]:.3g} mA): the rectifier conducts in bursts and "
                         f"the supply need not repeat every mains cycle; a bleeder or a "
                         f"larger choke restores continuous conduction")
    for i, r in enumerate(design.rails):
        if r.link.kind != "choke" or r.capacitor is None:
            continue
        r_load = dc_v[i] / link_dc_a[i] if link_dc_a[i] > 0.0 else np.inf
        f0, q = formulas.lc_section(r.link.inductance_h, r.capacitor.capacitance_f,
                                    r.link.resistance_ohm + r.capacitor.esr_ohm, r_load)
        if q > RINGING_Q:
            hints.append(f"rail {r.name!r} is an LC section that rings (f0 {float(f0):.3g} Hz, "
                         f"Q {float(q):.2g}) and settles slowly")
        # the choke also rings with the capacitor before it, which no load damps
        parent = design.rails[design.rail_index(r.parent)] if r.parent is not None else None
        if parent is not None and parent.capacitor is not None:
            f0, q = formulas.lc_section(r.link.inductance_h, parent.capacitor.capacitance_f,
                                        r.link.resistance_ohm + parent.capacitor.esr_ohm)
            if q > RINGING_Q:
                hints.append(f"the choke of rail {r.name!r} rings with the capacitor of rail "
                             f"{parent.name!r} (f0 {float(f0):.3g} Hz, Q {float(q):.2g})")
    return "; ".join(hints)


def figures_of(solved: Solved, case: OperatingCase = NOMINAL,
               waveforms: bool = False) -> list[Figures]:
    """Figures of every design of a solved batch, as dataclasses."""
    return figures_from_arrays(figure_arrays(solved), solved.circuit.designs,
                               solved.circuit.topology.rail_names, case.name,
                               solved if waveforms else None)


def figures_from_arrays(fa: FigureArrays, designs: Sequence[Design], rail_names: Sequence[str],
                        case_name: str, solved: Solved | None = None) -> list[Figures]:
    """:class:`Figures` of each design (row of ``fa``) with the rails named; the
    waveforms of the period when the solved batch is given."""
    out = []
    for b in range(len(designs)):
        rails = []
        for i, name in enumerate(rail_names):
            has_cap = not np.isnan(fa.cap_ripple_rms_a[b, i])
            rails.append(RailFigures(
                name=name, dc_v=float(fa.dc_v[b, i]), ripple_rms_v=float(fa.ripple_rms_v[b, i]),
                ripple_pp_v=float(fa.ripple_pp_v[b, i]), peak_v=float(fa.peak_v[b, i]),
                load_a=float(fa.load_a[b, i]), link_dc_a=float(fa.link_dc_a[b, i]),
                link_power_w=float(fa.link_power_w[b, i]),
                link_rms_a=float(fa.link_rms_a[b, i]),
                cap_ripple_rms_a=float(fa.cap_ripple_rms_a[b, i]) if has_cap else None,
                cap_power_w=float(fa.cap_power_w[b, i]) if has_cap else None))
        wf = None
        if solved is not None:
            topo = solved.circuit.topology
            wf = Waveforms(
                t_s=solved.t_s[:, b],
                rail_v={n: solved.node_v(node)[:, b]
                        for n, node in zip(topo.rail_names, topo.rail_nodes, strict=True)},
                anode_a=[solved.current(d.name)[:, b] for d in topo.of_kind("D")],
                winding_a=[solved.current(w.name)[:, b] for w in topo.of_kind("W")],
            )
        out.append(Figures(
            case=case_name, rails=rails,
            rectifier=RectifierFigures(float(fa.rect_peak_a[b]), float(fa.rect_rms_a[b]),
                                       float(fa.rect_avg_a[b]), float(fa.rect_power_w[b])),
            transformer=TransformerFigures(float(fa.winding_rms_a[b]),
                                           float(fa.winding_power_w[b])),
            converged=bool(fa.converged[b]), iterations=int(fa.iterations[b]),
            residual=float(fa.residual[b]), note=convergence_note(fa, b, designs[b]),
            waveforms=wf))
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
