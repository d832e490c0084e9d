"""Worst cases of whole batches of designs: mains limits, switch-on, resonance, discharge.

:func:`analyse` runs, for designs of any topologies, the operating cases of
:mod:`supplydesign.evaluation.cases`, the switch-on transient of
:mod:`supplydesign.circuit.transient` (high mains, valves cold, at the crest),
the small-signal output impedance and the discharge after switch-off of
:mod:`supplydesign.circuit.smallsignal`, and the closed-form checks of the choke
sections (:mod:`supplydesign.circuit.formulas`). Everything is an array over the
designs (B,) or designs and rails (B, R) (R the largest rail count; NaN beyond a
design's own rails).

Warm-up: a design may give ``[rectifier] warm_up`` (time until the rectifier
conducts) and per rail ``warm_up`` (time until that stage draws). The contract's
switch-on run keeps every stage cold throughout; when a rail gives ``warm_up``,
a second run (``warm``) switches every stage on at its time (at once where a
rail gives none), drawing its idle current, with the mains still high.

Caution: these are a model's figures. They do not make a design safe; stored
charge, isolation and fusing follow local codes and licensed practice.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field, replace

import numpy as np

from ..circuit import formulas
from ..circuit.netlist import group_by_topology
from ..circuit.smallsignal import IMPEDANCE_HZ, discharge_times, output_impedance
from ..circuit.steady import STEPS_PER_PERIOD
from ..circuit.transient import phase_circuits, settle_time_estimate, switch_on_batches
from ..design import Design
from .cases import (
    HIGH_MAINS_FULL_LOAD,
    HIGH_MAINS_IDLE,
    HIGH_MAINS_NO_LOAD,
    IDLE,
    LOW_MAINS_FULL_LOAD,
    NOMINAL,
    Case,
    CaseResult,
    case_circuit,
    node_dc,
    solve_case,
    solve_cases,
)

#: longest switch-on run [s] after the last warm-up
MAX_SWITCH_ON_S = 30.0
#: load step of the rectifier source-resistance estimate (fraction of every load)
LOAD_STEP = 0.1
#: nominal mains, every stage drawing LOAD_STEP less than full (see _less_load)
LESS_LOAD = Case("nominal_less_load", "nominal", "full")


@dataclass
class SwitchOnArrays:
    """Switch-on figures of all designs (see :class:`transient.SwitchOn`); NaN where not run."""

    peak_v: np.ndarray  # (B, R) highest capacitor voltage, run and steady tail together
    peak_t_s: np.ndarray  # (B, R)
    t90_s: np.ndarray  # (B, R)
    final_v: np.ndarray  # (B, R) the steady DC the rails rise to
    last_v: np.ndarray  # (B, R) mean rail voltage over the last period run
    surge_a: np.ndarray  # (B,)
    surge_t_s: np.ndarray  # (B,)
    i2t_a2s: np.ndarray  # (B,) I^2 t of the rectifier output current over the run
    settled: np.ndarray  # (B,)
    end_s: np.ndarray  # (B,)


@dataclass
class WorstCases:
    designs: tuple[Design, ...]
    cases: dict[str, CaseResult]  # nominal, idle and the three worst cases
    switch_on: SwitchOnArrays  # high mains, every stage cold
    warm: SwitchOnArrays | None  # stages on at their warm-up times (designs giving them)
    source_ohm: np.ndarray  # (B,) rectifier DC output resistance at nominal full load
    impedance_hz: np.ndarray  # (F,)
    impedance_ohm: np.ndarray  # (B, R, F) |Z| at each rail
    lc_f0_hz: np.ndarray  # (B, R) per choke link, NaN elsewhere
    lc_q: np.ndarray  # (B, R)
    choke_input: dict[str, np.ndarray]  # (B,) arrays, NaN where not a choke input
    discharge_v0: np.ndarray  # (B, R) capacitor voltage at switch-off (high mains, cold)
    discharge_s: np.ndarray  # (B, R) time to fall below SAFE_VOLTAGE_V
    bleeder: dict[str, np.ndarray]  # suggestion: ohm, power_w, nominal_power_w, worst_s (B,)
    # per topology group (design indices, SwitchOn with its record) when analysed with record
    cold_runs: list | None = None
    # what is worked out from these figures for the whole batch once (stress.capacitor_stress)
    derived: dict = field(default_factory=dict, repr=False, compare=False)


def _rails(designs: Sequence[Design]) -> int:
    return max(len(d.rails) for d in designs)


def _blank(designs, *extra) -> np.ndarray:
    return np.full((len(designs), _rails(designs), *extra), np.nan)


def _scatter(into: np.ndarray, idx, values: np.ndarray) -> None:
    values = np.asarray(values)
    if into.ndim == 1:
        into[np.asarray(idx)] = values
    else:
        into[np.asarray(idx), : values.shape[1]] = values


def _switch_on_runs(designs, final_v, tail_peak_v, make_phases, delay_s, t_extra_s,
                    record: bool = False):
    """Switch-on runs for ``designs`` grouped by topology, rising to ``final_v`` and
    reaching ``tail_peak_v`` in the steady state after the run ((B, R) each).
    Returns the arrays and, per group, (indices, SwitchOn)."""
    out = SwitchOnArrays(*(_blank(designs) for _ in range(5)),
                         *(np.full(len(designs), np.nan) for _ in range(5)))
    # the topologies of one junction law and rectifier arrangement run as one batch
    kinds: dict[tuple, list] = {}
    for idx in group_by_topology(designs):
        sub = [designs[i] for i in idx]
        phases, warm_at = make_phases(sub)
        t_max = np.array([settle_time_estimate(phases[0], b) for b in range(len(sub))])
        t_max = np.minimum(t_max, MAX_SWITCH_ON_S) + t_extra_s[idx]
        kind = (sub[0].rectifier.kind, sub[0].rectifier.arrangement)
        kinds.setdefault(kind, []).append((idx, phases, warm_at, t_max))
    runs = []
    for members in kinds.values():
        every = np.concatenate([np.asarray(m[0]) for m in members])
        R = max(len(designs[m[0][0]].rails) for m in members)
        fv = np.zeros((every.size, R))
        warm = np.full((every.size, R), np.inf)
        row = 0
        for idx, _phases, warm_at, _t in members:
            n, r = len(idx), len(designs[idx[0]].rails)
            fv[row:row + n, :r] = final_v[idx, :r]
            if warm_at is not None:
                warm[row:row + n, :r] = warm_at
            row += n
        parts = switch_on_batches([m[1] for m in members], warm, final_v=fv,
                                  t_max_s=np.concatenate([m[3] for m in members]),
                                  delay_s=delay_s[every], record=record)
        for (idx, *_rest), run in zip(members, parts, strict=True):
            runs.append((idx, run))
            n_rails = len(designs[idx[0]].rails)
            # the steady state covers the tail beyond the run
            peak = np.fmax(run.peak_v, tail_peak_v[idx, :n_rails])
            for name, val in (("peak_v", peak), ("peak_t_s", run.peak_t_s),
                              ("t90_s", run.t90_s), ("final_v", final_v[idx, :n_rails]),
                              ("last_v", run.last_v), ("surge_a", run.surge_a),
                              ("surge_t_s", run.surge_t_s), ("i2t_a2s", run.i2t_a2s),
                              ("settled", run.settled), ("end_s", run.end_s)):
                _scatter(getattr(out, name), idx, val)
    return out, runs


def _crest(designs) -> np.ndarray:
    """Crest of the open-circuit voltage at high mains [V], (B,)."""
    return np.array([np.sqrt(2.0) * d.transformer.open_circuit_v * (1.0 + d.mains.high)
                     for d in designs])


def _delays(designs) -> np.ndarray:
    return np.array([d.rectifier.warm_up_s or 0.0 for d in designs])


def _warm_at(designs, delay) -> np.ndarray:
    """When each rail's stage draws, from the start of conduction [s]: (B, R)."""
    at = np.full((len(designs), _rails(designs)), np.inf)
    for b, d in enumerate(designs):
        for i, r in enumerate(d.rails):
            at[b, i] = max((r.warm_up_s or 0.0) - delay[b], 0.0)
    return at


def _less_load(case, circuit) -> None:
    """Every stage of ``LESS_LOAD`` draws LOAD_STEP less than at full load."""
    if case is not LESS_LOAD:
        return
    for e in circuit.topology.elements:
        if e.role and e.role[0] == "load":
            if e.kind == "J":
                circuit.values[e.name]["i"] = circuit.values[e.name]["i"] * (1.0 - LOAD_STEP)
            else:
                circuit.values[e.name]["r"] = circuit.values[e.name]["r"] / (1.0 - LOAD_STEP)


def _source_resistance(designs, full: CaseResult, less: CaseResult) -> np.ndarray:
    """The rectifier's DC output resistance: its output voltage change over its current
    change when every stage draws LOAD_STEP less than at full load [ohm], (B,)."""
    idx = list(range(len(designs)))

    def rect(t):
        return t.rectifier_node

    dv = node_dc(less, rect) - node_dc(full, rect)
    di = (_drawn(designs, idx, full.arrays.load_a, full.arrays.dc_v)
          - _drawn(designs, idx, less.arrays.load_a, less.arrays.dc_v))
    r_wind = np.array([d.transformer.resistance_ohm for d in designs])
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.maximum(np.where(di > 0, dv / di, r_wind), 1e-3)


def _drawn(designs, idx, load_a, dc_v) -> np.ndarray:
    """Total DC current out of the rectifier: stages plus bleeders [A], (len(idx),)."""
    total = np.nansum(load_a, axis=1)
    for row, i in enumerate(idx):
        for r, rail in enumerate(designs[i].rails):
            if rail.bleeder_ohm is not None:
                total[row] += dc_v[row, r] / rail.bleeder_ohm
    return total


def _subtree(design: Design, i: int) -> list[int]:
    """Rail i and every rail hanging below it."""
    out = [i]
    for j in range(i + 1, len(design.rails)):
        if design.parent_index(j) in out:
            out.append(j)
    return out


def signal_dependent(design: Design, i: int) -> bool:
    """Whether a stage at or below rail i draws a current that changes with the signal."""
    return any(design.rails[j].current_a != design.rails[j].idle_a for j in _subtree(design, i))


def _lc_sections(designs):
    f0, q = _blank(designs), _blank(designs)
    for b, d in enumerate(designs):
        for i, r in enumerate(d.rails):
            if r.link.kind != "choke" or r.capacitor is None:
                continue
            loads = [x for x in (r.bleeder_ohm, r.load_resistance_ohm) if x is not None]
            r_load = 1.0 / sum(1.0 / x for x in loads) if loads else np.inf
            f0[b, i], q[b, i] = formulas.lc_section(
                r.link.inductance_h, r.capacitor.capacitance_f,
                r.link.resistance_ohm + r.capacitor.esr_ohm, r_load)
    return f0, q


def _choke_input(designs, idle: CaseResult, cold: CaseResult) -> dict[str, np.ndarray]:
    keys = ("inductance_h", "critical_idle_h", "critical_cold_h", "idle_current_a",
            "cold_current_a", "min_current_a", "max_bleeder_ohm", "bleeder_power_w")
    out = {k: np.full(len(designs), np.nan) for k in keys}
    for b, d in enumerate(designs):
        link = d.rails[0].link
        if link.kind != "choke":
            continue
        f, arr = d.mains.frequency_hz, d.rectifier.arrangement
        i_idle, i_cold = idle.arrays.link_dc_a[b, 0], cold.arrays.link_dc_a[b, 0]
        with np.errstate(divide="ignore"):
            r_idle = idle.arrays.dc_v[b, 0] / i_idle if i_idle > 0 else np.inf
            r_cold = cold.arrays.dc_v[b, 0] / i_cold if i_cold > 1e-6 else np.inf
        v_ci = formulas.choke_input_dc_v(d.transformer.open_circuit_v)
        i_min = formulas.min_conduction_current_a(v_ci, link.inductance_h, f, arr)
        v_high = v_ci * (1.0 + d.mains.high)
        out["inductance_h"][b] = link.inductance_h
        out["critical_idle_h"][b] = formulas.critical_inductance_h(r_idle, f, arr)
        out["critical_cold_h"][b] = formulas.critical_inductance_h(r_cold, f, arr)
        out["idle_current_a"][b], out["cold_current_a"][b] = i_idle, i_cold
        out["min_current_a"][b] = i_min
        out["max_bleeder_ohm"][b] = v_ci / i_min
        out["bleeder_power_w"][b] = v_high ** 2 / (v_ci / i_min)
    return out


def _discharge(designs, cold: CaseResult):
    """Capacitor voltages at switch-off (high mains, cold) and the times to
    SAFE_VOLTAGE_V, (B, R) each, and every design's node voltages {node: V}."""
    v0, times = _blank(designs), _blank(designs)
    starts: list[dict] = [{} for _ in designs]
    for batch in cold.batches:
        idx, circuit = batch.idx, batch.circuit
        topo = circuit.topology
        start = {n: batch.node_v(n)[0] for n in topo.nodes}
        _scatter(times, idx, discharge_times(circuit, start))
        for i, cap in enumerate(topo.by_role("cap", i) for i in range(len(topo.rail_nodes))):
            if cap is not None:
                v0[np.asarray(idx), i] = start[cap.a]
        for row, b in enumerate(idx):
            starts[b] = {n: v[row] for n, v in start.items()}
    return v0, times, starts


def _bleeder_suggestion(designs, v0, times, starts, nominal: CaseResult):
    """A reservoir bleeder where a design has none or discharges too slowly: the
    E12 value below R = t / (C_total ln(V0 / 60 V)), and the discharge times with it."""
    from ..parts.eseries import next_down

    B = len(designs)
    out = {k: np.full(B, np.nan) for k in ("ohm", "power_w", "nominal_power_w", "worst_s")}
    need = [b for b, d in enumerate(designs)
            if all(r.bleeder_ohm is None for r in d.rails)
            or np.nanmax(times[b]) > formulas.DISCHARGE_TARGET_S]
    if not need:
        return out
    c_total = np.array([sum(r.capacitor.capacitance_f for r in designs[b].rails
                            if r.capacitor is not None) for b in need])
    v_top = np.nanmax(v0[need], axis=1)
    ohm = np.atleast_1d(next_down("E12", formulas.max_bleeder_ohm(
        formulas.DISCHARGE_TARGET_S, c_total, v_top)))
    trial = []
    for b, r_new in zip(need, ohm, strict=True):
        first = designs[b].rails[0]
        keep = first.bleeder_ohm if first.bleeder_ohm is not None else np.inf
        rails = (replace(first, bleeder_ohm=float(min(keep, r_new))), *designs[b].rails[1:])
        trial.append(designs[b].with_rails(rails))
    worst = np.zeros(len(need))
    for grp in group_by_topology(trial):
        circuit = case_circuit([trial[g] for g in grp], HIGH_MAINS_NO_LOAD)
        start = {n: np.array([starts[need[g]][n] for g in grp]) for n in circuit.topology.nodes}
        worst[grp] = np.nanmax(discharge_times(circuit, start), axis=1)
    out["ohm"][need] = ohm
    out["power_w"][need] = v_top ** 2 / ohm
    out["nominal_power_w"][need] = nominal.arrays.dc_v[need, 0] ** 2 / ohm
    out["worst_s"][need] = worst
    return out


def analyse(designs: Sequence[Design], steps: int = STEPS_PER_PERIOD,
            record: bool = False) -> WorstCases:
    """Every worst-case figure of ``designs`` (see module docstring).

    ``record`` keeps the time series of the contract's switch-on run (for pictures) in
    ``WorstCases.cold_runs``."""
    designs = tuple(designs)
    B = len(designs)
    cases = solve_cases(designs, (NOMINAL, IDLE, HIGH_MAINS_IDLE, LOW_MAINS_FULL_LOAD, LESS_LOAD,
                                  HIGH_MAINS_FULL_LOAD), steps, adjust=_less_load)
    less = cases.pop(LESS_LOAD.name)
    cold = solve_case(designs, HIGH_MAINS_NO_LOAD, steps)
    delay = _delays(designs)

    def cold_phases(sub):
        return [case_circuit(sub, HIGH_MAINS_NO_LOAD)], None

    # Without load and bleeder every capacitor ends at the crest of the emf (the drop of
    # a junction at vanishing current is negligible). Where the no-load steady state has
    # not converged, that bounds its figures; with a bleeder, the end of the switch-on run.
    bad = ~cold.arrays.converged
    loose = bad & np.array([all(r.bleeder_ohm is None for r in d.rails) for d in designs])
    crest = np.where(np.isnan(cold.arrays.dc_v), np.nan, _crest(designs)[:, None])
    for name in ("dc_v", "peak_v"):
        arr = getattr(cold.arrays, name)
        arr[loose] = np.fmax(arr[loose], crest[loose])
    sw, cold_runs = _switch_on_runs(designs, cold.arrays.dc_v, cold.arrays.peak_v, cold_phases,
                                    delay, np.zeros(B), record=record)
    for name in ("dc_v", "peak_v"):
        arr = getattr(cold.arrays, name)
        arr[bad] = np.fmax(arr[bad], sw.last_v[bad])
    cases[HIGH_MAINS_NO_LOAD.name] = cold

    warm = None
    given = [b for b, d in enumerate(designs) if any(r.warm_up_s is not None for r in d.rails)]
    if given:
        sub = [designs[b] for b in given]
        at = _warm_at(sub, delay[given])

        def warm_phases(grp):
            rows = [sub.index(g) for g in grp]
            cold_c = case_circuit(grp, HIGH_MAINS_NO_LOAD)
            hot_c = case_circuit(grp, HIGH_MAINS_IDLE)
            w = at[rows][:, : len(grp[0].rails)]
            return phase_circuits(cold_c, hot_c, w), w

        hot = cases[HIGH_MAINS_IDLE.name].arrays
        extra = np.nanmax(np.where(np.isfinite(at), at, 0.0), axis=1)
        part, _ = _switch_on_runs(sub, hot.dc_v[given], hot.peak_v[given], warm_phases,
                                  delay[given], extra)
        warm = SwitchOnArrays(*(_blank(designs) for _ in range(5)),
                              *(np.full(B, np.nan) for _ in range(5)))
        for name in warm.__dataclass_fields__:
            getattr(warm, name)[given] = getattr(part, name)

    source = _source_resistance(designs, cases[NOMINAL.name], less)
    impedance = _blank(designs, len(IMPEDANCE_HZ))
    for batch in cases[NOMINAL.name].batches:
        z = np.abs(output_impedance(batch.circuit, source[batch.idx]))
        impedance[np.asarray(batch.idx), : z.shape[1]] = z
    f0, q = _lc_sections(designs)
    v0, times, starts = _discharge(designs, cold)
    return WorstCases(
        designs=designs, cases=cases, switch_on=sw, warm=warm, source_ohm=source,
        impedance_hz=IMPEDANCE_HZ, impedance_ohm=impedance, lc_f0_hz=f0, lc_q=q,
        choke_input=_choke_input(designs, cases[IDLE.name], cold),
        discharge_v0=v0, discharge_s=times,
        bleeder=_bleeder_suggestion(designs, v0, times, starts, cases[NOMINAL.name]),
        cold_runs=cold_runs if record else None)
