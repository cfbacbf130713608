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


def test_trial_analysis_counts_and_fits_the_censored_baths():
    # invented: the chelator-sweep plan with removal curves that slow down at high
    # chelator, k = 0.2 exp(-0.45 (x - 1)) /h; above about 5 % w/v the baths do not get to
    # 90 % by the last inspection (72 h).  The JSON says how many are censored, the
    # log-normal time model uses every bath and covers the true slope of ln t90.
    from pathlib import Path

    from trialkit.analysis.trial_analysis import analyze
    from trialkit.planning.plan import load_plan

    folder = Path(__file__).resolve().parents[1] / "example_trials" / "chelator-sweep"
    plan = load_plan(folder)
    baths = plan.baths.copy()
    baths["bath"] = baths["bath"].astype(str)
    rng = np.random.default_rng(15)
    rows, times = [], [4.0, 8, 16, 24, 48, 72]
    for rec in baths.to_dict("records"):
        if rec["point"] in ("control", "reference"):
            continue
        k_bath = 0.2 * np.exp(-0.45 * (rec["chelator"] - 1) + rng.normal(0, 0.08))
        for j in range(2):
            kc, c0 = k_bath * np.exp(rng.normal(0, 0.05)), rng.uniform(70, 95)
            for t in times:
                rows.append({"bath": rec["bath"], "coupon": f"{rec['bath']}-{j}",
                             "elapsed_h": t, "coverage_pct": float(np.clip(
                                 c0 * np.exp(-kc * t) + rng.normal(0, 0.5), 0, 100))})
    tc = pd.DataFrame(rows)
    from trialkit.responses.bath_kinetics import fit_baths

    table, fits, _ = fit_baths(tc)
    t90 = table.set_index("bath")["time_to_90_h"]
    for name in ("removal", "rust_removed", "attack"):
        baths[name] = np.nan
    baths["time_to_clean"] = baths["bath"].map(t90.to_dict())
    data = analyze(folder, baths=baths, timecourse=tc)
    cen = data.to_dict()["responses"]["time_to_clean"]["censoring"]
    treated = int((~baths.point.isin(["control", "reference"])).sum())
    assert cen["n_baths"] == treated and cen["n_censored"] >= 3
    assert cen["n_censored"] == int(t90.isna().sum())
    coef = {r["term"]: r for r in cen["censored_fit"]["coefficients"]}
    # truth: ln t90 = ln(ln 10 / 0.2) + 0.45 (x - 1); coded slope = 0.45 x half-range 4
    assert coef["chelator"]["ci_low"] <= 0.45 * 4 <= coef["chelator"]["ci_high"]
    assert any("right-censored" in s for s in data.notes["analysis"])
    # the sweep fitted on the finished baths does not speak for the time; the censored
    # model does, and picks the truly fastest level (truth: k falls with chelator)
    from trialkit.report.build import build_report

    kinds = {f["kind"] for f in build_report(data).findings
             if f["response"] == "time_to_clean"}
    assert "sweep" not in kinds and "censoring" in kinds
    rec = data.recommendation
    assert "log-normal time model" in rec["source"]
    assert rec["settings"]["chelator"] == pytest.approx(1.0)
