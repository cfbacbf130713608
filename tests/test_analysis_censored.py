"""Censored times (trialkit.analysis.censored): reference checks against statsmodels OLS
(no censoring: the log-normal MLE is least squares on ln T) and scipy.stats.norm.fit on
scipy.stats.CensoredData (censored, intercept only); recovery of an invented truth."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
from scipy import stats

from trialkit.analysis.censored import fit_censored
from trialkit.trial.factors import Factor

F = Factor.continuous("chelator", 1.0, 9.0)


def test_without_censoring_equals_least_squares_on_log_time():
    # reference: statsmodels OLS on ln T; the MLE of sigma is sqrt(RSS / n)
    rng = np.random.default_rng(3)
    x = np.repeat([1.0, 3, 5, 7, 9], 3)
    t = np.exp(2 + 0.2 * x + rng.normal(0, 0.2, x.size))
    fit = fit_censored(pd.DataFrame({"chelator": x, "t": t, "c": False}), "t", [F],
                       "chelator", censored="c")
    ols = sm.OLS(np.log(t), sm.add_constant((x - 5) / 4)).fit()
    assert fit.beta == pytest.approx(ols.params, rel=1e-5)
    assert fit.sigma == pytest.approx(np.sqrt(ols.ssr / x.size), rel=1e-5)
    assert fit.n_censored == 0


def test_censored_intercept_only_equals_scipy_censored_fit():
    # reference: scipy.stats.norm.fit on scipy.stats.CensoredData (right-censored)
    rng = np.random.default_rng(8)
    y = rng.normal(3.0, 0.5, 30)
    c = np.log(25.0)
    cens = y > c
    t = np.exp(np.minimum(y, c))
    fit = fit_censored(pd.DataFrame({"chelator": 5.0, "t": t, "c": cens}), "t", [F], None,
                       censored="c")
    data = stats.CensoredData(uncensored=np.log(t[~cens]), right=np.log(t[cens]))
    loc, scale = stats.norm.fit(data)
    assert fit.n_censored == int(cens.sum()) > 0
    assert fit.beta[0] == pytest.approx(loc, rel=1e-4)
    assert fit.sigma == pytest.approx(scale, rel=1e-4)


def test_sweep_whose_slow_baths_never_reach_90_uses_every_bath():
    # invented truth: ln t90 = 2.5 + 0.25 x (slower at higher chelator), SD 0.15; the
    # last inspection is at 72 h, so the top levels are censored.  100 seeded trials:
    # every bath counts, the slope's interval covers the truth >= 0.9 of the time, and
    # dropping the censored baths biases the slope low.
    x = np.repeat([1.0, 3, 5, 7, 9], 4)
    hits, n_cens, dropped_slopes, slopes = 0, [], [], []
    for seed in range(100):
        rng = np.random.default_rng(60_000 + seed)
        t = np.exp(2.5 + 0.25 * x + rng.normal(0, 0.15, x.size))
        cens = t > 48.0
        df = pd.DataFrame({"chelator": x, "t": np.minimum(t, 48.0), "c": cens})
        fit = fit_censored(df, "t", [F], "chelator", censored="c")
        assert fit.n == x.size
        n_cens.append(fit.n_censored)
        row = fit.summary.set_index("term").loc["chelator"]
        slopes.append(row.estimate / 4)
        hits += row.ci_low <= 0.25 * 4 <= row.ci_high  # coded units: half-range 4
        kept = df[~df.c]
        dropped_slopes.append(np.polyfit(kept.chelator, np.log(kept.t), 1)[0])
    assert np.mean(n_cens) > 2
    assert hits / 100 >= 0.9
    assert abs(np.mean(slopes) - 0.25) < 0.01
    assert np.mean(dropped_slopes) < np.mean(slopes) - 0.008
