"""The filter alone, as a linear network: output impedance and discharge after switch-off.

Both analyses keep the filter of the element netlist (links, capacitors with
their ESR, bleeders, resistive loads, the stray node capacitances) and replace
what lies before the rectifier output:

- **Output impedance** (small-signal AC): the rectifier and winding become an
  ideal voltage source behind ``source_ohm``, the rectifier's DC output
  resistance (the slope of its output voltage against its load current, from
  two steady states). Constant-current stages are open circuits (their current
  does not depend on the voltage); resistive stages and bleeders stay. The
  averaged source is a fair model well below the mains frequency, where LC
  sections resonate; above it the rectifier conducts in pulses and the
  reservoir capacitor dominates anyway.
- **Discharge**: the mains is off and the valves are cold; the rectifier no
  longer conducts (its junctions are reverse-biased), so every capacitor
  discharges through bleeders and whatever resistive path the filter offers.

References
----------
.. [1] C.-W. Ho, A. E. Ruehli, P. A. Brennan, "The modified nodal approach to
   network analysis", IEEE Trans. Circuits Syst. 22(6), 504-509 (1975).
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np
from scipy.linalg import expm

from .formulas import SAFE_VOLTAGE_V
from .netlist import GROUND, NODE_CAPACITANCE, Circuit, Element, Topology
from .statespace import _stamp, build_state_space

#: element roles of the filter (everything after the rectifier output)
FILTER_ROLES = ("link", "choke_damping", "cap", "esr", "load", "bleeder", "node_c")
#: frequencies of the output impedance [Hz]: 1 Hz to 20 kHz, 20 per decade
IMPEDANCE_HZ = np.logspace(0.0, np.log10(20e3), 87)
#: longest discharge time looked at [s]; beyond it a capacitor "holds its charge"
DISCHARGE_HORIZON_S = 1e4


def filter_elements(topo: Topology) -> list[Element]:
    """The elements of the filter: links, capacitors, ESR, loads, bleeders and the
    stray capacitances of filter nodes."""
    core = [e for e in topo.elements if e.role and e.role[0] in FILTER_ROLES[:-1]]
    nodes = {n for e in core for n in (e.a, e.b)} | {topo.rectifier_node}
    return core + [e for e in topo.elements
                   if e.role and e.role[0] == "node_c" and e.a in nodes]


def output_impedance(circuit: Circuit, source_ohm: np.ndarray,
                     freqs_hz: np.ndarray = IMPEDANCE_HZ) -> np.ndarray:
    """|Z| seen at every rail against frequency (see module docstring).

    Parameters
    ----------
    circuit : Circuit
        A batch of B designs (its loads as built: use the case whose resistive
        loads apply).
    source_ohm : (B,) array
        DC output resistance of the rectifier and winding [ohm].
    freqs_hz : (F,) array
        Frequencies [Hz].

    Returns
    -------
    numpy.ndarray
        Complex output impedance, shape (B, R, F) [ohm].
    """
    topo = circuit.topology
    elements = filter_elements(topo)
    nodes = sorted({n for e in elements for n in (e.a, e.b) if n != GROUND}
                   | {topo.rectifier_node}, key=topo.nodes.index)
    idx = {n: i for i, n in enumerate(nodes)}
    B, F, N = circuit.size, len(freqs_hz), len(nodes)
    jw = 2j * np.pi * np.asarray(freqs_hz)[None, :]
    Y = np.zeros((B * F, N, N), dtype=complex)

    def stamp(a: str, b: str, y: np.ndarray) -> None:  # y (B, F)
        _stamp(Y, idx, a, b, y.reshape(B * F))

    for e in elements:
        if e.kind == "R":
            stamp(e.a, e.b, np.broadcast_to(1.0 / circuit.value(e.name, "r")[:, None], (B, F)))
        elif e.kind == "C":
            stamp(e.a, e.b, circuit.value(e.name, "c")[:, None] * jw)
        elif e.kind == "L":
            z = circuit.value(e.name, "r")[:, None] + circuit.value(e.name, "l")[:, None] * jw
            stamp(e.a, e.b, 1.0 / z)
    stamp(topo.rectifier_node, GROUND,
          np.broadcast_to(1.0 / np.asarray(source_ohm, dtype=float)[:, None], (B, F)))
    rails = [idx[n] for n in topo.rail_nodes]
    inject = np.zeros((N, len(rails)))
    inject[rails, np.arange(len(rails))] = 1.0
    V = np.linalg.solve(Y, np.broadcast_to(inject, (B * F, N, len(rails))))
    Z = V[:, rails, np.arange(len(rails))]  # (B*F, R)
    return Z.reshape(B, F, len(rails)).transpose(0, 2, 1)


def filter_circuit(circuit: Circuit) -> Circuit:
    """The filter of ``circuit`` alone (no winding, no rectifier), loads as built."""
    topo = circuit.topology
    elements = filter_elements(topo)
    names = {e.name for e in elements}
    values = {n: v for n, v in circuit.values.items() if n in names}
    rect = topo.rectifier_node
    if not any(e.kind == "C" and rect in (e.a, e.b) for e in elements):
        # a choke input whose junction capacitances held the node: the netlist's stray one
        extra = Element("C", f"cp_{rect}", rect, GROUND, ("node_c", rect))
        elements.append(extra)
        values[extra.name] = {"c": np.full(circuit.size, NODE_CAPACITANCE)}
    nodes = tuple(n for n in topo.nodes if any(n in (e.a, e.b) for e in elements))
    sub = replace(topo, elements=tuple(elements), nodes=nodes)
    return Circuit(sub, values, circuit.frequency_hz, circuit.designs)


def discharge_times(circuit: Circuit, node_v0: dict[str, np.ndarray],
                    v_safe: float = SAFE_VOLTAGE_V,
                    horizon_s: float = DISCHARGE_HORIZON_S) -> np.ndarray:
    """Time for each rail's capacitor to fall for good below ``v_safe`` after switch-off.

    The filter network (cold: the circuit should be built with no load) starts
    from the node voltages ``node_v0`` (capacitor nodes; chokes without current)
    and evolves as x(t) = exp(A t) x0. The time is the last instant the
    capacitor's voltage magnitude exceeds ``v_safe``: found on a logarithmic grid
    from 1 ms to ``horizon_s`` and refined by bisection.

    Returns
    -------
    numpy.ndarray
        Shape (B, R) [s]; 0 where it starts below ``v_safe``, ``inf`` where it is
        still above after ``horizon_s`` (no discharge path), NaN for a rail
        without a capacitor.
    """
    topo = circuit.topology
    fc = filter_circuit(circuit)
    ss = build_state_space(fc)
    B, nx = circuit.size, ss.nx
    x0 = np.zeros((B, nx))
    for node, row in ss.node_index.items():
        col = np.flatnonzero(ss.Rx[0, row])
        if len(col) == 1 and ss.Rx[0, row, col[0]] == 1.0 and node in node_v0:
            x0[:, col[0]] = node_v0[node]
    caps = []
    for i in range(len(topo.rail_nodes)):
        cap = topo.by_role("cap", i)
        caps.append(None if cap is None else ss.Rx[:, ss.node_index[cap.a]])  # (B, nx)

    volts = _modal_response(ss.A, x0, caps)
    grid = np.concatenate([[0.0], np.logspace(-3, np.log10(horizon_s), 141)])
    above = np.stack([np.abs(volts(np.full(B, t))) > v_safe for t in grid])  # (G, B, R)
    out = np.zeros((B, len(caps)))
    for r, c in enumerate(caps):
        if c is None:
            out[:, r] = np.nan
            continue
        any_above = above[:, :, r].any(axis=0)
        last = len(grid) - 1 - np.argmax(above[::-1, :, r], axis=0)  # last index above
        still = above[-1, :, r]
        lo = grid[last]
        hi = grid[np.minimum(last + 1, len(grid) - 1)]
        for _ in range(40):
            mid = 0.5 * (lo + hi)
            up = np.abs(volts(mid)[:, r]) > v_safe
            lo, hi = np.where(up, mid, lo), np.where(up, hi, mid)
        out[:, r] = np.where(still, np.inf, np.where(any_above, hi, 0.0))
    return out


def _modal_response(A: np.ndarray, x0: np.ndarray, rows: list):
    """A function t (B,) -> (B, R) giving rows . exp(A t) x0, by the eigenvectors of A.

    Designs whose eigenvector matrix is ill-conditioned (a defective A, such as
    an LC section at exactly critical damping) use the matrix exponential.
    """
    B = A.shape[0]
    w, V = np.linalg.eig(A)
    bad = np.linalg.cond(V) > 1e8
    safe = np.where(bad[:, None, None], np.eye(A.shape[1]), V)
    coef = np.linalg.solve(safe, x0[..., None] + 0j)[..., 0]
    proj = np.stack([np.zeros((B, A.shape[1]), dtype=complex) if r is None
                     else np.einsum("bi,bik->bk", r, V) for r in rows], axis=1)  # (B, R, n)

    def volts(t: np.ndarray) -> np.ndarray:
        modes = coef * np.exp(w * t[:, None])  # (B, n)
        out = np.einsum("brk,bk->br", proj, modes).real
        if np.any(bad):
            x = (expm(A[bad] * t[bad, None, None]) @ x0[bad, :, None])[..., 0]
            out[bad] = np.stack([np.zeros(x.shape[0]) if r is None
                                 else np.einsum("bi,bi->b", r[bad], x) for r in rows], axis=1)
        return out

    return volts
