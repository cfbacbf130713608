"""Residual diagnostics (trialkit.analysis.diagnostics)."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
from scipy import stats
from statsmodels.stats.outliers_influence import OLSInfluence

from trialkit.analysis.diagnostics import box_cox_profile, diagnose
from trialkit.analysis.model import fit_model
from trialkit.trial.factors import Factor

FS = [Factor.continuous("chelator", 2, 10), Factor.continuous("ph", 5.5, 7.5)]


def _data(seed=8, n=24, multiplicative=False):
    """Invented baths (self-consistency only)."""
    rng = np.random.default_rng(seed)
    c = rng.uniform(2, 10, n)
    ph = rng.uniform(5.5, 7.5, n)
    mean = 5 + 4 * c + 6 * (ph - 5.5)
    y = mean * np.exp(rng.normal(0, 0.25, n)) if multiplicative else \
        mean + rng.normal(0, 1.0, n)
    return pd.DataFrame({"bath": [f"B{i + 1:02d}" for i in range(n)], "run": np.arange(n, 0, -1),
                         "chelator": c, "ph": ph, "y": y})


def test_influence_measures_equal_statsmodels():
    """Reference library: statsmodels OLSInfluence (leverage, studentized, Cook's D)."""
    df = _data()
    df.loc[3, "y"] += 8  # an outlier
    d = diagnose(fit_model(df, "y", FS, "main", block=None))
    ols = sm.OLS(df.y, sm.add_constant(df[["chelator", "ph"]])).fit()
    inf = OLSInfluence(ols)
    np.testing.assert_allclose(d.table.leverage, inf.hat_matrix_diag, rtol=1e-10)
    np.testing.assert_allclose(d.table.studentized, inf.resid_studentized_internal, rtol=1e-9)
    np.testing.assert_allclose(d.table.cooks_distance, inf.cooks_distance[0], rtol=1e-9)
    assert d.table.run.tolist() == df.run.tolist()
    assert "B04" in d.flagged.bath.tolist()
    w, p = stats.shapiro(ols.resid)
    assert d.normality["statistic"] == pytest.approx(w) and d.normality["p"] == pytest.approx(p)


def test_box_cox_profile_matches_scipy_for_mean_only_model():
    """Reference library: scipy.stats.boxcox_llf equals our profile up to a constant."""
    y = _data(multiplicative=True).y.to_numpy()
    lams = np.array([-1.0, -0.3, 0.0, 0.4, 1.0])
    ours = box_cox_profile(np.ones((len(y), 1)), y, lams)
    ref = np.array([stats.boxcox_llf(lam, y) for lam in lams])
    np.testing.assert_allclose(ours - ours[0], ref - ref[0], rtol=1e-9, atol=1e-9)


def test_box_cox_suggests_log_when_spread_grows_with_mean():
    df = _data(seed=21, n=60, multiplicative=True)
    d = diagnose(fit_model(df, "y", FS, "main", block=None))
    assert d.spread["rho"] > 0
    assert d.box_cox["ci_low"] <= 0.0 <= d.box_cox["ci_high"]
    assert d.box_cox["suggested"] in (0.0, 0.5) and d.box_cox["ci_high"] < 1.0
    assert d.box_cox["recommended"] is (d.spread["p"] < 0.05)
    plain = diagnose(fit_model(_data(seed=2, n=60), "y", FS, "main", block=None))
    assert plain.box_cox["recommended"] is False
    out = plain.to_dict()
    assert len(out["baths"]) == 60 and set(out["normality"]) == {"test", "statistic", "p"}


def test_drift_with_run_order_is_detected():
    """Invented baths whose response creeps up with run order (a drifting balance, say)."""
    df = _data(seed=4, n=30)
    df["run"] = np.arange(1, 31)
    df["y"] = df.y + 0.3 * df.run
    d = diagnose(fit_model(df, "y", FS, "main", block=None))
    rho, p = stats.spearmanr(df.run, d.table.residual)
    assert d.drift["rho"] == pytest.approx(rho) and d.drift["p"] == pytest.approx(p)
    assert d.drift["p"] < 0.01
