"""Key findings of a demo trial (trialkit.demo.findings) on the bundled examples.

The readings are invented (``example_trials/*/readings``); the truth they were drawn
from is ``trialkit.demo.truth_models.EXAMPLES``.  The findings must agree with that truth.
"""

from __future__ import annotations

import warnings
from pathlib import Path

import pandas as pd

from trialkit.demo.findings import ALPHA, analyse_demo_trial
from trialkit.demo.truth_models import EXAMPLES
from trialkit.planning.plan import load_plan
from trialkit.responses.compute import compute_responses

ROOT = Path(__file__).resolve().parents[1] / "example_trials"


def _inputs(name: str):
    plan = load_plan(ROOT / name)
    coupons = pd.read_csv(ROOT / name / "readings" / "coupons.csv")
    tc = ROOT / name / "readings" / "timecourse.csv"
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        resp = compute_responses(coupons, coupon_spec=plan.trial.coupons,
                                 timecourse=pd.read_csv(tc) if tc.exists() else None)
    return plan, resp


def test_screen_findings_name_the_truly_active_factors():
    plan, resp = _inputs("five-factor-screen")
    found = analyse_demo_trial(plan, resp)
    names = [f.name for f in plan.trial.factors]
    real = EXAMPLES["five-factor-screen"].truth.real_effects(names)["removal"]
    assert found["removal"]["active"] == real
    assert set(found["removal"]["p_values"]) == set(names)
    assert all((p < ALPHA) == (n in real) for n, p in found["removal"]["p_values"].items())


def test_sweep_findings_interval_covers_the_true_optimum():
    plan, resp = _inputs("chelator-sweep")
    found = analyse_demo_trial(plan, resp)
    lo, hi = found["time_to_clean"]["interval"]
    assert lo < EXAMPLES["chelator-sweep"].truth.chelator_optimum < hi
    assert found["time_to_clean"]["factor"] == "chelator"


def test_surface_findings_give_the_best_point_with_an_interval():
    plan, resp = _inputs("surface-follow-up")
    found = analyse_demo_trial(plan, resp, n_boot=200)
    rem = found["removal"]
    assert set(rem["optimum"]) == {"chelator", "ph"}
    for name, (lo, hi) in rem["interval"].items():
        assert lo <= rem["optimum"][name] <= hi
    # cost comes from the recipes, not the readings: it is not among the findings
    assert "cost" not in found or "error" in found["cost"]


def test_too_few_values_is_reported_not_raised():
    plan, resp = _inputs("surface-follow-up")
    resp.baths["removal_pct_mean"] = float("nan")
    resp.baths.loc[:1, "removal_pct_mean"] = 50.0
    found = analyse_demo_trial(plan, resp)
    assert found["removal"] == {"error": "fewer than three baths have a value"}
    assert "optimum" in found["attack"]


def test_alpha_is_the_one_asked_for():
    plan, resp = _inputs("five-factor-screen")
    found = analyse_demo_trial(plan, resp, alpha=0.001)
    p = found["removal"]["p_values"]
    assert found["removal"]["active"] == [n for n, v in p.items() if v < 0.001]
    # at this stricter alpha fewer factors pass than at 0.05 (chelator p is about 0.002)
    assert len(found["removal"]["active"]) < len(analyse_demo_trial(plan, resp)["removal"][
        "active"])
