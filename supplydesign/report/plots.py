"""Pictures of results: ripple, rectifier pulses, switch-on, output impedance (and the
visual language that :mod:`supplydesign.report.pareto_plot` shares).

Every function here takes figures or results that are already computed and
returns a :class:`matplotlib.figure.Figure`; nothing is solved while plotting.
Matplotlib is imported when the first picture is drawn (so ``supplydesign
--help`` stays instant) and drawn with the Agg canvas, without pyplot and
without touching the global matplotlib settings.

One visual language throughout: a warm paper background, each rail in its own
colour from :data:`RAIL_COLOURS` (the same rail keeps its colour in every
picture of a design), each pick of a synthesis in its own marker and colour from
:data:`PICK_STYLE`, limits and allowances as dashed grey lines, and every axis
labelled with its quantity and unit in brackets.
"""

from __future__ import annotations

import io
import math
import re
from collections.abc import Mapping

import numpy as np

#: colours of the rails, in rail order (repeated beyond eight rails)
RAIL_COLOURS = ("#12707a", "#d0841a", "#84407f", "#3c5e9e", "#a8412f", "#5f7f22",
                "#8a6a3c", "#2e8a5c")
#: marker and colour of each synthesis pick
PICK_STYLE = {"cheapest": ("s", "#d0841a"), "quietest": ("D", "#12707a"),
              "stiffest": ("^", "#84407f"), "balanced": ("P", "#a8412f")}
INK = "#27333b"
PAPER = "#fcfaf5"
MUTED = "#a39e96"
#: colours of the anodes or diodes in the rectifier picture
PULSE_COLOURS = ("#12707a", "#d0841a", "#3c5e9e", "#a8412f")
LIMIT = "#6e6a64"

STYLE = {
    "figure.facecolor": "white", "axes.facecolor": PAPER, "axes.edgecolor": "#8f8a82",
    "axes.labelcolor": INK, "axes.titlesize": 10.5, "axes.titleweight": "bold",
    "axes.titlelocation": "left", "axes.labelsize": 9.5, "axes.spines.top": False,
    "axes.spines.right": False, "axes.grid": True, "grid.color": "#e3ded5",
    "grid.linestyle": "-", "grid.linewidth": 0.6, "xtick.color": INK, "ytick.color": INK,
    "xtick.labelsize": 8.5, "ytick.labelsize": 8.5, "legend.fontsize": 8.5,
    "legend.frameon": False, "font.family": "DejaVu Sans", "lines.linewidth": 1.6,
    "figure.titlesize": 12, "figure.titleweight": "bold", "svg.fonttype": "none",
    "svg.hashsalt": "supplydesign",
}

PREFIXES = ((1e-9, "n"), (1e-6, "µ"), (1e-3, "m"), (1.0, ""), (1e3, "k"), (1e6, "M"))


def style():
    """The matplotlib settings of our visual language, as a context (imports matplotlib)."""
    import matplotlib

    return matplotlib.rc_context(STYLE)


def new_figure(width: float, height: float):
    """An empty figure of ``width`` x ``height`` [inch] on an Agg canvas, laid out by
    matplotlib's constrained layout."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    with style():
        fig = Figure(figsize=(width, height), dpi=110, layout="constrained")
        FigureCanvasAgg(fig)
    return fig


def rail_colour(i: int) -> str:
    """The colour of rail number ``i`` (0-based) in every picture."""
    return RAIL_COLOURS[i % len(RAIL_COLOURS)]


def si_scale(values, unit: str) -> tuple[float, str]:
    """Factor and prefixed unit for showing ``values`` (largest magnitude 1 ... 1000).

    ``si_scale([0.002, -0.004], "V") == (1e3, "mV")``: multiply by the factor.
    """
    top = float(np.nanmax(np.abs(values))) if np.size(values) else 0.0
    if not math.isfinite(top) or top == 0.0:
        return 1.0, unit
    size, prefix = PREFIXES[0]
    for s, p in PREFIXES:
        if top >= s * 0.9995:
            size, prefix = s, p
    return 1.0 / size, prefix + unit


def tile_period(t_s: np.ndarray, y: np.ndarray, cycles: int = 2) -> tuple[np.ndarray, np.ndarray]:
    """Repeat one sampled period (first and last sample the same instant of the cycle)
    ``cycles`` times: returns time [s] and values, both of length cycles*(N-1)+1."""
    t_s, y = np.asarray(t_s, dtype=float), np.asarray(y, dtype=float)
    period = t_s[-1] - t_s[0]
    t = np.concatenate([t_s[:-1] + k * period for k in range(cycles)] + [t_s[-1:] +
                                                                        (cycles - 1) * period])
    return t, np.concatenate([y[:-1]] * cycles + [y[-1:]])


def ripple_of(v: np.ndarray) -> np.ndarray:
    """A converged period of a rail voltage [V] as ripple about its mean: the residual
    drift of the shooting (last minus first sample) is spread out linearly first, as
    the figures do (:func:`supplydesign.evaluation.analysis.detrended`)."""
    v = np.asarray(v, dtype=float)
    ramp = np.linspace(0.0, 1.0, len(v))
    flat = v - ramp * (v[-1] - v[0])
    return flat - np.mean(flat[:-1])


def envelope(t: np.ndarray, y: np.ndarray, buckets: int = 1500
             ) -> tuple[np.ndarray, np.ndarray]:
    """Fewer points that draw the same picture: the lowest and highest sample of each of
    ``buckets`` runs of samples, in time order (long records; the ripple and the
    rectifier pulses keep their envelope instead of aliasing)."""
    t, y = np.asarray(t, dtype=float), np.asarray(y, dtype=float)
    if len(t) <= 2 * buckets:
        return t, y
    edges = np.linspace(0, len(t), buckets + 1).astype(int)
    keep = set()
    for a, b in zip(edges[:-1], edges[1:], strict=True):
        seg = y[a:b]
        if np.all(np.isnan(seg)):
            continue
        keep.update((a + int(np.nanargmin(seg)), a + int(np.nanargmax(seg))))
    rows = np.array(sorted(keep | {0, len(t) - 1}))
    return t[rows], y[rows]


def _note(ax, text: str) -> None:
    ax.text(0.995, 0.97, text, transform=ax.transAxes, ha="right", va="top", fontsize=8.5,
            color=INK, bbox={"boxstyle": "round,pad=0.25", "fc": "white", "ec": "#d8d2c8",
                             "alpha": 0.9})


def ripple_figure(waveforms, *, hum_allowed_v: Mapping[str, float | None] | None = None,
                  title: str = "", cycles: int = 2):
    """Ripple of every rail over ``cycles`` mains periods, one panel per rail.

    Parameters
    ----------
    waveforms : supplydesign.evaluation.figures.Waveforms
        One steady-state period (``t_s`` [s], ``rail_v`` [V] per rail).
    hum_allowed_v : mapping of rail name to float, optional
        The brief's allowed ripple per rail, rms [V], shown beside the figure.
    title : str
        Figure title.
    cycles : int
        Mains periods shown.
    """
    names = list(waveforms.rail_v)
    fig = new_figure(7.6, 1.15 + 1.45 * len(names))
    with style():
        axes = fig.subplots(len(names), 1, sharex=True, squeeze=False)[:, 0]
        for i, (ax, name) in enumerate(zip(axes, names, strict=True)):
            v = np.asarray(waveforms.rail_v[name], dtype=float)
            dc = float(np.mean(v[:-1]))
            t, r = tile_period(waveforms.t_s, ripple_of(v), cycles)
            k, unit = si_scale(r, "V")
            ax.plot(t * 1e3, r * k, color=rail_colour(i))
            ax.axhline(0.0, color=LIMIT, lw=0.7, ls="--")
            ax.set_ylabel(f"ripple [{unit}]")
            rms = float(np.std(r[:-1]))
            allowed = (hum_allowed_v or {}).get(name)
            text = f"{name}: {_si(dc, 'V', 4)} DC, {_si(rms, 'V')} rms"
            if allowed:
                text += f" (allowed {_si(allowed, 'V')})"
            ax.set_title(text, fontsize=9.5, color=rail_colour(i))
            ax.margins(x=0)
        axes[-1].set_xlabel("time [ms]")
        if title:
            fig.suptitle(title)
    return fig


def rectifier_figure(waveforms, *, peak_rating_a: float | None = None, element: str = "anode",
                     title: str = "", cycles: int = 2):
    """Current in each anode or diode over ``cycles`` mains periods [A].

    Parameters
    ----------
    waveforms : supplydesign.evaluation.figures.Waveforms
        One steady-state period (``anode_a`` [A], one array per anode or diode).
    peak_rating_a : float, optional
        The rectifier's peak current rating per anode [A]: a dashed line when it
        is near the pulses, otherwise only named in the note.
    element : str
        What conducts, for the legend ("anode" or "diode").
    """
    fig = new_figure(7.6, 3.2)
    with style():
        ax = fig.subplots()
        top = 0.0
        for j, i_a in enumerate(waveforms.anode_a):
            t, y = tile_period(waveforms.t_s, i_a, cycles)
            colour = PULSE_COLOURS[j % len(PULSE_COLOURS)]
            ax.fill_between(t * 1e3, 0.0, y, color=colour, alpha=0.18, lw=0)
            ax.plot(t * 1e3, y, color=colour, label=f"{element} {j + 1}")
            top = max(top, float(np.max(y)))
        note = f"peak {_si(top, 'A')} per {element}"
        if peak_rating_a:
            note += f"; rating {_si(peak_rating_a, 'A')}"
            if peak_rating_a <= 1.6 * top:
                ax.axhline(peak_rating_a, color=LIMIT, ls="--", lw=1.0, label="peak rating")
                top = max(top, peak_rating_a)
        ax.set_ylim(0.0, 1.3 * top if top > 0 else 1.0)
        ax.set_xlabel("time [ms]")
        ax.set_ylabel("current [A]")
        ax.margins(x=0)
        _note(ax, note)
        ax.legend(loc="upper left", ncols=len(waveforms.anode_a) + 1)
        if title:
            fig.suptitle(title)
        else:
            ax.set_title(f"current in each {element}")
    return fig


def switch_on_figure(t_s: np.ndarray, rail_v: Mapping[str, np.ndarray], *,
                     junction_a: np.ndarray | None = None,
                     final_v: Mapping[str, float] | None = None, title: str = "",
                     surge_window_s: float = 0.1, surge_rating_a: float | None = None,
                     element: str = "anode or diode"):
    """Switch-on transient: rail voltages and, when given, the rectifier current.

    Parameters
    ----------
    t_s : (N,) array
        Time from switch-on [s].
    rail_v : mapping of rail name to (N,) array
        Capacitor (or rail) voltage [V] per rail, over the whole run.
    junction_a : (N,) array, optional
        Highest current in one anode or diode at each instant [A] (NaN where not
        counted); shown from the start of conduction (after a valve's warm-up) over
        ``surge_window_s`` (or four times the time to the surge, if longer).
    final_v : mapping of rail name to float, optional
        The DC each rail settles to [V], drawn dashed in the rail's colour.
    surge_rating_a : float, optional
        The rectifier's surge current rating [A], dashed when near the surge.
    element : str
        What conducts ("anode", "diode"), for the title.
    """
    t_s = np.asarray(t_s, dtype=float)
    panels = 2 if junction_a is not None else 1
    fig = new_figure(7.6, 1.4 + 2.4 * panels)
    with style():
        axes = fig.subplots(panels, 1, squeeze=False)[:, 0]
        ax = axes[0]
        k, unit = _time_scale(t_s)
        for i, (name, v) in enumerate(rail_v.items()):
            v = np.asarray(v, dtype=float)
            ax.plot(*_scaled(envelope(t_s, v), k), color=rail_colour(i), label=name)
            p = int(np.nanargmax(v))
            if v[p] > 1.002 * v[-1]:  # an overshoot: the rail comes back down from it
                ax.plot(t_s[p] * k, v[p], marker="v", color=rail_colour(i), ms=7)
            if final_v and final_v.get(name) is not None:
                ax.axhline(final_v[name], color=rail_colour(i), ls="--", lw=0.8, alpha=0.7)
        ax.set_ylabel("voltage [V]")
        ax.set_ylim(bottom=0.0)
        ax.set_xlabel(f"time from switch-on [{unit}]")
        ax.legend(loc="best", ncols=min(4, max(1, len(rail_v))))
        ax.set_title("capacitor voltage at each rail (▼ overshoot; dashed: final DC)")
        if junction_a is not None:
            i_a = np.asarray(junction_a, dtype=float)
            p = int(np.nanargmax(i_a))
            on = np.flatnonzero(np.nan_to_num(i_a) > 0)
            start = float(t_s[on[0]]) if on.size else 0.0
            span = max(surge_window_s, 4.0 * (float(t_s[p]) - start))
            end = min(float(t_s[-1]), start + span)
            show = (t_s >= start - 0.05 * span) & (t_s <= end)
            k2, unit2 = _time_scale(t_s[show])
            ax2 = axes[1]
            ax2.plot(*_scaled(envelope(t_s[show], i_a[show]), k2), color=INK, lw=0.9)
            ax2.plot(t_s[p] * k2, i_a[p], marker="v", color="#a8412f", ms=7)
            note = f"surge {_si(float(i_a[p]), 'A')} at {_si(float(t_s[p]), 's')}"
            late = start >= 0.05 * span
            if late:
                note += f", {_si(float(t_s[p]) - start, 's')} after conduction starts"
            if surge_rating_a:
                note += f"; rating {_si(surge_rating_a, 'A')}"
                if surge_rating_a <= 1.6 * i_a[p]:
                    ax2.axhline(surge_rating_a, color=LIMIT, ls="--", lw=1.0)
            _note(ax2, note)
            ax2.set_ylabel("current [A]")
            ax2.set_ylim(bottom=0.0)
            ax2.set_xlabel(f"time from switch-on [{unit2}]")
            when = "from conduction," if late else "the first"
            ax2.set_title(f"current in one {element}, {when} {_si(end - start, 's')}")
        for a in axes:
            a.margins(x=0)
        if title:
            fig.suptitle(title)
    return fig


def impedance_figure(freq_hz: np.ndarray, z_ohm: Mapping[str, np.ndarray], *,
                     ripple_hz: float | None = None, title: str = ""):
    """Output impedance magnitude of every rail against frequency (log-log).

    Parameters
    ----------
    freq_hz : (F,) array
        Frequencies [Hz].
    z_ohm : mapping of rail name to (F,) array
        |Z| at the rail [ohm] (complex values are shown by magnitude).
    ripple_hz : float, optional
        The ripple's fundamental [Hz], marked by a dashed line.
    """
    f = np.asarray(freq_hz, dtype=float)
    fig = new_figure(7.6, 3.8)
    with style():
        ax = fig.subplots()
        for i, (name, z) in enumerate(z_ohm.items()):
            ax.loglog(f, np.abs(np.asarray(z)), color=rail_colour(i), label=name)
        if ripple_hz:
            ax.axvline(ripple_hz, color=LIMIT, ls="--", lw=0.9)
            ax.text(ripple_hz, 0.98, f" ripple {ripple_hz:g} Hz", color=LIMIT, fontsize=8.5,
                    va="top", transform=ax.get_xaxis_transform())
        ax.set_xlabel("frequency [Hz]")
        ax.set_ylabel("|output impedance| [Ω]")
        ax.grid(True, which="minor", color="#efebe4", lw=0.4)
        ax.legend(loc="best", ncols=min(4, max(1, len(z_ohm))))
        if title:
            fig.suptitle(title)
        else:
            ax.set_title("output impedance of each rail")
    return fig


def _scaled(tv: tuple[np.ndarray, np.ndarray], k: float) -> tuple[np.ndarray, np.ndarray]:
    return tv[0] * k, tv[1]


def _time_scale(t_s: np.ndarray) -> tuple[float, str]:
    top = float(np.nanmax(t_s)) if t_s.size else 0.0
    return (1e3, "ms") if top < 0.9 else (1.0, "s")


def _si(value: float, unit: str, digits: int = 3) -> str:
    from ..units import format_si

    return format_si(value, unit, digits)


# ---------------------------------------------------------------------------- output


def save_figure(fig, path) -> None:
    """Write ``fig`` to ``path`` as PNG or SVG (by its suffix), reproducibly."""
    import os

    fmt = os.fspath(path).rsplit(".", 1)[-1].lower()
    if fmt not in ("png", "svg"):
        raise ValueError(f"expected a .png or .svg path, got {path}")
    meta = {"Software": "supplydesign"} if fmt == "png" else {"Date": None, "Creator":
                                                              "supplydesign"}
    with style():
        fig.savefig(path, format=fmt, metadata=meta, dpi=130 if fmt == "png" else None)
    _freeze(fig)


def _freeze(fig) -> None:
    """Keep the layout of the first save for the next ones (it is the slow part)."""
    fig.set_layout_engine("none")


def svg_markup(fig, prefix: str) -> str:
    """``fig`` as an ``<svg>`` element to place inline in HTML, its ids prefixed with
    ``prefix`` so that several figures in one page never share an id."""
    buf = io.StringIO()
    with style():
        fig.savefig(buf, format="svg", metadata={"Date": None, "Creator": "supplydesign"})
    _freeze(fig)
    text = buf.getvalue()
    text = text[text.index("<svg"):]
    text = re.sub(r'id="([^"]+)"', rf'id="{prefix}-\1"', text)
    return re.sub(r'(href="#|url\(#)([^")]+)', rf"\g<1>{prefix}-\2", text)
