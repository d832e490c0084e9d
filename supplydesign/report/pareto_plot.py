"""Picture of a synthesis's Pareto set: pairwise scatter of the objectives, picks labelled.

Drawn in the visual language of :mod:`supplydesign.report.plots`.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence

import numpy as np

from .plots import INK, LIMIT, MUTED, PAPER, PICK_STYLE, new_figure, style


def _objective_axes(result, names: Sequence[str]) -> tuple[np.ndarray, list[str]]:
    """Objective columns of a synthesis result as shown, and their axis labels."""
    cols, labels = [], []
    rated = [c.design.rectifier.max_peak_current_a is not None for c in result.designs]
    for name in names:
        col = np.array([c.objectives[name] for c in result.designs], dtype=float)
        if name == "hum_db":
            label = "hum, all rails [dB, Σ re allowances]"
        elif name == "regulation_pct":
            label = "DC sag idle→full [%]"
        elif name == "peak" and all(rated):
            col, label = 100.0 * col, "rectifier peak [% of rating]"
        elif name == "peak" and not any(rated):
            label = "rectifier peak [A]"
        elif name == "peak":
            label = "rectifier peak [÷ rating; A if unrated]"
        else:
            label = f"parts cost [{result.currency or 'price units'}]"
        cols.append(col)
        labels.append(label)
    return np.stack(cols, axis=1), labels


def _same_text(label: str, value: float) -> str:
    """'rectifier peak [% of rating]', 6.484 -> 'rectifier peak 6.48 % of rating for every
    design'."""
    quantity, _, unit = label.partition(" [")
    return f"{quantity} {value:.3g} {unit.rstrip(']')} for every design"


def pick_marks(picks: Mapping[str, tuple[int, str]]) -> dict[int, list[str]]:
    """Design index -> names of the picks that chose it (in pick order)."""
    marks: dict[int, list[str]] = {}
    for name, (i, _) in picks.items():
        marks.setdefault(i, []).append(name)
    return marks


#: spread below which an objective counts as the same for every design (not plotted)
SAME = {"hum_db": 0.05, "regulation_pct": 0.05, "cost": 0.005}
#: ... for the rectifier peak, relative to its value
SAME_PEAK_REL = 0.005


def _varying(F: np.ndarray, names: Sequence[str]) -> list[bool]:
    span = np.ptp(F, axis=0)
    top = np.max(np.abs(F), axis=0)
    return [bool(span[j] > (SAME_PEAK_REL * top[j] if n == "peak" else SAME.get(n, 0.0)))
            for j, n in enumerate(names)]


def pareto_figure(result, objectives: Sequence[str] | None = None, *, title: str = ""):
    """Pairwise scatter of the objectives of a synthesis's Pareto set, picks labelled.

    An objective that is the same for every design (within :data:`SAME`) is
    named below the panels instead of being paired, unless fewer than two
    objectives would be left. Every objective is plotted as searched: lower is
    better (hum as the power sum of every rail's ripple over its allowance).

    Parameters
    ----------
    result : supplydesign.synth.run.SynthResult
        A run with at least one design.
    objectives : sequence of str, optional
        Objectives to pair (default: the run's objectives, or all four when the
        run searched fewer than two).
    """
    from ..synth.score import OBJECTIVES

    names = list(objectives or (result.objectives if len(result.objectives) > 1 else OBJECTIVES))
    F, labels = _objective_axes(result, names)
    keep = _varying(F, names)
    if sum(keep) < 2:
        keep = [True] * len(names)
    same = [_same_text(labels[j], F[0, j]) for j in range(len(names)) if not keep[j]]
    cols = [j for j in range(len(names)) if keep[j]]
    pairs = [(a, b) for bi, b in enumerate(cols) for a in cols[:bi]]
    ncol = min(3, len(pairs))
    nrow = math.ceil(len(pairs) / ncol)
    fig = new_figure(3.6 * ncol + 0.4, 3.0 * nrow + 1.0)
    marks = pick_marks(result.picks)
    from matplotlib.patheffects import withStroke

    halo = withStroke(linewidth=2.5, foreground=PAPER)
    with style():
        axes = np.atleast_1d(fig.subplots(nrow, ncol, squeeze=False).ravel())
        for ax, (a, b) in zip(axes, pairs, strict=False):
            ax.scatter(F[:, a], F[:, b], s=16, color=MUTED, alpha=0.75, lw=0, zorder=2)
            for i, picked in marks.items():
                marker, colour = PICK_STYLE.get(picked[0], ("o", INK))
                ax.scatter(F[i, a], F[i, b], s=70, marker=marker, color=colour,
                           edgecolor="white", lw=0.8, zorder=3)
                ax.annotate(f"#{i + 1}", (F[i, a], F[i, b]), xytext=(5, 4),
                            textcoords="offset points", fontsize=8, color=colour, zorder=4,
                            annotation_clip=False, path_effects=[halo])
            ax.margins(0.08)
            ax.set_xlabel(labels[a])
            ax.set_ylabel(labels[b])
        for ax in axes[len(pairs):]:
            ax.set_visible(False)
        handles = [axes[0].scatter([], [], s=16, color=MUTED, lw=0, label="other designs")]
        for i, picked in sorted(marks.items()):
            marker, colour = PICK_STYLE.get(picked[0], ("o", INK))
            handles.append(axes[0].scatter([], [], s=70, marker=marker, color=colour,
                                           label=f"#{i + 1} {' & '.join(picked)}"))
        legend = fig.legend(handles=handles, loc="outside lower center", ncols=len(handles),
                            title="; ".join(same) + " (not plotted)" if same else None,
                            title_fontsize=8.5)
        legend.get_title().set_color(LIMIT)
        fig.suptitle(title or f"Pareto set of {len(result.designs)} designs — better: lower "
                              "in every objective (towards the lower left)")
    return fig
