"""Tests of trialkit.analysis.split_plot and split_plot_mixed (two-stratum ANOVA, REML)."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from trialkit.analysis.split_plot import split_plot_anova, whole_plot_f_tests
from trialkit.analysis.split_plot_mixed import split_plot_mixed_model
from trialkit.exceptions import AnalysisError

REF = Path(__file__).parent / "reference" / "stats" / "split_plot"
SPLIT = dict(whole_plot_factors=["method"], subplot_factors=["temperature"],
             whole_plot="wp", block="day")


def _paper() -> tuple[pd.DataFrame, dict]:
    ref = json.loads((REF / "paper_strength_split_plot.json").read_text())
    rows = [dict(day=d, method=m, temperature=t, strength=v, wp=f"{d}-{m}")
            for d, temps in ref["data"].items() for t, vals in temps.items()
            for m, v in enumerate(vals, start=1)]
    return pd.DataFrame(rows), ref["anova_from_memory"]


def test_published_split_plot_anova_reproduced():
    # Montgomery, Design and Analysis of Experiments, 6th ed., Table 14-14 and its ANOVA
    # (paper tensile strength; from memory, two decimals)
    data, published = _paper()
    a = split_plot_anova(data, "strength", **SPLIT)
    t = a.table.set_index("term")
    assert t.loc["day", "sum_sq"] == pytest.approx(published["day"]["sum_sq"], abs=0.01)
    assert t.loc["method", "sum_sq"] == pytest.approx(published["method"]["sum_sq"], abs=0.01)
    wpe = published["whole_plot_error (day x method)"]
    assert t.loc["whole_plot_error", "sum_sq"] == pytest.approx(wpe["sum_sq"], abs=0.01)
    assert t.loc["temperature", "sum_sq"] == pytest.approx(
        published["temperature"]["sum_sq"], abs=0.01)
    assert t.loc["method:temperature", "sum_sq"] == pytest.approx(
        published["method x temperature"]["sum_sq"], abs=0.01)
    # the subplot error pools day x temperature and day x method x temperature
    pooled = (published["day x temperature"]["sum_sq"]
              + published["day x method x temperature"]["sum_sq"])
    assert t.loc["subplot_error", "sum_sq"] == pytest.approx(pooled, abs=0.02)
    assert a.whole_plot_error_df == wpe["df"] == 4
    assert a.subplot_error_df == (published["day x temperature"]["df"]
                                  + published["day x method x temperature"]["df"])
    assert t["sum_sq"].sum() == pytest.approx(published["total"]["sum_sq"], abs=0.02)
    assert t.loc["method", "error_stratum"] == "whole plot"
    assert t.loc["method", "error_df"] == 4
    assert t.loc["temperature", "error_stratum"] == "subplot"
    assert t.loc["method:temperature", "error_df"] == 18
    # F of method uses the whole-plot error mean square, not the subplot one
    assert t.loc["method", "f"] == pytest.approx(
        t.loc["method", "mean_sq"] / t.loc["whole_plot_error", "mean_sq"], rel=1e-12)
    d = a.to_dict()
    assert {r["term"]: r["error_df"] for r in d["rows"]}["method"] == 4


def test_mixedlm_reml_agrees_with_the_exact_anova():
    # statsmodels MixedLM (REML) as the reference library: in a balanced split plot the REML
    # variance components equal the ANOVA (expected-mean-square) estimates when positive,
    # and the fixed effects equal the ordinary least-squares ones.
    data, _ = _paper()
    a = split_plot_anova(data, "strength", **SPLIT)
    m = split_plot_mixed_model(data, "strength", **SPLIT)
    for key in ("whole_plot", "subplot"):
        assert m.variance_components[key] == pytest.approx(a.variance_components[key],
                                                           abs=1e-4)
    from trialkit.analysis.split_plot import _strata
    x = np.hstack([np.ones((len(data), 1))]
                  + [xm for _, s, xm in _strata(data, ["method"], ["temperature"], "wp",
                                                 "day") if s != "error"])
    ols = np.linalg.lstsq(x, data["strength"].to_numpy(float), rcond=None)[0]
    np.testing.assert_allclose(m.fixed_effects.to_numpy(), ols, atol=1e-4)
    tests = m.tests.set_index("term")
    t = a.table.set_index("term")
    assert tests.loc["method", "error_df"] == 4 and tests.loc["temperature", "error_df"] == 18
    assert tests.loc["temperature", "f"] == pytest.approx(t.loc["temperature", "f"], rel=1e-3)


def test_unbalanced_trial_is_refused_with_advice():
    data, _ = _paper()
    with pytest.raises(AnalysisError, match="split_plot_mixed_model"):
        split_plot_anova(data.iloc[1:], "strength", **SPLIT)
    spoiled = data.copy()
    spoiled.loc[0, "method"] = 2
    with pytest.raises(AnalysisError, match="one setting"):
        split_plot_anova(spoiled, "strength", **SPLIT)
    with pytest.raises(AnalysisError, match="not in the table"):
        split_plot_anova(data, "strength", whole_plot_factors=["oven"],
                         subplot_factors=["temperature"], whole_plot="wp")


def test_null_whole_plot_factor_false_positive_rate_by_simulation():
    # Invented layout (self-consistency): 3 days x 2 tanks (temperature low/high, one tank
    # each per day) x 4 baths per tank (chelator 2 levels x surfactant 2 levels).  Whole-plot
    # variance 9 times the bath-to-bath variance; temperature has no effect.  Seed written
    # down before the first run, never changed.
    rng = np.random.default_rng(190001)
    reps = 2000
    rows = [dict(day=d, temperature=t, chelator=c, surfactant=s, wp=f"{d}-{t}")
            for d in range(3) for t in (0, 1) for c in (0, 1) for s in (0, 1)]
    layout = pd.DataFrame(rows)
    wp_index = pd.Categorical(layout["wp"]).codes
    y = (3.0 * rng.standard_normal((6, reps))[wp_index]
         + rng.standard_normal((len(layout), reps)))
    p = whole_plot_f_tests(layout, y, whole_plot_factors=["temperature"],
                           subplot_factors=["chelator", "surfactant"], whole_plot="wp",
                           block="day")
    right = float((p.loc["temperature"] < 0.05).mean())
    naive = float((p.loc["naive:temperature"] < 0.05).mean())
    se = np.sqrt(0.05 * 0.95 / reps)  # Monte-Carlo standard error at the nominal rate
    assert right <= 0.06 + se  # exact F test: nominal 5 %
    assert right >= 0.05 - 3 * se
    assert naive > 0.25  # tested against bath-to-bath error, the null is rejected often


def _run_cli(*argv: str):
    import subprocess
    import sys
    return subprocess.run([sys.executable, "-m", "trialkit", *argv], capture_output=True,
                          text=True, check=False)


def test_cli_table_with_whole_plot_column(tmp_path):
    # the published data above through the command line: every row states its stratum
    data, published = _paper()
    data = data.rename(columns={"day": "block"})
    path = tmp_path / "baths.csv"
    data.to_csv(path, index=False)
    argv = ["analyze", str(path), "--response", "strength", "--factor",
            "method:categorical", "--factor", "temperature:categorical",
            "--hard-to-change", "method", "--whole-plot", "wp", "--json"]
    done = _run_cli(*argv)
    assert done.returncode == 0, done.stderr
    out = json.loads(done.stdout)
    rows = {r["term"]: r for r in out["rows"]}
    assert rows["method"]["error_stratum"] == "whole plot" and rows["method"]["error_df"] == 4
    assert rows["temperature"]["error_df"] == 18
    assert rows["method"]["sum_sq"] == pytest.approx(published["method"]["sum_sq"], abs=0.01)
    assert "balanced" in out["method"]
    # one bath missing: unbalanced, so REML with stated df
    data.iloc[1:].to_csv(path, index=False)
    done = _run_cli(*argv)
    assert done.returncode == 0, done.stderr
    out = json.loads(done.stdout)
    assert out["method"].startswith("REML")
    assert {t["term"]: t["error_stratum"] for t in out["tests"]}["method"] == "whole plot"
    # no hard-to-change factor named: a clear message, no traceback
    done = _run_cli(*argv[:7], "--whole-plot", "wp")
    assert done.returncode != 0 and "Traceback" not in done.stderr
    assert "--hard-to-change" in done.stderr + done.stdout
