"""Pictures of a spread of many builds: histograms of every rail's DC and hum with its
band and allowance, and the drivers of each as bars. Nothing is solved here; the
visual language is that of :mod:`supplydesign.report.plots`."""

from __future__ import annotations

import numpy as np

from ..evaluation.spread import Spread, SpreadSummary
from .plots import INK, LIMIT, MUTED, _note, _si, new_figure, rail_colour, si_scale, style

#: bars per panel of the drivers picture
DRIVER_BARS = 5
#: a limit further from the builds than this many times their range is noted, not drawn
FAR = 3.0


def _limit(ax, x: float, span: tuple[float, float], label: str, k: float) -> str | None:
    """Draw a dashed limit at ``x`` (scaled by k) if near the builds; else return a note."""
    lo, hi = span
    width = max(hi - lo, 1e-12 * max(abs(hi), 1.0))
    if lo - FAR * width <= x <= hi + FAR * width:
        ax.axvline(x * k, color=LIMIT, ls="--", lw=1.1)
        return None
    return label


def histograms_figure(sp: Spread, s: SpreadSummary, title: str = ""):
    """Per rail, the builds' DC with its band and their hum with its allowance."""
    rails = sp.design.rails
    ok = sp.converged
    fig = new_figure(7.6, 1.0 + 1.75 * len(rails))
    bins = int(np.clip(np.sqrt(max(ok.sum(), 1)), 10, 50))
    with style():
        axes = fig.subplots(len(rails), 2, squeeze=False)
        for i, (rail, rs) in enumerate(zip(rails, s.rails, strict=True)):
            colour = rail_colour(i)
            dc = sp.full.dc_v[ok, i]
            hum = sp.full.ripple_rms_v[ok, i]
            ax = axes[i, 0]
            ax.hist(dc, bins=bins, color=colour, alpha=0.85)
            notes = []
            if rail.voltage_v is not None:
                for edge in (1.0 - rail.tolerance, 1.0 + rail.tolerance):
                    v = rail.voltage_v * edge
                    if _limit(ax, v, (dc.min(), dc.max()), "band", 1.0):
                        notes.append(f"band edge {_si(v, 'V', 4)} (off the scale)")
                ax.axvline(rail.voltage_v, color=MUTED, lw=0.8)
            ax.set_title(f"{rail.name}: DC, {100 * rs.yield_:.0f} % meet the targets",
                         fontsize=9.5, color=colour)
            ax.set_xlabel("DC [V]")
            ax.set_ylabel("builds")
            if notes:
                _note(ax, "; ".join(dict.fromkeys(notes)))
            ax = axes[i, 1]
            k, unit = si_scale(hum, "V")
            ax.hist(hum * k, bins=bins, color=colour, alpha=0.55)
            if rail.hum_v is not None:
                far = _limit(ax, rail.hum_v, (hum.min(), hum.max()), "", k)
                if far is not None:
                    _note(ax, f"allowed {_si(rail.hum_v, 'V')} (off the scale)")
            ax.set_title(f"{rail.name}: hum rms", fontsize=9.5, color=colour)
            ax.set_xlabel(f"hum rms [{unit}]")
        fig.suptitle(title or f"{s.builds} builds: DC with its band, hum with its allowance "
                              "(dashed)")
    return fig


def drivers_figure(s: SpreadSummary, title: str = ""):
    """Per rail, the largest shares of the variance of its DC and of its hum."""
    fig = new_figure(7.6, 1.0 + 1.5 * len(s.rails))
    with style():
        axes = fig.subplots(len(s.rails), 2, squeeze=False)
        for i, r in enumerate(s.rails):
            for j, (what, drivers, r2) in enumerate((("DC", r.dc_drivers, r.dc_r2),
                                                     ("hum", r.hum_drivers, r.hum_r2))):
                ax = axes[i, j]
                shown = drivers[:DRIVER_BARS][::-1]
                y = np.arange(len(shown))
                share = np.array([100 * d.share for d in shown])
                ax.barh(y, share, color=rail_colour(i), alpha=0.85 if j == 0 else 0.55)
                for yy, v in zip(y, share, strict=True):
                    if v >= 0.5:
                        ax.text(v + 1.5, yy, f"{v:.0f} %", va="center", fontsize=8, color=INK)
                ax.set_yticks(y, [d.part for d in shown], fontsize=8)
                ax.set_xlim(0, 100)
                ax.grid(axis="y", visible=False)
                fit = "" if not np.isfinite(r2) else f" (fit R² {r2:.2f})"
                ax.set_title(f"{r.name}: {what}{fit}", fontsize=9.5, color=rail_colour(i))
                if i == len(s.rails) - 1:
                    ax.set_xlabel("share of the variance [%]")
                ax.tick_params(axis="y", colors=INK)
        fig.suptitle(title or "What drives the spread (standardized regression)")
    return fig


def spread_figures(sp: Spread, s: SpreadSummary, label: str = "") -> dict[str, object]:
    """The pictures of a spread by name: ``<label>-spread-histograms`` and
    ``<label>-spread-drivers`` (without the label when it is empty)."""
    stem = f"{label}-spread" if label else "spread"
    return {f"{stem}-histograms": histograms_figure(sp, s),
            f"{stem}-drivers": drivers_figure(s)}
