"""The shareable files of a synthesis run and of an evaluation: BOM, HTML report, pictures.

- ``OUT/bom.csv``: the bill of materials of every design of the run, one CSV;
- ``OUT/report.html``: one self-contained page (picks, Pareto front, the picked
  designs with their pictures and BOMs, every design, cautions);
- ``PLOTS/*.png|svg``: the Pareto front and the pictures of the picked designs
  (synthesis) or of every design given (evaluation).

The picked designs are solved once more with their waveforms kept; every
picture is drawn once and then written as files and inlined in the page.
"""

from __future__ import annotations

import os
from collections.abc import Sequence

from ..design import Design
from ..writefiles import write_text_atomic
from . import pictures
from .bom import bom_csv


def write_bom(path: str, designs: Sequence[tuple[str, Design]], *, force: bool = False,
              fuses: Sequence | None = None) -> str:
    """Write the BOM CSV of labelled designs (and their fuses, where given) to ``path``
    (atomically); returns the path."""
    write_text_atomic(path, bom_csv(designs, fuses), force=force)
    return path


def picks_heat(result, idx: Sequence[int], steps: int = 512) -> dict[int, dict]:
    """Heat, life and fuses of the picked designs ``idx``: {index: {"hl", "b", "fs"}}.

    The fuses follow the running current at high mains (one solve of the picks); the
    switch-on surge is checked by ``evaluate`` on a design file, not here."""
    from ..evaluation.analysis import evaluate_arrays
    from ..evaluation.cases import HIGH_MAINS_FULL_LOAD, solve_case
    from ..evaluation.heatlife import heat_life, suggest_fuses

    designs = [result.designs[i].design for i in idx]
    if not designs:
        return {}
    hl = heat_life(designs, evaluate_arrays(designs, steps=steps))
    fs = suggest_fuses(designs, solve_case(designs, HIGH_MAINS_FULL_LOAD, steps).arrays)
    return {i: {"hl": hl, "b": b, "fs": fs} for b, i in enumerate(idx)}


def write_synth_outputs(result, out_dir: str | None, *, plot_dir: str | None = None,
                        plot_format: str = "png", report: bool = True, force: bool = False,
                        seed: int | None = None, steps: int = 512,
                        switch_on: dict | None = None, impedance: dict | None = None
                        ) -> list[str]:
    """Write a run's BOM and HTML report into ``out_dir`` and its pictures into
    ``plot_dir`` (each when given). ``switch_on`` and ``impedance`` map design
    indices to :class:`pictures.SwitchOnTrace` / :class:`pictures.ImpedanceCurves`.
    Returns the paths written."""
    written = []
    width = pictures.number_width(len(result.designs))
    idx = pictures.picked(result)
    heat = picks_heat(result, idx, steps) if out_dir and result.designs else {}
    if out_dir and result.designs:
        labels = [(f"designs/{k:0{width}d}.toml", c.design)
                  for k, c in enumerate(result.designs, start=1)]
        from .heatlife import bom_fuses

        fuses = [bom_fuses(c.design, heat[k]["fs"], heat[k]["b"]) if k in heat else None
                 for k, c in enumerate(result.designs)]
        written.append(write_bom(os.path.join(out_dir, "bom.csv"), labels, force=force,
                                 fuses=fuses))
    want_report = bool(out_dir) and report
    if not (want_report or plot_dir):
        return written
    waves = dict(zip(idx, pictures.waveform_figures([result.designs[i].design for i in idx],
                                                    steps), strict=True))
    figs = pictures.synth_figures(result, waves, switch_on=switch_on, impedance=impedance)
    if plot_dir:
        written += pictures.save_all(figs, plot_dir, plot_format, force=force)
    if want_report:
        from .html import synth_report_html
        from .plots import svg_markup

        svgs = {name: svg_markup(fig, f"f{k}") for k, (name, fig) in enumerate(figs.items())}
        path = os.path.join(out_dir, "report.html")
        write_text_atomic(path, synth_report_html(result, svgs, waves, seed=seed, heat=heat),
                          force=force)
        written.append(path)
    return written


def write_design_plots(designs: Sequence[Design], labels: Sequence[str], plot_dir: str, *,
                       plot_format: str = "png", force: bool = False, steps: int = 512,
                       switch_on: Sequence | None = None, impedance: Sequence | None = None
                       ) -> list[str]:
    """Pictures of each design (ripple, rectifier current, and switch-on and output
    impedance where given per design) as ``plot_dir/<label>-<picture>.<format>``."""
    waves = pictures.waveform_figures(designs, steps)
    figs = {}
    for b, (design, fig, label) in enumerate(zip(designs, waves, labels, strict=True)):
        pics = pictures.design_figures(
            design, fig, title=label,
            switch_on=switch_on[b] if switch_on else None,
            impedance=impedance[b] if impedance else None)
        figs.update({f"{label}-{what}": f for what, f in pics.items()})
    return pictures.save_all(figs, plot_dir, plot_format, force=force)


def unique_labels(paths: Sequence[str]) -> list[str]:
    """File stems of ``paths``, numbered where two would be the same."""
    stems = [os.path.splitext(os.path.basename(p))[0] for p in paths]
    return [s if stems.count(s) == 1 else f"{k + 1}-{s}" for k, s in enumerate(stems)]
