"""Which pictures a command makes, and writing them: PNG or SVG files, or inline SVG.

The solving happens here (:func:`waveform_figures` re-evaluates designs with
their waveforms kept); the drawing in :mod:`supplydesign.report.plots`.

Switch-on and output impedance come from the worst-case analysis
(:func:`supplydesign.evaluation.worstcase.analyse`); the pictures take them as plain arrays
(:class:`SwitchOnTrace`, :class:`ImpedanceCurves`), one of each per design, made
by :func:`switch_on_traces` and :func:`impedance_curves`. The analysis keeps no
time series of its switch-on run, so :func:`switch_on_traces` runs the same
switch-on once more with every step recorded (the slow part of the pictures).
"""

from __future__ import annotations

import os
import tempfile
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from ..design import Design
from ..errors import UserError
from ..evaluation.figures import Figures

PLOT_FORMATS = ("png", "svg")


@dataclass
class SwitchOnTrace:
    """A switch-on run of one design, as plain arrays.

    Attributes
    ----------
    t_s : (N,) array
        Time from switch-on [s].
    rail_v : dict of rail name to (N,) array
        Capacitor (or rail) voltage per rail [V].
    junction_a : (N,) array, optional
        Highest current in one anode or diode [A].
    final_v : dict of rail name to float, optional
        The DC each rail settles to [V].
    """

    t_s: np.ndarray
    rail_v: dict[str, np.ndarray]
    junction_a: np.ndarray | None = None
    final_v: dict[str, float] | None = None


@dataclass
class ImpedanceCurves:
    """Output impedance of one design's rails: ``z_ohm`` [ohm] (magnitude or complex)
    per rail name at the frequencies ``freq_hz`` [Hz]."""

    freq_hz: np.ndarray
    z_ohm: dict[str, np.ndarray]

    @classmethod
    def from_arrays(cls, freq_hz: np.ndarray, z_ohm: np.ndarray,
                    rail_names: Sequence[str]) -> ImpedanceCurves:
        """From an (R, F) array of |Z| (rows in rail order; extra rows of NaN ignored)."""
        z = np.asarray(z_ohm)
        return cls(np.asarray(freq_hz), {n: z[i] for i, n in enumerate(rail_names)})


def switch_on_traces(wc) -> list[SwitchOnTrace]:
    """Time series of the contract's switch-on run (high mains, discharged, no load, at the
    crest) of every design of a worst-case analysis ``wc``, each run stopping where the
    analysis's did. Per design: capacitor voltage of each rail (the rail voltage where
    it has no capacitor) and the highest current in one anode or diode."""
    from ..circuit.netlist import group_by_topology
    from ..circuit.transient import SURGE_FROM_S, switch_on
    from ..evaluation.cases import HIGH_MAINS_NO_LOAD, case_circuit

    designs = wc.designs
    sw = wc.switch_on
    delay = np.array([d.rectifier.warm_up_s or 0.0 for d in designs])
    out: list[SwitchOnTrace | None] = [None] * len(designs)
    runs = wc.cold_runs
    if runs is None:  # the analysis kept no time series: run the switch-on again
        runs = []
        for idx in group_by_topology(designs):
            sub = [designs[i] for i in idx]
            n = len(sub[0].rails)
            runs.append((idx, switch_on([case_circuit(sub, HIGH_MAINS_NO_LOAD)],
                                        final_v=sw.final_v[idx, :n],
                                        t_max_s=sw.end_s[idx] - delay[idx], delay_s=delay[idx],
                                        record=True)))
    for idx, run in runs:
        rec = run.record
        for row, b in enumerate(idx):
            t = rec["t_s"][:, row]
            ok = np.isfinite(t)
            v = np.where(np.isnan(rec["cap_v"][ok, row]), rec["rail_v"][ok, row],
                         rec["cap_v"][ok, row])
            # the analysis counts the surge from SURGE_FROM_S on (see transient)
            i_a = np.where(t[ok] >= SURGE_FROM_S, np.max(rec["junction_a"][ok, row], axis=1),
                           np.nan)
            out[b] = SwitchOnTrace(
                t_s=np.concatenate([[0.0], t[ok] + delay[b]]),
                rail_v={r.name: np.concatenate([[0.0], v[:, i]])
                        for i, r in enumerate(designs[b].rails)},
                junction_a=np.concatenate([[np.nan], i_a]),
                final_v={r.name: float(sw.final_v[b, i]) for i, r in enumerate(designs[b].rails)})
    return out  # type: ignore[return-value]


def impedance_curves(wc) -> list[ImpedanceCurves]:
    """Output impedance of every design of a worst-case analysis ``wc``, per rail."""
    return [ImpedanceCurves.from_arrays(wc.impedance_hz, wc.impedance_ohm[b],
                                        [r.name for r in d.rails])
            for b, d in enumerate(wc.designs)]


def worst_case_pictures(designs: Sequence[Design], steps: int = 512, wc=None
                        ) -> tuple[list[SwitchOnTrace], list[ImpedanceCurves]]:
    """Switch-on traces and impedance curves of ``designs`` (running the worst-case
    analysis unless ``wc``, its result for these designs, is given)."""
    if wc is None:
        from ..evaluation.worstcase import analyse

        wc = analyse(designs, steps=steps, record=True)
    return switch_on_traces(wc), impedance_curves(wc)


def waveform_figures(designs: Sequence[Design], steps: int = 512) -> list[Figures]:
    """Nominal figures of ``designs`` with one period of waveforms kept (a solve)."""
    from ..evaluation.analysis import evaluate

    return evaluate(designs, steps=steps, waveforms=True)


def design_figures(design: Design, figures: Figures, *, title: str = "",
                   switch_on: SwitchOnTrace | None = None,
                   impedance: ImpedanceCurves | None = None) -> dict:
    """The pictures of one evaluated design: ``{"ripple", "rectifier"[, "switch-on"]
    [, "impedance"]: Figure}``. ``figures`` must carry waveforms."""
    from . import plots

    if figures.waveforms is None:
        raise ValueError("the figures carry no waveforms: evaluate with waveforms=True")
    rect = design.rectifier
    element = "anode" if rect.kind == "valve" else "diode"
    out = {
        "ripple": plots.ripple_figure(
            figures.waveforms, hum_allowed_v={r.name: r.hum_v for r in design.rails},
            title=_title("Ripple at every rail, two mains cycles", title)),
        "rectifier": plots.rectifier_figure(
            figures.waveforms, peak_rating_a=rect.max_peak_current_a, element=element,
            title=_title("Rectifier current, two mains cycles", title)),
    }
    if switch_on is not None:
        out["switch-on"] = plots.switch_on_figure(
            switch_on.t_s, switch_on.rail_v, junction_a=switch_on.junction_a,
            final_v=switch_on.final_v, surge_rating_a=rect.max_surge_current_a,
            element=element, title=_title("Switch-on at high mains", title))
    if impedance is not None:
        ripple_hz = design.mains.frequency_hz * (1 if rect.arrangement == "half-wave" else 2)
        out["impedance"] = plots.impedance_figure(
            impedance.freq_hz, impedance.z_ohm, ripple_hz=ripple_hz,
            title=_title("Output impedance", title))
    return out


def _title(what: str, whose: str) -> str:
    return f"{what} — {whose}" if whose else what


def synth_figures(result, waves: Mapping[int, Figures], *,
                  switch_on: Mapping[int, SwitchOnTrace] | None = None,
                  impedance: Mapping[int, ImpedanceCurves] | None = None) -> dict:
    """The pictures of a synthesis run: ``"pareto"`` and, per design index ``i`` in
    ``waves``, ``"design-NNN-<picture>"`` (NNN = i + 1, as the design files)."""
    from .pareto_plot import pareto_figure

    out = {}
    if result.designs:
        out["pareto"] = pareto_figure(result)
    width = number_width(len(result.designs))
    for i, fig in waves.items():
        name = f"design {i + 1:0{width}d} ({result.designs[i].notation})"
        pics = design_figures(result.designs[i].design, fig, title=name,
                              switch_on=(switch_on or {}).get(i),
                              impedance=(impedance or {}).get(i))
        for what, f in pics.items():
            out[design_key(i, what, width)] = f
    return out


def design_key(i: int, what: str, width: int = 2) -> str:
    """Name of the picture ``what`` of design index ``i`` (file stem, HTML anchor)."""
    return f"design-{i + 1:0{width}d}-{what}"


def number_width(n: int) -> int:
    """Digits of the design numbers of a run of ``n`` designs, as its design files have
    them (``designs/07.toml``, see :func:`supplydesign.synth.files.write_run`)."""
    return max(2, len(str(n)))


def picked(result) -> list[int]:
    """Indices of the designs the picks chose, in design order, each once."""
    return sorted({i for i, _ in result.picks.values()})


def save_all(figures: Mapping[str, object], out_dir: str, fmt: str = "png", *,
             force: bool = False) -> list[str]:
    """Write every picture as ``out_dir/<name>.<fmt>``, each atomically; an existing
    file is replaced only with ``force``. Returns the paths written."""
    from .plots import save_figure

    if fmt not in PLOT_FORMATS:
        raise UserError(f"expected one of {', '.join(PLOT_FORMATS)}, got {fmt!r}",
                        key="--plot-format")
    os.makedirs(out_dir, exist_ok=True)
    paths = [os.path.join(out_dir, f"{name}.{fmt}") for name in figures]
    if not force:
        for path in paths:
            if os.path.exists(path):
                raise UserError("exists already; give --force to overwrite it", file=path)
    for path, fig in zip(paths, figures.values(), strict=True):
        fd, tmp = tempfile.mkstemp(dir=out_dir, prefix=".tmp-", suffix=f".{fmt}")
        os.close(fd)
        try:
            save_figure(fig, tmp)
            os.chmod(tmp, 0o644)  # mkstemp's 0600 would keep the picture from others
            os.replace(tmp, path)
        finally:
            if os.path.exists(tmp):
                os.unlink(tmp)
    return paths
