"""Concentration sweeps (trialkit.analysis.sweep)."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
from scipy import stats

from trialkit.analysis.linear import batched_refit
from trialkit.analysis.sweep import fieller_vertex, fit_sweep
from trialkit.exceptions import AnalysisError
from trialkit.trial.factors import Factor

CHELATOR = Factor.continuous("chelator", 2.0, 20.0, unit="% w/v")
LEVELS = np.repeat([2.0, 3.5, 5.0, 7.5, 10.0, 15.0, 20.0], 3)


def _truth(x):
    """Invented sweep (self-consistency only): best near 5 % w/v, falling off at high levels."""
    return 85.0 - 0.25 * (x - 5.0) ** 2


def _table(seed=0, sd=2.0):
    rng = np.random.default_rng(seed)
    return pd.DataFrame({"chelator": LEVELS,
                         "removal": _truth(LEVELS) + rng.normal(0, sd, LEVELS.size)})


def test_fieller_endpoints_are_where_the_slope_test_is_just_significant():
    """Reference library: at each Fieller end the statsmodels t test of the slope
    b1 + 2 b2 x (a linear contrast) has |t| equal to the critical t."""
    df = _table(seed=4)
    s = fit_sweep(df, "removal", CHELATOR, n_boot=0)
    X = sm.add_constant(np.column_stack([df.chelator, df.chelator ** 2]))
    ols = sm.OLS(df.removal.to_numpy(), X).fit()
    tcrit = stats.t.ppf(0.975, ols.df_resid)
    assert s.fieller_bounded
    for x in (s.fieller_low, s.fieller_high):
        t = ols.t_test(np.array([[0.0, 1.0, 2 * x]])).tvalue.item()
        assert abs(t) == pytest.approx(tcrit, rel=1e-8)
    assert s.vertex == pytest.approx(-ols.params[1] / (2 * ols.params[2]), rel=1e-10)
    assert s.fieller_low < s.best < s.fieller_high


def test_fieller_interval_covers_truth_in_200_simulations():
    """Self-consistency on invented data: Fieller 95 % interval covers the true best
    level (5 % w/v) in >= 90 % of 200 seeded simulations (all refits batched)."""
    rng = np.random.default_rng(2_000)
    X = np.column_stack([np.ones_like(LEVELS), LEVELS, LEVELS ** 2])
    Y = _truth(LEVELS)[:, None] + rng.normal(0, 2.0, (LEVELS.size, 200))
    B = batched_refit(X, Y)
    R = Y - X @ B
    s2 = (R * R).sum(axis=0) / (LEVELS.size - 3)
    xtx = np.linalg.inv(X.T @ X)
    t = stats.t.ppf(0.975, LEVELS.size - 3)
    hits = 0
    for j in range(200):
        v = xtx * s2[j]
        lo, hi, _ = fieller_vertex(B[1, j], B[2, j], v[1, 1], v[1, 2], v[2, 2], t)
        hits += lo <= 5.0 <= hi
    assert hits >= 180, f"covered {hits}/200"
    # and the library route agrees with this batched computation on the first data set
    s = fit_sweep(pd.DataFrame({"chelator": LEVELS, "removal": Y[:, 0]}), "removal",
                  CHELATOR, n_boot=0)
    v = xtx * s2[0]
    lo, hi, _ = fieller_vertex(B[1, 0], B[2, 0], v[1, 1], v[1, 2], v[2, 2], t)
    assert (s.fieller_low, s.fieller_high) == pytest.approx((lo, hi), rel=1e-8)


def test_lean_level_falloff_and_bootstrap():
    df = _table(seed=9, sd=0.5)
    s = fit_sweep(df, "removal", CHELATOR, tolerance=3.0, n_boot=2000, seed=5)
    # predicted within 3 of the best from about 5 - sqrt(3/0.25) = 1.54 -> the range start
    assert s.lean_level == pytest.approx(2.0, abs=0.05)
    assert s.falls_off and s.drop_at_high > 3.0
    assert s.boot_low < s.best < s.boot_high
    assert s.boot_high - s.boot_low < s.fieller_high - s.fieller_low + 1.0
    tight = fit_sweep(df, "removal", CHELATOR, tolerance=0.5, n_boot=0)
    assert 2.0 < tight.lean_level < tight.best  # lowest level within 0.5 of the best
    pred = tight.fit.predict(pd.DataFrame({"chelator": [tight.lean_level]})).predicted[0]
    assert pred >= tight.optimum["predicted"] - 0.5 - 1e-6
    curve = s.grid(n=21)
    assert len(curve) == 21 and (curve.pi_low < curve.ci_low).all()
    d = s.to_dict()
    assert d["optimum"]["settings"] == {"chelator": s.best}
    assert d["sweep"]["falls_off"] is True


def test_no_falloff_when_response_keeps_rising():
    x = LEVELS
    df = pd.DataFrame({"chelator": x, "removal": 50 + 2 * x - 0.02 * x ** 2
                       + np.tile([0.2, -0.2, 0.0], 7)})
    s = fit_sweep(df, "removal", CHELATOR, n_boot=0)
    assert not s.falls_off and s.best == pytest.approx(20.0)


def test_sweep_needs_three_levels_and_continuous_factor():
    df = pd.DataFrame({"chelator": [2.0, 2, 20, 20], "removal": [1.0, 2, 3, 4]})
    with pytest.raises(AnalysisError):
        fit_sweep(df, "removal", CHELATOR)
    with pytest.raises(AnalysisError, match="continuous"):
        fit_sweep(df, "removal", Factor.categorical("chelator", ["2", "20"]))


def test_bootstrap_interval_of_best_level_covers_in_300_fresh_simulations():
    # invented data (self-consistency): 5 levels x 3 days, vertex at 4.5 % w/v, SD 1.5;
    # 300 seeded trials, 499 resamples each.  Raw-residual percentile intervals covered
    # 0.85 here (issue 15); the bootstrap-calibrated slope test must cover 0.93-0.97.
    f = Factor.continuous("chelator", 1.0, 9.0)
    x = np.repeat([1.0, 3.0, 5.0, 7.0, 9.0], 3)
    day = np.tile([1, 2, 3], 5)
    hits, inside = 0, True
    for seed in range(300):
        rng = np.random.default_rng(70_000 + seed)
        y = 20 + 0.3 * (x - 4.5) ** 2 + rng.normal(0, 1.5, x.size)
        s = fit_sweep(pd.DataFrame({"chelator": x, "t": y, "day": day}), "t", f,
                      aim="lower", n_boot=499, seed=seed, block="day")
        hits += s.boot_low <= 4.5 <= s.boot_high
        inside &= 1.0 <= s.boot_low <= s.boot_high <= 9.0
    assert 0.93 <= hits / 300 <= 0.97
    assert inside  # the interval never leaves the swept range


def test_modified_residuals_have_the_error_spread():
    # Davison & Hinkley (1997) section 6.2.3: r / sqrt(1 - h) has the error's variance
    from trialkit.analysis.linear import least_squares, modified_residuals

    rng = np.random.default_rng(3)
    X = np.column_stack([np.ones(12), np.linspace(-1, 1, 12), np.linspace(-1, 1, 12) ** 2])
    ratios = []
    for _ in range(400):
        ls = least_squares(X, rng.normal(0, 1.0, 12))
        r = modified_residuals(ls)
        ratios.append((r @ r / r.size) / (ls.resid @ ls.resid / 12))
    assert np.mean(ratios) == pytest.approx(12 / 9, rel=0.05)  # n / (n - p), about
