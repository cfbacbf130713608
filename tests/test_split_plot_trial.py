"""Effects of a split-plot trial with intervals from their own stratum (issue 19).

References: statsmodels' ``MixedLM`` (REML) and ``ols`` are the general-purpose reference
libraries; that a hard-to-change factor's effect varies with ``σ²_sub + m σ²_whole`` is
textbook split-plot theory (Montgomery, *Design and Analysis of Experiments*, split-plot
chapter — from memory).  Coverage is measured by simulation over fresh seeds.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
import statsmodels.formula.api as smf
from scipy import stats

from trialkit.analysis.split_plot_trial import EXACT, REML, analyse_split_plot


def _trial(rng, days=4, sd_tank=1.0, sd_bath=1.0, wp_effect=3.0, sp_effect=2.0):
    """One tank per temperature per day, four baths (2 chelator × 2) in each tank."""
    rows = []
    for d in range(1, days + 1):
        for t in (20, 40):
            tank = rng.normal(0, sd_tank)
            for c in (2, 6):
                for _r in (1, 2):
                    rows.append({"day": d, "tank": f"{d}-{t}", "temperature": t,
                                 "chelator": c, "removal": 50 + wp_effect * (t == 40)
                                 + sp_effect * (c == 6) + tank + rng.normal(0, sd_bath)})
    return pd.DataFrame(rows)


def _coded(table):
    out = table.copy()
    out["temp_c"] = np.where(out.temperature == 40, 0.5, -0.5)
    out["chel_c"] = np.where(out.chelator == 6, 0.5, -0.5)
    return out


def test_effects_and_their_errors_equal_statsmodels_reml():
    rng = np.random.default_rng(np.random.SeedSequence().entropy)
    table = _trial(rng, sd_tank=3.0)
    res = analyse_split_plot(table, "removal", ["temperature"], ["chelator"],
                             whole_plot="tank", block="day")
    assert res.method == EXACT
    fit = smf.mixedlm("removal ~ C(day) + temp_c * chel_c", _coded(table),
                      groups="tank").fit(reml=True)
    eff = res.effects.set_index("factor")
    for name, term in (("temperature", "temp_c"), ("chelator", "chel_c")):
        assert eff.loc[name, "effect"] == pytest.approx(fit.fe_params[term], rel=1e-6)
    # The interval half-widths over their t quantiles are the REML standard errors, as
    # REML's whole-plot variance is positive (then it equals the ANOVA estimate); with a
    # tank SD three times the bath SD a draw at zero has probability about 3e-4.
    assert fit.cov_re.iloc[0, 0] > 0
    for name, term in (("temperature", "temp_c"), ("chelator", "chel_c")):
        row = eff.loc[name]
        se = (row.ci_high - row.ci_low) / 2 / stats.t.ppf(0.975, row.error_df)
        assert se == pytest.approx(fit.bse[term], rel=1e-3)
    assert eff.loc["temperature", "error_stratum"] == "whole plot"
    assert eff.loc["temperature", "error_df"] == 8 - 1 - 3 - 1
    assert eff.loc["chelator", "error_stratum"] == "subplot"
    assert eff.loc["chelator", "error_df"] == 32 - 8 - 2


def test_hard_to_change_interval_covers_and_a_naive_one_does_not():
    """Fresh seeds every run: the split-plot interval for the hard-to-change factor covers
    about 95 %; the bath-by-bath OLS interval (baths treated as independently randomised)
    covers far less when tanks differ (tank SD = bath SD, four baths a tank)."""
    rng = np.random.default_rng(np.random.SeedSequence().entropy)
    reps, true = 400, 3.0
    hits = naive_hits = sub_hits = 0
    for _ in range(reps):
        table = _trial(rng, wp_effect=true)
        res = analyse_split_plot(table, "removal", ["temperature"], ["chelator"],
                                 whole_plot="tank", block="day")
        eff = res.effects.set_index("factor")
        hits += eff.loc["temperature", "ci_low"] <= true <= eff.loc["temperature", "ci_high"]
        sub_hits += eff.loc["chelator", "ci_low"] <= 2.0 <= eff.loc["chelator", "ci_high"]
        ols = smf.ols("removal ~ C(day) + temp_c * chel_c", _coded(table)).fit()
        lo, hi = ols.conf_int().loc["temp_c"]
        naive_hits += lo <= true <= hi
    # 400 draws: binomial SD of a 95 % coverage is 1.1 points; bounds are ± about 3.7 SD
    # (3,000 draws gave 94.9 % and 95.2 % when this test was written).
    assert 0.91 <= hits / reps <= 0.99
    assert 0.91 <= sub_hits / reps <= 0.99
    assert naive_hits / reps < 0.85


def test_unbalanced_trial_falls_back_to_reml_and_says_so():
    rng = np.random.default_rng(np.random.SeedSequence().entropy)
    table = _trial(rng).drop(index=[0, 9]).reset_index(drop=True)
    res = analyse_split_plot(table, "removal", ["temperature"], ["chelator"],
                             whole_plot="tank", block="day")
    assert res.method == REML
    assert any("unbalanced" in n for n in res.notes)
    assert set(res.tests.error_stratum) == {"whole plot", "subplot"}
    out = res.to_dict()
    assert out["unit_of_analysis"].startswith("bath")
    assert all(r["error_df"] > 0 for r in out["tests"])


def test_prediction_interval_of_a_split_plot_covers_the_true_mean():
    """The recommended recipe's interval (mean at temperature 40, chelator 6) from the
    bath-level fit, widened for the tank-to-tank variance, covers the true mean about as
    often as it claims (at least 95 %: its t uses the smaller stratum's df); the plain
    least-squares interval covers far less.  Fresh seeds every run."""
    from trialkit.analysis.model import fit_model
    from trialkit.analysis.split_plot_prediction import split_plot_predict
    from trialkit.trial.factors import Factor

    factors = [Factor.continuous("temperature", 20, 40, unit="degC"),
               Factor.continuous("chelator", 2, 6, unit="% w/v")]
    rng = np.random.default_rng(np.random.SeedSequence().entropy)
    reps, truth, at = 300, 50 + 3.0 + 2.0, {"temperature": 40.0, "chelator": 6.0}
    wide = narrow = 0
    for _ in range(reps):
        table = _trial(rng, sd_tank=1.5).rename(columns={"tank": "whole_plot",
                                                          "day": "block"})
        fit = fit_model(table, "removal", factors, "interactions")
        res = analyse_split_plot(table, "removal", ["temperature"], ["chelator"],
                                 whole_plot="whole_plot", block="block")
        p = split_plot_predict(fit, at, whole_plot_column="whole_plot",
                               components=res.variance_components,
                               whole_plot_df=res.whole_plot_error_df).iloc[0]
        wide += p.ci_low <= truth <= p.ci_high
        q = fit.predict(at).iloc[0]
        narrow += q.ci_low <= truth <= q.ci_high
    assert 0.93 <= wide / reps <= 0.995
    assert narrow / reps < 0.85


def test_whole_plot_power_matches_the_rejection_rate_of_the_analysis():
    """Power of the hard-to-change term from the formula (noncentral F on the whole-plot
    error df) against the rejection rate of analyse_split_plot over fresh simulated
    trials (tank SD = bath SD, so variance_ratio = 1)."""
    from trialkit.planning.split_plot_power import whole_plot_term_power

    rng = np.random.default_rng(np.random.SeedSequence().entropy)
    reps, effect = 600, 3.0
    claimed = whole_plot_term_power(effect=effect, sd=1.0, baths=32, whole_plots=8,
                                    variance_ratio=1.0, error_df=3)
    rejected = 0
    for _ in range(reps):
        res = analyse_split_plot(_trial(rng, wp_effect=effect), "removal", ["temperature"],
                                 ["chelator"], whole_plot="tank", block="day")
        rejected += res.tests.set_index("term").loc["temperature", "p_value"] < 0.05
    se = np.sqrt(claimed * (1 - claimed) / reps)
    assert 0.2 < claimed < 0.9  # a power where the check can tell
    assert abs(rejected / reps - claimed) < 4 * se


def test_plan_power_uses_the_analysis_strata_and_counts_tank_runs():
    from pathlib import Path

    from trialkit.planning.plan import load_plan
    from trialkit.planning.split_plot_power import split_plot_power, whole_plot_term_power
    from trialkit.planning.whole_plots import whole_plot_settings

    plan = load_plan(Path(__file__).resolve().parents[1] / "example_trials" /
                     "tank-split-plot")
    settings = whole_plot_settings(plan.trial)
    res = split_plot_power(plan, settings, {"temperature": 10.0, "chelator": 10.0}, sd=4.0)
    t = res.table.set_index("term")
    assert (t.loc["temperature", "stratum"], t.loc["temperature", "error_df"]) == \
        ("whole plot", 2)
    assert (t.loc["chelator", "stratum"], t.loc["chelator", "error_df"]) == ("subplot", 12)
    k = int(t.loc["temperature", "copies_needed"])
    assert t.loc["temperature", "tank_runs_needed"] == 6 * k

    def power(copies):
        return whole_plot_term_power(effect=10.0, sd=4.0, baths=24 * copies,
                                     whole_plots=6 * copies, variance_ratio=1.0,
                                     error_df=copies * (6 - 3) - 1)

    assert power(k) >= 0.8 > power(k - 1)
    assert t.loc["chelator", "power"] > t.loc["temperature", "power"]


def test_evaluate_command_shows_the_tank_runs_a_hard_to_change_effect_needs(cli):
    import json
    from pathlib import Path

    folder = str(Path(__file__).resolve().parents[1] / "example_trials" / "tank-split-plot")
    run = cli("evaluate", folder, "--sd", "4", "--effect", "10")
    assert run.returncode == 0, run.stderr
    assert "tested against the tank-to-tank error" in run.stdout
    assert "temperature" in run.stdout and "12 tank runs" in run.stdout
    assert "2 copies of the plan needed" in run.stdout
    run = cli("evaluate", folder, "--sd", "4", "--effect", "10", "--json")
    data = json.loads(run.stdout)
    assert data["replicates_needed"] == 2
    assert data["split_plot"]["terms"][0]["stratum"] == "whole plot"
