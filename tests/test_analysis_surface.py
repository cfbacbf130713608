"""Response surfaces (trialkit.analysis.surface)."""

from __future__ import annotations

import itertools
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from trialkit.analysis.model import fit_model
from trialkit.analysis.surface import fit_surface, region_statistics
from trialkit.exceptions import AnalysisError
from trialkit.trial.factors import Factor

REF = Path(__file__).parent / "reference" / "stats"
FS = [Factor.continuous("chelator", 2.0, 10.0, unit="% w/v"), Factor.continuous("ph", 5.5, 7.5)]
TRUE_OPT = {"chelator": 5.0, "ph": 6.5}


def _truth(c, ph):
    """Invented surface (self-consistency only): maximum 80 at 5 % chelator, pH 6.5."""
    return 80 - 1.0 * (c - 5) ** 2 - 12 * (ph - 6.5) ** 2 + 0.5 * (c - 5) * (ph - 6.5)


def _design():
    pts = list(itertools.product([2.0, 6.0, 10.0], [5.5, 6.5, 7.5])) * 2  # 3^2, twice
    return pd.DataFrame(pts, columns=["chelator", "ph"])


def test_canonical_analysis_of_known_surface():
    d = _design()
    d["removal"] = _truth(d.chelator, d.ph) + np.tile([0.3, -0.3], 9)
    s = fit_surface(fit_model(d, "removal", FS, "quadratic", block=None), n_boot=0)
    assert s.kind == "maximum"
    assert s.stationary_point["chelator"] == pytest.approx(5.0, abs=0.1)
    assert s.stationary_point["ph"] == pytest.approx(6.5, abs=0.02)
    # coded eigenvalues of B: chelator half-range 4, pH half-range 1
    B_true = np.array([[-16.0, 0.5 * 4 * 1 / 2], [0.5 * 4 * 1 / 2, -12.0]])
    np.testing.assert_allclose(np.sort(s.eigenvalues), np.sort(np.linalg.eigvalsh(B_true)),
                               atol=0.3)
    o = s.optimum
    assert o["pi_low"] < o["predicted"] < o["pi_high"] and o["on_boundary"] == []
    grid = s.grid("chelator", "ph", n=11)
    assert len(grid) == 121 and {"chelator", "ph", "predicted", "pi_low"} <= set(grid)
    assert grid.predicted.max() <= o["predicted"] + 1e-9


def test_best_point_on_boundary_when_stationary_point_outside():
    d = _design()
    d["y"] = 50 + 3 * (d.chelator - 6) / 4 - (d.ph - 6.5) ** 2  # rising in chelator
    s = fit_surface(fit_model(d, "y", FS, "quadratic", block=None))
    assert s.optimum["settings"]["chelator"] == pytest.approx(10.0)
    assert s.optimum["on_boundary"] == ["chelator"]
    assert s.kind == "ridge"  # chelator^2 coefficient is zero
    low = fit_surface(fit_model(d, "y", FS, "quadratic", block=None), aim="lower")
    assert low.optimum["settings"]["chelator"] == pytest.approx(2.0)


def test_optimum_region_covers_truth_in_200_simulations():
    """Self-consistency on invented data (marked invented): the Box–Hunter confidence region
    of the fitted optimum covers the true optimum (5 % chelator, pH 6.5) in >= 90 % of 200
    seeded simulations (nominal 95 %)."""
    rng = np.random.default_rng(6_500)
    d = _design()
    mean = _truth(d.chelator, d.ph).to_numpy()
    Y = mean[:, None] + rng.normal(0, 1.5, (len(d), 200))
    d["removal"] = Y[:, 0]
    fit = fit_model(d, "removal", FS, "quadratic", block=None)
    stat, crit = region_statistics(fit, Y, TRUE_OPT)
    covered = int((stat <= crit).sum())
    assert covered >= 180, f"covered {covered}/200"
    # the batched statistic equals the one-fit method for the first simulation
    s = fit_surface(fit, n_tries=0)
    assert s.region_statistic(TRUE_OPT)[0] == pytest.approx(stat[0], rel=1e-10)
    assert s.region_contains(TRUE_OPT) == bool(stat[0] <= crit)


def test_bootstrap_interval_brackets_best_point():
    rng = np.random.default_rng(11)
    d = _design()
    d["removal"] = _truth(d.chelator, d.ph) + rng.normal(0, 1.5, len(d))
    s = fit_surface(fit_model(d, "removal", FS, "quadratic", block=None), n_boot=2000, seed=3)
    b = s.bootstrap.set_index("factor")
    for name in ("chelator", "ph"):
        assert b.loc[name, "low"] < s.optimum["settings"][name] < b.loc[name, "high"]
    assert 0 < b.loc["chelator", "high"] - b.loc["chelator", "low"] < 8


def test_surface_needs_second_order_model():
    d = _design()
    d["y"] = _truth(d.chelator, d.ph)
    fs3 = FS + [Factor.continuous("t", 0, 1)]
    d["t"] = np.tile([0.0, 1.0], 9)
    fit = fit_model(d, "y", fs3, "chelator + ph + t + chelator:ph:t", block=None)
    with pytest.raises(AnalysisError, match="second order"):
        fit_surface(fit)
