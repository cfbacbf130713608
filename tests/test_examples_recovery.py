"""The analysis recovers the invented truth of each bundled example trial.

Self-consistency checks on invented data (the readings in ``example_trials/*/readings``
were drawn by ``trialkit.demo.simulate`` from the truth models in ``trialkit.demo.truth_models``;
they are not measurements).  The readings go through the library's own responses and
analysis; the truth comes from the truth model, never from the analysis.
The seeds of the examples were chosen by ``example_trials/pick_seeds.py`` with checks of
its own (numpy/statsmodels on the raw readings); these tests check that trialkit's
analysis draws the same conclusions.  Alpha 0.05 throughout, as the trial reports use.
"""

from __future__ import annotations

import warnings
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from trialkit.analysis.desirability import Aim, optimize_desirability
from trialkit.analysis.model import fit_model
from trialkit.analysis.pipeline import analyze_table
from trialkit.analysis.surface import fit_surface
from trialkit.demo.truth_models import EXAMPLES, surface_desirability
from trialkit.planning.plan import load_plan
from trialkit.responses.compute import compute_responses

ROOT = Path(__file__).resolve().parents[1] / "example_trials"
ALPHA = 0.05


def bath_table(name: str) -> tuple[object, pd.DataFrame]:
    """Plan and per-bath responses (by trial response name) of a bundled example."""
    folder = ROOT / name
    plan = load_plan(folder)
    coupons = pd.read_csv(folder / "readings" / "coupons.csv")
    tc_path = folder / "readings" / "timecourse.csv"
    tc = pd.read_csv(tc_path) if tc_path.exists() else None
    with warnings.catch_warnings():
        warnings.simplefilter("error")  # the invented readings must be clean
        resp = compute_responses(coupons, coupon_spec=plan.trial.coupons, timecourse=tc)
    table = plan.baths.copy()
    for spec in plan.trial.responses:
        measure = spec.measure or spec.name
        if measure in ("cost_per_l",):
            continue  # from the recipes, not from the readings
        table[spec.name] = table["bath"].map(resp.bath_values(measure).to_dict())
    table = table[~table["point"].isin(["control", "reference"])].reset_index(drop=True)
    return plan, table


def p_values(fit) -> pd.Series:
    return fit.anova(2).summary.set_index("term")["p"]


# -- chelator sweep ---------------------------------------------------------------------
def test_sweep_time_to_clean_interval_covers_true_chelator_optimum():
    # The truth's removal rate peaks at chelator_optimum whatever else holds, so the
    # time to 90 % removal is shortest there (trialkit/demo/truth_models.py).
    sc = EXAMPLES["chelator-sweep"]
    plan, table = bath_table("chelator-sweep")
    chel = plan.trial.factors[0]
    res = analyze_table(table, "time_to_clean", plan.trial.factors, sweep=chel.name,
                        aim="lower", alpha=ALPHA, n_boot=0)
    sw = res.sweep
    assert sw.fieller_bounded
    assert sw.fieller_low < sc.truth.chelator_optimum < sw.fieller_high
    # the interval is informative: narrower than a third of the swept range
    assert sw.fieller_high - sw.fieller_low < (chel.high - chel.low) / 3
    # and the best level itself is within one geometric step (ratio 1.58) of the truth
    assert sc.truth.chelator_optimum / 1.58 < sw.best < sc.truth.chelator_optimum * 1.58


# -- five-factor screen -----------------------------------------------------------------
@pytest.fixture(scope="module")
def screen():
    return bath_table("five-factor-screen")


def test_screen_removal_finds_exactly_the_truly_active_factors(screen):
    plan, table = screen
    names = [f.name for f in plan.trial.factors]
    real = EXAMPLES["five-factor-screen"].truth.real_effects(names)["removal"]
    assert 0 < len(real) < len(names)  # the truth has active and inactive factors
    p = p_values(fit_model(table, "removal", plan.trial.factors, "main", alpha=ALPHA))
    for name in names:
        assert (p[name] < ALPHA) == (name in real), (name, p[name], real)


def test_screen_attack_finds_exactly_the_truly_active_factors(screen):
    # The truth's attack is multiplicative in its factors, so the main-effect model is
    # fitted to log attack (as pick_seeds.py does).
    plan, table = screen
    names = [f.name for f in plan.trial.factors]
    real = EXAMPLES["five-factor-screen"].truth.real_effects(names)["corrosion"]
    table = table.assign(log_attack=np.log(table["attack"]))
    p = p_values(fit_model(table, "log_attack", plan.trial.factors, "main", alpha=ALPHA))
    for name in names:
        assert (p[name] < ALPHA) == (name in real), (name, p[name], real)


# -- response surface -------------------------------------------------------------------
@pytest.fixture(scope="module")
def surface():
    return bath_table("surface-follow-up")


def test_surface_removal_optimum_interval_covers_true_optimum(surface):
    plan, table = surface
    truth = EXAMPLES["surface-follow-up"].truth
    bounds = {f.name: (f.low, f.high) for f in plan.trial.factors}
    true = truth.best_on_grid(bounds, lambda t, x: t.removal_pct(x, 8.0),
                              points=121)["conditions"]
    fit = fit_model(table, "removal", plan.trial.factors, "quadratic", alpha=ALPHA)
    res = fit_surface(fit, aim="higher", n_boot=400, seed=plan.trial.seed)
    boot = res.bootstrap.set_index("factor")
    for name, value in true.items():
        lo, hi = boot.loc[name, "low"], boot.loc[name, "high"]
        assert lo - 1e-9 <= value <= hi + 1e-9, (name, value, lo, hi)


def test_surface_attack_depends_on_ph_only(surface):
    plan, table = surface
    real = EXAMPLES["surface-follow-up"].truth.real_effects(["chelator", "ph"])["corrosion"]
    assert real == ["ph"]
    p = p_values(fit_model(table, "attack", plan.trial.factors, "quadratic", alpha=ALPHA))
    assert p["ph"] < ALPHA
    for term in ("chelator", "chelator^2", "chelator:ph"):
        assert p[term] > ALPHA, (term, p[term])


def test_surface_desirability_compromise_is_nearly_as_good_as_the_truth(surface):
    # The true desirability (removal 50..90 % up, attack 0.05..0.30 mm/y down, as in the
    # trial file) is flat along chelator near its optimum; the fitted compromise must get
    # at least 95 % of the best true desirability.
    plan, table = surface
    truth = EXAMPLES["surface-follow-up"].truth
    bounds = {f.name: (f.low, f.high) for f in plan.trial.factors}
    best = truth.best_on_grid(bounds, surface_desirability, points=121)
    fits = {r: fit_model(table, r, plan.trial.factors, "quadratic") for r in ("removal",
                                                                              "attack")}
    aims = [Aim("removal", "higher", unacceptable=50.0, satisfactory=90.0),
            Aim("attack", "lower", unacceptable=0.30, satisfactory=0.05)]
    res = optimize_desirability(fits, aims, seed=plan.trial.seed, n_tries=4)
    assert surface_desirability(truth, res.settings) >= 0.95 * best["score"]
    assert abs(res.settings["ph"] - best["conditions"]["ph"]) <= 0.25


# -- tank split plot --------------------------------------------------------------------
def test_split_plot_example_finds_the_truly_active_factors_on_their_strata():
    """Temperature is set per tank (three days, two tank runs a day): it is tested
    against the tank-to-tank error on its 2 degrees of freedom, chelator and surfactant
    against the bath-to-bath error; the conclusions match the invented truth."""
    from trialkit.analysis.split_plot_trial import analyse_split_plot

    plan, table = bath_table("tank-split-plot")
    names = [f.name for f in plan.trial.factors]
    truth = EXAMPLES["tank-split-plot"].truth.real_effects(names)
    results = {}
    for response, real in (("removal", truth["removal"]), ("attack", truth["corrosion"])):
        res = results[response] = analyse_split_plot(
            table, response, ["temperature"], ["chelator", "surfactant"],
            whole_plot="whole_plot", block="block", levels={"surfactant": ["none", "added"]})
        tests = res.tests.set_index("term")
        assert tests.loc["temperature", "error_stratum"] == "whole plot"
        assert tests.loc["temperature", "error_df"] == 6 - 1 - 2 - 1
        assert tests.loc["chelator", "error_stratum"] == "subplot"
        for name in names:
            assert (tests.loc[name, "p_value"] < ALPHA) == (name in real), \
                (response, name, tests.loc[name, "p_value"], real)
    # Removal varies from tank to tank (the truth shifts each tank run's rate): the
    # bath-by-bath fit claims far more certainty about temperature than the tanks give.
    eff = results["removal"].effects.set_index("factor")
    naive = fit_model(table, "removal", plan.trial.factors, "interactions", alpha=ALPHA)
    row = naive.effects.set_index("term").loc["temperature"]  # low -> high, as eff
    split_width = eff.loc["temperature", "ci_high"] - eff.loc["temperature", "ci_low"]
    assert split_width > 2 * (row.ci_high - row.ci_low)
