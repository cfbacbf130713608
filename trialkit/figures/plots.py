"""Figures of a trial's results.  The only module of trialkit that imports matplotlib.

Every function takes a result object (or the figure data of :mod:`trialkit.figures.views`,
made from one), draws it and returns the matplotlib Axes (one panel) or Figure (several
panels).  Nothing statistical is computed here: lines, bands, margins and optima are read
from the objects given.  One consistent style: the Okabe & Ito (2008) colour-blind-safe
palette (:mod:`trialkit.figures.style`), units on every axis, titles that say in words
what is shown; :mod:`trialkit.figures.output` turns figures into PNG, SVG and files.

Examples
--------
>>> import pandas as pd
>>> from trialkit.trial.factors import Factor
>>> from trialkit.analysis.model import fit_model
>>> df = pd.DataFrame({"chelator": [2, 10, 2, 10, 6], "ph": [5.5, 5.5, 7.5, 7.5, 6.5],
...                    "removal": [40.0, 60.0, 50.0, 76.0, 57.0]})
>>> fit = fit_model(df, "removal", [Factor.continuous("chelator", 2, 10, unit="% w/v"),
...                                 Factor.continuous("ph", 5.5, 7.5, unit="pH")], "main")
>>> fig = main_effects(fit, unit="%")
>>> [ax.get_xlabel() for ax in fig.axes]
['chelator (% w/v)', 'ph (pH)']
>>> close(fig)
"""

from __future__ import annotations

import textwrap

import matplotlib.pyplot as plt
import numpy as np
from matplotlib.axes import Axes
from matplotlib.figure import Figure

from trialkit.figures.output import close, figure_of, png_data_uri, save, to_png, to_svg
from trialkit.figures.style import (
    BLACK,
    BLUE,
    GREEN,
    MARKERS,
    ORANGE,
    PALETTE,
    SEQUENTIAL,
    SKY,
    STYLE,
    VERMILION,
    PlotError,
    fit_like,
    label,
    need,
    new_axes,
    pretty,
    style_axes,
)

__all__ = ["PALETTE", "PlotError", "close", "contour", "desirability_contour",
           "effect_margins", "figure_of", "half_normal", "interaction", "kinetics", "label",
           "main_effects", "png_data_uri", "pretty", "residual_panels", "save", "surface3d",
           "sweep", "to_png", "to_svg"]


# -- main effects and interactions ----------------------------------------------------
def main_effects(result, *, unit: str = "", fig: Figure | None = None) -> Figure:
    """Predicted response along each factor, with 95 % band (other continuous factors at
    their middle, categorical ones averaged over their levels).

    ``result``: a fitted model (``ModelFit``) or :class:`trialkit.figures.views.EffectLines`.
    The observed baths are drawn as points.
    """
    if fit_like(result):
        from trialkit.figures.views import effect_lines

        result = effect_lines(result, unit=unit)
    need(result, ("panels", "response"), "main_effects")
    k = len(result.panels)
    cols = k if k <= 3 else 3
    rows = -(-k // cols)
    title = (f"Main effects on {result.response} (other factors at their middle "
             "or averaged over their levels)")
    if fig is None:  # wide enough for the title too (about 0.09 in a character)
        with plt.rc_context(STYLE):
            fig = plt.figure(figsize=(max(3.4 * cols, 4.5, 0.09 * len(title)),
                                      3.3 * rows + 0.5))
    grid = fig.subplots(rows, cols, sharey=True, squeeze=False)
    axes = list(grid.ravel()[:k])
    for extra in grid.ravel()[k:]:
        extra.remove()
    unit = unit or getattr(result, "unit", "")
    for ax, p in zip(axes, result.panels, strict=True):
        style_axes(ax)
        if p.continuous:
            x = p.line.x.astype(float)
            ax.fill_between(x, p.line.ci_low, p.line.ci_high, color=BLUE, alpha=0.18,
                            label="95 % confidence band")
            ax.plot(x, p.line.predicted, color=BLUE, lw=2, label="model")
            ax.plot(p.points.x.astype(float), p.points.y, ls="none", marker="o", ms=4,
                    color=BLACK, alpha=0.6, label="baths")
        else:
            pos = {lev: i for i, lev in enumerate(p.line.x)}
            xi = np.arange(len(pos))
            ax.errorbar(xi, p.line.predicted, yerr=[p.line.predicted - p.line.ci_low,
                        p.line.ci_high - p.line.predicted], color=BLUE, marker="s", lw=2,
                        capsize=4, label="model")
            ax.plot([pos.get(str(v), np.nan) for v in p.points.x], p.points.y, ls="none",
                    marker="o", ms=4, color=BLACK, alpha=0.6, label="baths")
            ax.set_xticks(xi, list(pos))
        ax.set_xlabel(label(p.factor, p.unit) if p.continuous else f"{p.factor} (level)")
        ax.set_title(f"Effect of {p.factor}")
    for r in range(rows):
        grid[r, 0].set_ylabel(label(result.response, unit))
    axes[0].legend(fontsize=8, loc="best")
    fig.suptitle(title)
    return fig


def interaction(result, x: str | None = None, trace: str | None = None, *, unit: str = "",
                ax: Axes | None = None) -> Axes:
    """Predicted response along ``x`` with one line per level of ``trace``.

    Non-parallel lines show an interaction.  ``result``: a ``ModelFit`` (give ``x`` and
    ``trace``) or a :class:`trialkit.figures.views.LinePanel` with a ``trace``.
    """
    if fit_like(result):
        if not (x and trace):
            raise PlotError("interaction of a fitted model needs x= and trace= factor names")
        from trialkit.figures.views import interaction_lines

        name = result.response
        result = interaction_lines(result, x, trace, unit=unit)
    else:
        name = getattr(result, "response", "response")
    need(result, ("line", "points", "trace"), "interaction")
    ax = new_axes(ax)
    style_axes(ax)
    for i, (lev, grp) in enumerate(result.line.groupby("trace", sort=False)):
        c, m = PALETTE[i % len(PALETTE)], MARKERS[i % len(MARKERS)]
        if isinstance(lev, float):
            lev_text = f"pH {lev:g}" if result.trace_unit == "pH" else \
                f"{lev:g} {pretty(result.trace_unit)}".strip()
        else:
            lev_text = lev
        if result.continuous:
            ax.plot(grp.x.astype(float), grp.predicted, color=c, lw=2,
                    label=f"{result.trace}: {lev_text}")
            pts = result.points[result.points.trace.astype(str) == str(lev)]
            ax.plot(pts.x.astype(float), pts.y, ls="none", marker=m, color=c, alpha=0.7)
        else:
            ax.plot(range(len(grp)), grp.predicted, color=c, marker=m, lw=2,
                    label=f"{result.trace}: {lev_text}")
            ax.set_xticks(range(len(grp)), list(grp.x))
    ax.set_xlabel(label(result.factor, result.unit) if result.continuous
                  else f"{result.factor} (level)")
    ax.set_ylabel(label(name, unit))
    ax.set_title(f"Does the effect of {result.factor} depend on {result.trace}?")
    ax.legend(fontsize=8)
    return ax


# -- effects of two-level designs -----------------------------------------------------
def effect_margins(effects, *, unit: str = "", ax: Axes | None = None) -> Axes:
    """Signed effects as dots, in the order of the alias table, against Lenth's margins.

    Lenth (1989) frames an unreplicated screen by two margins around zero: the margin of
    error ME (for one effect at a time) and the simultaneous margin of error SME (for all
    effects together).  Both are drawn as bands; an effect's marker says which it passes:
    open circle (neither), filled circle (ME only), filled diamond (both).

    ``effects``: :class:`trialkit.analysis.effects.EffectsResult`.
    """
    need(effects, ("summary", "lenth"), "effect_margins")
    df = effects.summary.sort_values("alias_order", kind="mergesort")
    lr = effects.lenth
    # wide enough for the alias-table labels (about 0.075 in a character) on the left and
    # the legend on the right: the figure is saved at this size, not cropped to fit
    longest = max((len(str(t)) for t in df.term), default=0)
    ax = new_axes(ax, (4.0 + 0.075 * longest + 2.4, max(2.5, 0.32 * len(df) + 1.4)))
    style_axes(ax)
    y = -np.arange(len(df), dtype=float)  # first alias-table entry on top
    ax.axvspan(-lr.sme, lr.sme, color=SKY, alpha=0.12, lw=0)
    ax.axvspan(-lr.me, lr.me, color=SKY, alpha=0.25, lw=0)
    for edge, ls, what in ((lr.me, "--", "margin of error ME"),
                           (lr.sme, ":", "simultaneous margin SME")):
        ax.axvline(-edge, color=BLACK, ls=ls, lw=1.0)
        ax.axvline(edge, color=BLACK, ls=ls, lw=1.0,
                   label=f"± {what}: {edge:.3g}{' ' + pretty(unit) if unit else ''}")
    ax.axvline(0.0, color=BLACK, lw=0.6)
    eff = df.effect.to_numpy(float)
    me_only = df.significant.to_numpy(bool) & ~df.significant_simultaneous.to_numpy(bool)
    both = df.significant_simultaneous.to_numpy(bool)
    neither = ~(me_only | both)
    ax.plot(eff[neither], y[neither], ls="none", marker="o", mfc="white", mec=BLACK,
            label="within ME (not shown to matter)")
    ax.plot(eff[me_only], y[me_only], ls="none", marker="o", color=ORANGE, mec=BLACK,
            label="beyond ME only (likely)")
    ax.plot(eff[both], y[both], ls="none", marker="D", color=VERMILION, mec=BLACK,
            label="beyond SME too (clear)")
    ax.set_yticks(y, list(df.term))
    reach = max(float(np.abs(eff).max()), lr.sme) * 1.15
    ax.set_xlim(-reach, reach)
    ax.set_ylim(y[-1] - 0.8, 0.8)
    ax.set_xlabel(label(f"effect on {effects.response} (high minus low)", unit))
    ax.set_title(f"Which effects on {effects.response} stand out from the noise "
                 f"(Lenth, {1 - lr.alpha:.0%})")
    ax.legend(fontsize=7, loc="upper left", bbox_to_anchor=(1.01, 1.0), frameon=False)
    return ax


def half_normal(effects, *, unit: str = "", ax: Axes | None = None) -> Axes:
    """|effect| against half-normal quantiles; Lenth's margin of error as a line.

    Effects beyond the margin are labelled; the others should lie near a line through 0.
    """
    need(effects, ("summary", "lenth"), "half_normal")
    df = effects.summary
    ax = new_axes(ax)
    style_axes(ax)
    sig = df.significant.to_numpy(bool)
    ax.plot(df.abs_effect[~sig], df.half_normal_quantile[~sig], ls="none", marker="o",
            color=SKY, mec=BLACK, label="within the noise")
    ax.plot(df.abs_effect[sig], df.half_normal_quantile[sig], ls="none", marker="D",
            color=VERMILION, mec=BLACK, label="beyond the margin")
    ax.axvline(effects.lenth.me, color=BLACK, ls="--", lw=1.2,
               label=f"Lenth margin of error: {effects.lenth.me:.3g}")
    for r in df[sig].itertuples():
        ax.annotate(r.term, (r.abs_effect, r.half_normal_quantile), textcoords="offset points",
                    xytext=(5, -3), fontsize=8)
    ax.set_xlabel(label(f"|effect on {effects.response}|", unit))
    ax.set_ylabel("half-normal quantile (standard deviations)")
    ax.set_title(f"Half-normal plot of the effects on {effects.response}")
    ax.legend(fontsize=8, loc="lower right")
    return ax


# -- diagnostics ----------------------------------------------------------------------
def residual_panels(result, diagnostics=None, *, unit: str = "",
                    fig: Figure | None = None) -> Figure:
    """Residuals against fitted values, against run order (coloured by block) and on a
    normal probability scale; flagged baths are labelled.

    ``result``: ``ModelFit`` (with its ``Diagnostics`` as ``diagnostics``, if computed),
    an ``AnalysisResult`` of :func:`trialkit.analysis.pipeline.analyze_table`, or a
    ``ResidualView``.
    """
    if hasattr(result, "fit") and hasattr(result, "diagnostics") and not fit_like(result):
        result, diagnostics = result.fit, result.diagnostics
    if fit_like(result):
        from trialkit.figures.views import residual_view

        result = residual_view(result, diagnostics, unit=unit)
    need(result, ("table", "response"), "residual_panels")
    t = result.table
    unit = unit or getattr(result, "unit", "")
    if fig is None:
        with plt.rc_context(STYLE):
            fig = plt.figure(figsize=(12.5, 3.6))  # titles apart
    a1, a2, a3 = fig.subplots(1, 3)
    for ax in (a1, a2, a3):
        style_axes(ax)
    a1.plot(t.fitted, t.residual, ls="none", marker="o", color=BLUE, mec=BLACK)
    a1.axhline(0, color=BLACK, lw=1)
    if "flagged" in t:
        for r in t[t.flagged.astype(bool)].itertuples():
            a1.annotate(str(r.bath), (r.fitted, r.residual), textcoords="offset points",
                        xytext=(4, 4), fontsize=8, color=VERMILION)
    a1.set_xlabel(label(f"fitted {result.response}", unit))
    a1.set_ylabel(label("residual", unit))
    a1.set_title("Residuals against fitted values")
    for i, (blk, grp) in enumerate(t.groupby("block", sort=True)):
        grp = grp.sort_values("run")
        a2.plot(grp.run, grp.residual, marker=MARKERS[i % len(MARKERS)], ls="-", lw=0.8,
                color=PALETTE[i % len(PALETTE)], mec=BLACK, label=f"block {blk}")
    a2.axhline(0, color=BLACK, lw=1)
    a2.set_xlabel("run order (position in set-up, count)")
    a2.set_ylabel(label("residual", unit))
    a2.set_title("Residuals in run order (drift shows here)")
    a2.legend(fontsize=8)
    nx = t.normal_x if "normal_x" in t else t.residual
    a3.plot(nx, t.normal_quantile, ls="none", marker="o", color=GREEN, mec=BLACK)
    what = getattr(result, "normal_label", "residual")
    a3.set_xlabel(label(what, "" if what.startswith("studentized") else unit))
    a3.set_ylabel("normal quantile (standard deviations)")
    a3.set_title("Normal probability of the residuals")
    fig.suptitle(f"Model checks for {result.response}")
    return fig


# -- surfaces -------------------------------------------------------------------------
def _surface(view, x=None, y=None, unit: str = ""):
    if not hasattr(view, "grid_x"):
        from trialkit.figures.surface_views import as_surface_view

        view = as_surface_view(view, x, y, **({"unit": unit} if unit else {}))
    need(view, ("grid_x", "grid_y", "z", "points", "x", "y"), "contour")
    return view


def contour(view, x: str | None = None, y: str | None = None, *, unit: str = "",
            ax: Axes | None = None, title: str | None = None) -> Axes:
    """Filled contours of a fitted response over two factors, the baths and the optimum.

    ``view``: a ``SurfaceResult`` or ``DesirabilityResult`` of :mod:`trialkit.analysis`
    (``x``, ``y`` choose the factors; ``unit`` is the response's) or a
    :class:`trialkit.figures.surface_views.SurfaceView`.
    """
    v = _surface(view, x, y, unit)
    ax = new_axes(ax, (6.0, 4.6))
    cs = ax.contourf(v.grid_x, v.grid_y, v.z, levels=12, cmap=SEQUENTIAL)
    lines = ax.contour(v.grid_x, v.grid_y, v.z, levels=12, colors="white", linewidths=0.5)
    ax.clabel(lines, fontsize=7, fmt="%.3g")
    cbar = ax.figure.colorbar(cs, ax=ax)
    what = "desirability" if v.response == "desirability" else f"predicted {v.response}"
    cbar.set_label(label(what, v.unit or ("0 to 1" if v.response == "desirability" else "")))
    ax.plot(v.points.x, v.points.y, ls="none", marker="o", color="white", mec=BLACK,
            label="baths")
    if v.optimum:
        ax.plot([v.optimum["x"]], [v.optimum["y"]], ls="none", marker="*", ms=16,
                color=ORANGE, mec=BLACK, label="best setting")
    ax.set_xlabel(label(v.x, v.x_unit))
    ax.set_ylabel(label(v.y, v.y_unit))
    held = ", ".join(f"{k} = {val:g}" if isinstance(val, float) else f"{k} = {val}"
                     for k, val in (v.held or {}).items())
    default = f"{what.capitalize()} over {v.x} and {v.y}" + (f"\n({held})" if held else "")
    ax.set_title(textwrap.fill(title, 55) if title else default)  # a long title wrapped
    ax.legend(fontsize=8, loc="upper left", framealpha=0.8)
    return ax


def surface3d(view, x: str | None = None, y: str | None = None, *, unit: str = "",
              ax: Axes | None = None) -> Axes:
    """The same fitted response as a 3-D surface, with the optimum marked."""
    v = _surface(view, x, y, unit)
    if ax is None:
        with plt.rc_context(STYLE):
            fig = plt.figure(figsize=(6.4, 5.0))
            ax = fig.add_subplot(1, 1, 1, projection="3d")
    XX, YY = np.meshgrid(v.grid_x, v.grid_y)
    ax.plot_surface(XX, YY, v.z, cmap=SEQUENTIAL, alpha=0.85, linewidth=0)
    if v.optimum:
        ax.scatter([v.optimum["x"]], [v.optimum["y"]], [v.optimum["value"]], marker="*",
                   s=160, color=ORANGE, edgecolor=BLACK, label="best setting")
    ax.set_xlabel(label(v.x, v.x_unit))
    ax.set_ylabel(label(v.y, v.y_unit))
    ax.set_zlabel(label(f"predicted {v.response}", v.unit))
    ax.set_title(f"Fitted {v.response} over {v.x} and {v.y}")
    return ax


def desirability_contour(view, x: str | None = None, y: str | None = None, *,
                         ax: Axes | None = None) -> Axes:
    """Overall desirability (0 = unacceptable, 1 = ideal) over two factors.

    ``view``: a ``DesirabilityResult`` (``x``, ``y`` choose the factors) or a SurfaceView.
    """
    v = _surface(view, x, y)
    return contour(v, ax=ax, title=f"How well each setting meets every aim at once "
                                   f"(desirability over {v.x} and {v.y})")


# -- sweeps and kinetics --------------------------------------------------------------
def sweep(view, *, unit: str = "", ax: Axes | None = None) -> Axes:
    """Fitted sweep curve with its 95 % band, bath means, best level and lean level.

    ``view``: a :class:`trialkit.analysis.sweep.SweepResult` or a SweepView.
    """
    if not hasattr(view, "curve"):
        from trialkit.figures.surface_views import as_sweep_view

        view = as_sweep_view(view, unit=unit)
    need(view, ("curve", "observed", "best", "lean_level", "factor"), "sweep")
    ax = new_axes(ax)
    style_axes(ax)
    c = view.curve
    ax.fill_between(c.x, c.ci_low, c.ci_high, color=BLUE, alpha=0.18,
                    label="95 % confidence band")
    ax.plot(c.x, c.predicted, color=BLUE, lw=2, label="fitted curve")
    ax.plot(view.observed.x, view.observed["mean"], ls="none", marker="o", color=BLACK,
            label="bath means")
    ax.axvline(view.best, color=VERMILION, ls="--",
               label=f"best: {view.best:.3g} {view.factor_unit}".rstrip())
    if view.lean_level is not None:
        ax.axvline(view.lean_level, color=GREEN, ls=":", lw=2,
                   label=f"lean level: {view.lean_level:.3g} {view.factor_unit}".rstrip())
    ax.set_xlabel(label(view.factor, view.factor_unit))
    ax.set_ylabel(label(view.response, view.unit))
    ax.set_title(f"{view.response.capitalize()} across the {view.factor} sweep")
    ax.legend(fontsize=8)
    return ax


def kinetics(view, *, ax: Axes | None = None) -> Axes:
    """Rust coverage against time per bath: readings, fitted curves, time to 90 % removal.

    ``view``: :class:`trialkit.figures.views.KineticsView`.
    """
    need(view, ("readings", "curves", "time_to_90"), "kinetics")
    n = view.curves.bath.nunique()
    ax = new_axes(ax, (8.6, 4.6) if n > 6 else (6.4, 4.2))
    style_axes(ax)
    for i, (bath, grp) in enumerate(view.curves.groupby("bath", sort=True)):
        col, m = PALETTE[i % len(PALETTE)], MARKERS[(i // len(PALETTE)) % len(MARKERS)]
        t90 = view.time_to_90.get(str(bath), float("nan"))
        tag = f"{t90:.3g} h to 90 %" if np.isfinite(t90) else "90 % not reached"
        ax.plot(grp.elapsed_h, grp.coverage_pct, color=col, lw=1.4,
                ls=("-", "--", ":")[(i // len(PALETTE)) % 3], label=f"{bath}: {tag}")
        r = view.readings[view.readings.bath.astype(str) == str(bath)]
        ax.plot(r.elapsed_h, r.coverage_pct, ls="none", marker=m, color=col, mec=BLACK,
                ms=3.5)
        if np.isfinite(t90) and n <= 6:
            ax.axvline(t90, color=col, ls=":", lw=1)
    ax.set_xlabel("time in the bath (h)")
    ax.set_ylabel("rust coverage (% of area)")
    ax.set_title("Rust coverage over time in each bath")
    if n > 6:  # many baths: the legend goes beside the plot, out of the curves' way
        ax.legend(fontsize=6.5, loc="upper left", bbox_to_anchor=(1.01, 1.0),
                  ncol=1 if n <= 14 else 2, frameon=False)
    else:
        ax.legend(fontsize=7)
    return ax


