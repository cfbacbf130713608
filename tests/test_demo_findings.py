"""Key findings of a demo trial (trialkit.demo.findings) on the bundled examples.

The readings are invented (``example_trials/*/readings``); the truth they were drawn
from is ``trialkit.demo.truth_models.EXAMPLES``.  The findings must agree with that truth.
"""

from __future__ import annotations

import warnings
from pathlib import Path

import pandas as pd

from trialkit.analysis.trial_analysis import analyze
from trialkit.demo.findings import demo_findings
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


def _found(name: str, folder: Path | None = None, **kw) -> dict:
    plan, resp = _inputs(name)
    return demo_findings(analyze(folder or ROOT / name, responses=resp, **kw))


def test_screen_findings_name_the_truly_active_factors():
    found = _found("five-factor-screen")
    names = [f.name for f in load_plan(ROOT / "five-factor-screen").trial.factors]
    real = EXAMPLES["five-factor-screen"].truth.real_effects(names)["removal"]
    assert found["removal"]["active"] == real
    assert set(found["removal"]["p_values"]) == set(names)
    # the trial's alpha: its [analysis] section leaves the default, 0.05
    assert all((p < 0.05) == (n in real) for n, p in found["removal"]["p_values"].items())


def test_sweep_findings_interval_covers_the_true_optimum():
    found = _found("chelator-sweep")
    lo, hi = found["time_to_clean"]["interval"]
    assert lo < EXAMPLES["chelator-sweep"].truth.chelator_optimum < hi
    assert found["time_to_clean"]["factor"] == "chelator"


def test_surface_findings_give_the_best_point_with_an_interval():
    found = _found("surface-follow-up", n_boot=200)
    rem = found["removal"]
    assert set(rem["optimum"]) == {"chelator", "ph"}
    for name, (lo, hi) in rem["interval"].items():
        assert lo <= rem["optimum"][name] <= hi
    # cost comes from the recipes (issue 16): the cheapest bath has the least chelator
    cost = found["cost"]
    assert cost["optimum"]["chelator"] == min(rem["interval"]["chelator"][0], 3.0)


def test_too_few_values_is_reported_not_raised():
    plan, resp = _inputs("surface-follow-up")
    resp.baths["removal_pct_mean"] = float("nan")
    found = demo_findings(analyze(ROOT / "surface-follow-up", responses=resp))
    assert found["removal"] == {"error": "no bath has a value yet"}
    assert "optimum" in found["attack"]


def test_alpha_is_the_trials_own(tmp_path):
    src = ROOT / "five-factor-screen"
    text = (src / "trial.toml").read_text(encoding="utf-8")
    assert '[analysis]\nmodel = "main"' in text
    (tmp_path / "trial.toml").write_text(
        text.replace('[analysis]\nmodel = "main"', '[analysis]\nmodel = "main"\nalpha = 0.001'),
        encoding="utf-8")
    found = _found("five-factor-screen", folder=tmp_path)
    p = found["removal"]["p_values"]
    assert found["removal"]["active"] == [n for n, v in p.items() if v < 0.001]
    # at this stricter alpha fewer factors pass than at 0.05 (chelator p is about 0.002)
    assert len(found["removal"]["active"]) < len(_found("five-factor-screen")["removal"][
        "active"])
