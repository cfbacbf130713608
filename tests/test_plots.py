"""Figures: assertions on the artists drawn (lines, points, labels, units).

Data: the invented trials of ``tests/report_trials.py`` (seeded; self-consistency only)
and the bundled example trials (invented readings).  Independent checks: a two-level main
effect equals mean(high) - mean(low) of the factorial runs (Box, Hunter & Hunter 2005,
ch. 5); Blom (1958) normal plotting positions from scipy.stats.norm.
"""

from __future__ import annotations

import os

os.environ.setdefault("MPLBACKEND", "Agg")

import matplotlib  # noqa: E402

matplotlib.use("Agg")

import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
import pandas as pd  # noqa: E402
import pytest  # noqa: E402
import report_trials as rt  # noqa: E402
from matplotlib.collections import PolyCollection  # noqa: E402
from scipy import stats  # noqa: E402

from trialkit.figures import (
    plots,  # noqa: E402
    views,  # noqa: E402
)
from trialkit.figures import surface_views as surfaces


@pytest.fixture(autouse=True)
def _close_figures():
    yield
    plt.close("all")


@pytest.fixture(scope="module")
def screening():
    return rt.analysed("screening")[0]


@pytest.fixture(scope="module")
def surface():
    return rt.analysed("surface")[0]


@pytest.fixture(scope="module")
def sweep():
    return rt.analysed("sweep")[0]


def _xy(line):
    return np.asarray(line.get_xdata(), float), np.asarray(line.get_ydata(), float)


def test_main_effects_line_ends_equal_two_level_effect(screening):
    fit = screening.fits["removal"]
    fig = plots.main_effects(fit, unit="%")
    ax = fig.axes[0]
    assert ax.get_xlabel() == "chelator (% w/v)"
    assert ax.get_ylabel() == "removal (%)"
    x, y = _xy(ax.lines[0])
    assert x[0] == pytest.approx(2.0) and x[-1] == pytest.approx(10.0)
    # Box, Hunter & Hunter: main effect = mean at high - mean at low (factorial runs)
    b = screening.baths
    fac = b[b.point == "factorial"]
    effect = fac[fac.chelator == 10].removal.mean() - fac[fac.chelator == 2].removal.mean()
    assert y[-1] - y[0] == pytest.approx(effect, rel=1e-9)
    # the observed baths: one point per bath in the model
    px, py = _xy(ax.lines[1])
    assert len(px) == fit.n == 10
    assert sorted(py) == pytest.approx(sorted(b[b.point != "control"].removal))
    assert isinstance(ax.collections[0], PolyCollection)  # the confidence band
    # categorical panel: levels as tick labels
    cat = fig.axes[2]
    assert [t.get_text() for t in cat.get_xticklabels()] == ["none", "added"]
    assert cat.get_xlabel() == "surfactant (level)"
    assert "Main effects on removal" in fig.texts[0].get_text()


def test_interaction_draws_one_line_per_level(screening):
    fit = screening.fits["removal"]
    ax = plots.interaction(fit, "chelator", "ph", unit="%")
    model_lines = [ln for ln in ax.lines if ln.get_linestyle() == "-"]
    assert len(model_lines) == 2
    labels = [t.get_text() for t in ax.get_legend().get_texts()]
    assert labels == ["ph: pH 5.5", "ph: pH 7.5"]
    # each line equals the model's prediction at that pH, averaged over the surfactant
    x, y = _xy(model_lines[1])
    pred = fit.predict(pd.DataFrame({"chelator": [x[-1]] * 2, "ph": [7.5] * 2,
                                     "surfactant": ["none", "added"]})).predicted.mean()
    assert y[-1] == pytest.approx(pred)
    assert ax.get_xlabel() == "chelator (% w/v)" and ax.get_ylabel() == "removal (%)"
    assert "depend on ph" in ax.get_title()


def test_effect_margins_dots_in_alias_order_with_both_margins(screening):
    eff = screening.effects["removal"]
    ax = plots.effect_margins(eff, unit="%")
    dots = [ln for ln in ax.lines if ln.get_marker() in ("o", "D")]
    xs = np.concatenate([ln.get_xdata() for ln in dots])
    assert sorted(xs) == pytest.approx(sorted(eff.summary.effect))  # signed, every effect
    assert len(xs) == 7  # 2^3 full factorial: 7 effects
    labels = [t.get_text() for t in ax.get_yticklabels()]
    assert labels == list(eff.summary.sort_values("alias_order").term)
    assert labels[:3] == ["chelator", "ph", "surfactant"]  # main effects first, on top
    dashed = sorted(abs(ln.get_xdata()[0]) for ln in ax.lines if ln.get_linestyle() == "--")
    dotted = sorted(abs(ln.get_xdata()[0]) for ln in ax.lines if ln.get_linestyle() == ":")
    assert dashed == pytest.approx([eff.lenth.me] * 2)
    assert dotted == pytest.approx([eff.lenth.sme] * 2)
    clear = [ln for ln in dots if ln.get_marker() == "D"][0]
    assert set(np.abs(clear.get_xdata())) == set(
        eff.summary.abs_effect[eff.summary.significant_simultaneous])
    assert ax.get_xlabel() == "effect on removal (high minus low) (%)"


def test_half_normal_points_and_lenth_margin(screening):
    eff = screening.effects["removal"]
    ax = plots.half_normal(eff, unit="%")
    quiet, loud = ax.lines[0], ax.lines[1]
    assert len(quiet.get_xdata()) + len(loud.get_xdata()) == len(eff.summary)
    assert sorted(loud.get_xdata()) == pytest.approx(
        sorted(eff.summary[eff.summary.significant].abs_effect))
    assert ax.lines[2].get_xdata()[0] == pytest.approx(eff.lenth.me)
    assert {t.get_text() for t in ax.texts} == set(eff.summary[eff.summary.significant].term)
    assert ax.get_xlabel() == "|effect on removal| (%)"


def test_residual_panels(surface):
    fit = surface.fits["removal"]
    fig = plots.residual_panels(fit, unit="%")
    a1, a2, a3 = fig.axes
    x, y = _xy(a1.lines[0])
    assert x == pytest.approx(fit.fitted) and y == pytest.approx(fit.resid)
    assert a1.get_ylabel() == "residual (%)"
    # run order coloured by block: one line per block, the runs of that block
    per_block = [ln for ln in a2.lines if len(ln.get_xdata()) > 2]
    assert len(per_block) == 2
    assert sorted(np.concatenate([ln.get_xdata() for ln in per_block])) == \
        sorted(fit.natural.run)
    assert [t.get_text() for t in a2.get_legend().get_texts()] == ["block 1", "block 2"]
    # normal probability: Blom positions (i - 3/8) / (n + 1/4)
    rx, qy = _xy(a3.lines[0])
    n = fit.n
    expected = stats.norm.ppf((np.arange(1, n + 1) - 0.375) / (n + 0.25))
    assert qy[np.argsort(rx)] == pytest.approx(expected)
    assert "standard deviations" in a3.get_ylabel()


def test_residual_panels_with_diagnostics(surface):
    res = surface.results["removal"]
    d = res.diagnostics.table
    fig = plots.residual_panels(res, unit="%")
    a3 = fig.axes[2]
    x, q = _xy(a3.lines[0])
    assert x == pytest.approx(d.studentized) and q == pytest.approx(d.normal_quantile)
    assert a3.get_xlabel() == "studentized residual (no unit)"
    labelled = {t.get_text() for t in fig.axes[0].texts}
    assert labelled == set(d[d.flagged].bath)


def test_contour_marks_design_points_and_optimum(surface):
    res = surface.surfaces["removal"]
    ax = plots.contour(res, unit="%")
    pts, star = ax.lines[0], ax.lines[1]
    assert len(pts.get_xdata()) == res.fit.n
    assert star.get_marker() == "*"
    assert star.get_xdata()[0] == pytest.approx(res.optimum["settings"]["chelator"])
    assert star.get_ydata()[0] == pytest.approx(res.optimum["settings"]["ph"])
    # invented truth: removal peaks at chelator 5 % w/v, pH 6.5
    assert abs(star.get_xdata()[0] - 5.0) < 0.6 and abs(star.get_ydata()[0] - 6.5) < 0.2
    assert ax.get_xlabel() == "chelator (% w/v)" and ax.get_ylabel() == "ph (pH)"
    cbar = ax.figure.axes[-1]
    assert cbar.get_ylabel() == "predicted removal (%)"


def test_surface3d_axes_and_optimum(surface):
    res = surface.surfaces["removal"]
    ax = plots.surface3d(surfaces.from_surface(res, unit="%"))
    assert ax.get_zlabel() == "predicted removal (%)"
    assert ax.name == "3d"
    offsets = ax.collections[-1]._offsets3d
    assert float(offsets[2][0]) == pytest.approx(res.optimum["predicted"])


def test_sweep_curve_band_means_best_and_lean_level(sweep):
    res = sweep.sweeps["removal"]
    ax = plots.sweep(res, unit="%")
    curve, means = ax.lines[0], ax.lines[1]
    x, y = _xy(curve)
    assert x[0] == pytest.approx(2.0) and x[-1] == pytest.approx(20.0)
    assert len(means.get_xdata()) == 6  # six geometric levels
    b = sweep.baths
    assert sorted(means.get_ydata()) == pytest.approx(sorted(b.groupby("chelator").removal.mean()))
    best = [ln for ln in ax.lines if ln.get_linestyle() == "--"][0]
    spot = [ln for ln in ax.lines if ln.get_linestyle() == ":"][0]
    assert best.get_xdata()[0] == pytest.approx(res.best)
    assert spot.get_xdata()[0] == pytest.approx(res.lean_level)
    assert spot.get_xdata()[0] <= best.get_xdata()[0]
    assert ax.get_ylabel() == "removal (%)" and ax.get_xlabel() == "chelator (% w/v)"
    assert any(isinstance(c, PolyCollection) for c in ax.collections)


def test_kinetics_one_curve_per_bath_with_time_to_90(sweep):
    kv = views.kinetics_view(sweep.timecourse, sweep.kinetics)
    ax = plots.kinetics(kv)
    labels = [t.get_text() for t in ax.get_legend().get_texts()]
    assert len(labels) == len(sweep.kinetics) == 6
    for bath, fit in sweep.kinetics.items():
        lab = next(t for t in labels if t.startswith(bath + ":"))
        if np.isfinite(fit.time_to_90_h):
            assert f"{fit.time_to_90_h:.3g} h to 90 %" in lab
        else:
            assert "not reached" in lab
    assert ax.get_xlabel() == "time in the bath (h)"
    assert ax.get_ylabel() == "rust coverage (% of area)"
    # each fitted curve starts at the fitted initial coverage
    first = ax.lines[0]
    bath0 = sorted(sweep.kinetics)[0]
    assert first.get_ydata()[0] == pytest.approx(sweep.kinetics[bath0].params["c0"])


def test_desirability_contour_marks_best_compromise(surface):
    res = surface.desirability
    assert res is not None
    ax = plots.desirability_contour(res, "chelator", "ph")
    star = ax.lines[1]
    assert star.get_xdata()[0] == pytest.approx(res.settings["chelator"])
    assert star.get_ydata()[0] == pytest.approx(res.settings["ph"])
    assert ax.figure.axes[-1].get_ylabel() == "desirability (0 to 1)"
    assert "every aim" in ax.get_title()


def test_save_png_and_svg(tmp_path, screening):
    ax = plots.effect_margins(screening.effects["removal"])
    png = plots.save(ax, tmp_path / "p.png").read_bytes()
    assert png[:8] == b"\x89PNG\r\n\x1a\n"
    svg = plots.save(ax, tmp_path / "p.svg").read_text()
    assert "<svg" in svg and "chelator" in svg  # svg.fonttype none keeps text as text
    with pytest.raises(plots.PlotError, match=r"\.svg or \.png"):
        plots.save(ax, tmp_path / "p.jpg")


def test_wrong_object_is_a_clear_error():
    with pytest.raises(plots.PlotError, match="effect_margins needs an object with"):
        plots.effect_margins(object())


def test_palette_is_okabe_ito():
    # Okabe & Ito (2008), Color Universal Design, the eight colours in their order
    assert plots.PALETTE[:3] == ("#0072B2", "#E69F00", "#009E73")
    assert len(set(plots.PALETTE)) == 8


@pytest.mark.parametrize("kind", rt.ALL_KINDS)
def test_every_figure_on_each_trial(kind):
    data, _ = rt.analysed(kind)
    assert data.fits, data.notes
    for name, fit in data.fits.items():
        unit = data.unit(name)
        if fit.df_resid > 0:
            fig = plots.residual_panels(fit, unit=unit)
            assert len(fig.axes) == 3 and len(fig.axes[0].lines[0].get_xdata()) == fit.n
        if name in data.sweeps:
            ax = plots.sweep(surfaces.from_sweep(data.sweeps[name], unit=unit))
            assert len(ax.lines[1].get_xdata()) == data.sweeps[name].fit.natural[
                data.sweeps[name].factor.name].nunique()
            continue
        fig = plots.main_effects(fit, unit=unit)
        assert len(fig.axes) == len(views.model_factors(fit))
        for ax in fig.axes:
            assert "(" in ax.get_xlabel()
        if name in data.effects:
            ax = plots.effect_margins(data.effects[name])
            n_dots = sum(len(ln.get_xdata()) for ln in ax.lines if ln.get_marker() in "oD")
            assert n_dots == len(data.effects[name].summary)
            ax = plots.half_normal(data.effects[name], unit=unit)
            assert len(ax.lines) == 3
        if name in data.surfaces and len(data.surfaces[name].factors) >= 2:
            ax = plots.contour(surfaces.from_surface(data.surfaces[name], unit=unit))
            assert ax.lines[1].get_marker() == "*"
        plt.close("all")
    if data.kinetics:
        ax = plots.kinetics(views.kinetics_view(data.timecourse, data.kinetics))
        assert len(ax.get_legend().get_texts()) == len(data.kinetics)
    if data.desirability is not None:
        cont = [f.name for f in data.trial.factors if f.is_continuous]
        ax = plots.desirability_contour(data.desirability, cont[0], cont[1])
        assert ax.lines[1].get_xdata()[0] == pytest.approx(data.desirability.settings[cont[0]])
