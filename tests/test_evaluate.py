"""Tests of trialkit.planning.evaluation: power per term of real plans, detectable effects,
replicates needed, efficiencies, and the [evaluation] trial-file section."""

import json
import textwrap

import numpy as np
import pandas as pd
import pytest
from scipy import stats
from trial_texts import FACTORS, trial_text

from trialkit.exceptions import ModelSpecError, PlanError
from trialkit.planning.evaluation import design_model, evaluate_design, evaluate_plan
from trialkit.planning.plan import make_plan
from trialkit.trial.factors import Factor
from trialkit.trial.file import parse_trial_text

TWO_FACTOR = trial_text(
    "chelator", "ph", "temperature",
    layout="replicates = {replicates}\nblocks = {blocks}\ncenter_points = {center}\n"
           "controls = {controls}\ncoupons_per_bath = 2\nwitness_coupons = 1")


def _plan(replicates=1, blocks=1, center=0, controls="[]", extra=""):
    text = TWO_FACTOR.format(replicates=replicates, blocks=blocks, center=center,
                             controls=controls) + textwrap.dedent(extra)
    return make_plan(parse_trial_text(text))


# -- external references -----------------------------------------------------------
@pytest.mark.parametrize("k, per_group", [(3, 4), (4, 5), (5, 3)])
def test_one_way_power_matches_statsmodels_ftestanovapower(k, per_group):
    # statsmodels.stats.power.FTestAnovaPower (reference library), one-way layout.
    # Our effect d puts two level means d apart and the rest halfway; Cohen's f of that
    # pattern is d / (sd * sqrt(2k)).
    from statsmodels.stats.power import FTestAnovaPower

    levels = [f"L{i}" for i in range(k)]
    fs = (Factor.categorical("bath_type", levels),)
    pts = pd.DataFrame({"bath_type": levels * per_group})
    sd, d = 1.5, 2.0
    ev = evaluate_design(pts, fs, sd=sd, effects=d)
    ref = FTestAnovaPower().power(effect_size=d / (sd * np.sqrt(2 * k)),
                                  nobs=k * per_group, alpha=0.05, k_groups=k)
    assert ev.power_of("bath_type") == pytest.approx(ref, rel=1e-7)


def test_two_level_power_matches_statsmodels_ttestindpower():
    # statsmodels.stats.power.TTestIndPower, two-sided: F(1, df) power equals t power
    from statsmodels.stats.power import TTestIndPower

    fs = (Factor.categorical("surfactant", ["none", "added"]),)
    pts = pd.DataFrame({"surfactant": ["none", "added"] * 6})
    ev = evaluate_design(pts, fs, sd=2.0, effects=3.0)
    ref = TTestIndPower().power(effect_size=3.0 / 2.0, nobs1=6, ratio=1.0, alpha=0.05)
    assert ev.power_of("surfactant") == pytest.approx(ref, rel=1e-7)


def test_factorial_with_blocks_and_center_points_agrees_with_simulation():
    # 2^3 in two blocks (ABC confounded) with 2 centre points per block: analytic power
    # from the model matrix vs 20,000 simulated trials (batched least squares checked
    # against statsmodels OLS in test_power); agreement within 3 simulation SEs
    plan = _plan(blocks=2, center=2)
    ev = evaluate_plan(plan, model="interactions", sd=1.0, effects=2.5)
    assert ev.blocks == 2 and ev.baths == 12
    assert ev.residual_df == 12 - 7 - 1
    for term in ("chelator", "chelator:ph"):
        sim, se = ev.simulated_power(term, n_sim=20_000, seed=17)
        assert abs(sim - ev.power_of(term)) < 3 * se


def test_simulated_power_of_three_level_factor_uses_least_favourable_pattern():
    # one-way layout, unbalanced: analytic minimum over level pairs vs simulation
    fs = (Factor.categorical("bath_type", ["a", "b", "c"]),)
    pts = pd.DataFrame({"bath_type": ["a"] * 3 + ["b"] * 4 + ["c"] * 6})
    ev = evaluate_design(pts, fs, sd=1.0, effects=2.0)
    sim, se = ev.simulated_power("bath_type", n_sim=20_000, seed=3)
    assert abs(sim - ev.power_of("bath_type")) < 3 * se


def test_effect_is_twice_the_coded_coefficient():
    # 2^2 x 2 replicates, main effects: lambda = n (d/2)^2 / sd^2 (factorial algebra,
    # effect = 2 x coefficient in coded units: Montgomery, Design and Analysis of
    # Experiments, ch. 6, from memory)
    fs = (Factor.continuous("a", 0, 1), Factor.continuous("b", 0, 1))
    pts = pd.DataFrame({"a": [-1, 1, -1, 1] * 2, "b": [-1, -1, 1, 1] * 2})
    ev = evaluate_design(pts, fs, sd=0.8, effects={"a": 1.2, "b": 0.4})
    fcrit = stats.f.isf(0.05, 1, 5)
    for term, d in (("a", 1.2), ("b", 0.4)):
        lam = 8 * (d / 2) ** 2 / 0.8 ** 2
        assert ev.power_of(term) == pytest.approx(stats.ncf.sf(fcrit, 1, 5, lam), rel=1e-9)
    # standard error of an effect of a 2^k with n runs: 2 sd / sqrt(n)
    se = ev.summary.set_index("term").effect_se
    assert se["a"] == pytest.approx(2 * 0.8 / np.sqrt(8), rel=1e-12)


# -- self-consistency --------------------------------------------------------------
def test_detectable_effect_reaches_target_power():
    plan = _plan(replicates=2, center=3)
    ev = evaluate_plan(plan, model="interactions", sd=1.0, target_power=0.9)
    for r in ev.summary.itertuples():
        again = evaluate_plan(plan, model="interactions", sd=1.0,
                              effects={r.term: r.detectable_effect})
        assert again.power_of(r.term) == pytest.approx(0.9, abs=1e-6)


def test_replicates_needed_is_the_smallest_count_reaching_target():
    plan = _plan()
    ev = evaluate_plan(plan, model="main", sd=1.0, effects=1.5)
    k = ev.replicates_needed(0.8)
    assert k is not None and k > 1

    def power_at(reps):
        return evaluate_plan(_plan(replicates=reps), model="main", sd=1.0,
                             effects=1.5).summary.power.min()

    assert power_at(k) >= 0.8 > power_at(k - 1)


def test_controls_are_left_out_and_coupons_counted():
    plan = _plan(controls='["untreated", "reference"]')
    ev = evaluate_plan(plan, sd=1.0)
    assert ev.baths == 8                       # 2^3 factorial baths, not the 2 controls
    assert ev.coupons == 16                    # 2 rusted coupons a bath, witnesses apart
    assert ev.d_efficiency == pytest.approx(100.0, abs=1e-9)
    assert ev.i_efficiency == pytest.approx(100.0, abs=1e-9)
    assert ev.max_vif == pytest.approx(1.0, abs=1e-12)


def test_unestimable_model_is_reported_not_raised():
    plan = _plan()                              # 8 runs, full quadratic needs 10
    ev = evaluate_plan(plan, model="quadratic", sd=1.0)
    assert not ev.estimable
    assert ev.summary.power.isna().all()
    assert any("supports only" in n for n in ev.notes)


def test_variance_profile_lies_between_the_known_extremes():
    # 2^2 main effects, n = 8: var(x)/sd^2 = (1 + x1^2 + x2^2)/8, so 1/8 .. 3/8
    fs = (Factor.continuous("a", 0, 1), Factor.continuous("b", 0, 1))
    pts = pd.DataFrame({"a": [-1, 1, -1, 1] * 2, "b": [-1, -1, 1, 1] * 2})
    prof = evaluate_design(pts, fs).variance_profile
    assert prof.share_of_region.iloc[0] == 0 and prof.share_of_region.iloc[-1] == 1
    assert np.all(np.diff(prof.variance) >= 0)
    assert prof.variance.min() >= 1 / 8 and prof.variance.max() <= 3 / 8
    assert prof.variance.iloc[50] == pytest.approx((1 + 2 / 3) / 8, abs=0.02)


def test_result_object_faces():
    ev = evaluate_plan(_plan(center=2), model="interactions", sd=0.5, effects=1.0)
    d = json.loads(json.dumps(ev.to_dict()))
    assert [p["term"] for p in d["power"]] == list(ev.summary.term)
    assert set(d) >= {"power", "d_efficiency", "i_efficiency", "max_vif", "baths"}
    assert "chelator:ph" in repr(ev) and "<table" in ev._repr_html_()


# -- bad input ---------------------------------------------------------------------
def test_effect_for_unknown_term_names_the_terms():
    with pytest.raises(ModelSpecError, match="chelator"):
        evaluate_plan(_plan(), effects={"chelatr": 1.0})


def test_bad_sd_raises():
    with pytest.raises(PlanError, match="sd must be a positive number"):
        evaluate_plan(_plan(), sd=-1.0)


def test_fractional_plan_reports_resolution_aliases_and_unestimable_interactions():
    # 2^(4-1), D = ABC: resolution IV, two-factor interactions aliased in pairs
    # (e-Handbook 5.3.3.4.3 fraction table, carried by the designs module)
    text = TWO_FACTOR.format(replicates=1, blocks=1, center=0, controls="[]").replace(
        'kind = "full-factorial"', 'kind = "fractional-factorial"\nresolution = 4') + \
        FACTORS["agitation"]
    plan = make_plan(parse_trial_text(text))
    main = evaluate_plan(plan, model="main", sd=1.0, effects=2.0)
    assert main.resolution == 4 and main.aliases
    assert main.estimable and main.d_efficiency == pytest.approx(100.0, abs=1e-9)
    inter = evaluate_plan(plan, model="interactions", sd=1.0)
    assert not inter.estimable


@pytest.mark.parametrize("kind, options, expected", [
    ("full-factorial", "", "main"),
    ("central-composite", 'alpha = "face"\n', "quadratic"),
    ("box-behnken", "", "quadratic"),
    ("optimal", 'runs = 12\nmodel = "interactions"\n', "interactions"),
])
def test_default_model_follows_the_design_it_was_built_for(kind, options, expected):
    # issue 12: a surface design is evaluated for its quadratic model, not main effects
    text = TWO_FACTOR.format(replicates=1, blocks=1, center=0, controls="[]").replace(
        'kind = "full-factorial"', f'kind = "{kind}"\n{options}')
    plan = make_plan(parse_trial_text(text))
    assert design_model(plan) == expected
    ev = evaluate_plan(plan, sd=1.0)
    wanted = {"main": {"chelator", "ph", "temperature"},
              "interactions": {"chelator:ph", "ph:temperature"},
              "quadratic": {"chelator^2", "temperature^2", "chelator:ph"}}[expected]
    assert wanted <= set(ev.summary.term)
    if expected == "main":
        assert not any(":" in t or "^2" in t for t in ev.summary.term)


# -- the effect size is a stated input (issue 12) ----------------------------------
REMOVAL_LIMITS = """
[[response]]
name = "removal"
unit = "%"
aim = "higher"
unacceptable = 50
satisfactory = 95
[[response]]
name = "ph_drift"
aim = "on-target"
ideal = 0
unacceptable = [-0.5, 0.8]
"""


def test_without_a_stated_effect_no_power_is_computed_and_the_output_says_so():
    ev = evaluate_plan(_plan(replicates=2))
    assert ev.summary.power.isna().all() and ev.summary.effect.isna().all()
    assert ev.effect_source == "none" and not ev.sd_stated
    assert "power not computed" in repr(ev)
    assert any("no effect size stated" in n for n in ev.notes)
    assert any("residual standard deviations" in n for n in ev.notes)
    # the detectable effect is still given, in SDs: with sd 1 it is the same number
    same = evaluate_plan(_plan(replicates=2), sd=1.0, effects=1.0)
    assert np.allclose(ev.summary.detectable_effect, same.summary.detectable_effect)
    with pytest.raises(ModelSpecError, match="give effects"):
        ev.replicates_needed()


def test_effect_from_the_response_limits_when_the_sd_is_known():
    plan = _plan(replicates=2, extra=REMOVAL_LIMITS)
    ev = evaluate_plan(plan, sd=15.0)
    assert (ev.summary.effect == 45.0).all()        # 95 - 50, the limits' span
    assert "limits of response 'removal'" in ev.effect_source
    assert "unacceptable 50 to satisfactory 95" in ev.effect_source
    assert ev.to_dict()["effect_source"] == ev.effect_source
    # 2^3 x 2: 16 baths, 12 residual df; effect 45 at sd 15 is 3 SDs -> noncentrality
    # n d^2 / (4 sd^2) = 16 * 9 / 4 = 36 (two-level main effect, coded +-1)
    lam = 16 * 45.0 ** 2 / (4 * 15.0 ** 2)
    crit = stats.f.ppf(0.95, 1, 12)
    assert ev.power_of("chelator") == pytest.approx(stats.ncf.sf(crit, 1, 12, lam),
                                                    rel=1e-9)
    # without an SD the limits cannot be set against the noise: no power, said so
    assert evaluate_plan(plan).effect_source == "none"


def test_evaluation_section_picks_the_response_whose_limits_set_the_effect():
    plan = _plan(replicates=2, extra=REMOVAL_LIMITS
                 + '[evaluation]\nsd = 0.2\nresponse = "ph_drift"\n')
    ev = evaluate_plan(plan)
    assert (ev.summary.effect == 0.5).all()         # ideal 0 to the nearer limit, -0.5
    assert "ph_drift" in ev.effect_source and "nearer unacceptable" in ev.effect_source
    stated = evaluate_plan(plan, effects=0.3)
    assert stated.effect_source == "stated" and (stated.summary.effect == 0.3).all()


def test_evaluation_response_must_name_a_response():
    from trialkit.exceptions import TrialFileError

    text = TWO_FACTOR.format(replicates=1, blocks=1, center=0, controls="[]") \
        + REMOVAL_LIMITS + '[evaluation]\nresponse = "removl"\n'
    with pytest.raises(TrialFileError) as err:
        parse_trial_text(text)
    assert "unknown_response" in err.value.problems.checks()
    assert "removal" in str(err.value)
