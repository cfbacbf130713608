"""Time to clean with the slow baths kept, in a whole trial (issue 15, censored times).

Invented two-level trial (not measurements): at 20 °C the rust comes off so slowly that
no bath reaches 90 % removal by the last inspection (8 h); at 40 °C every bath does, the
faster the more chelator.  Dropping the unfinished baths would leave 40 °C alone and no
model at all; the analysis must say that every 20 °C bath was still short, test it
(reference: scipy.stats.fisher_exact on the same counts) and estimate the chelator's
effect from the baths that can carry it.
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
from scipy import stats

from trialkit.analysis.trial_analysis import analyze
from trialkit.planning.plan import make_plan
from trialkit.report.build import build_report
from trialkit.responses.bath_kinetics import fit_baths
from trialkit.trial.file import load_trial

TRIAL = """
[trial]
title = "Slow cold baths, invented example"
question = "How fast does each bath clean?"
seed = 44
[[factor]]
name = "temperature"
low = 20
high = 40
unit = "degC"
[[factor]]
name = "chelator"
low = 2
high = 6
unit = "% w/v"
[design]
kind = "full-factorial"
[layout]
replicates = 3
[[response]]
name = "time_to_clean"
unit = "h"
aim = "lower"
measure = "time_to_90_h"
[analysis]
model = "main"
"""
INSPECTIONS_H = [1.0, 2.0, 4.0, 8.0]


def _rate(temperature: float, chelator: float) -> float:
    """Invented first-order removal rate, 1/h: t90 = ln 10 / k."""
    return 0.05 if temperature < 30 else 0.6 * (1 + 0.1 * (chelator - 2))


def _trial(tmp_path, seed: int):
    folder = tmp_path / f"slow{seed}"
    folder.mkdir()
    (folder / "trial.toml").write_text(TRIAL, encoding="utf-8")
    plan = make_plan(load_trial(folder))
    baths = plan.baths.copy()
    baths["bath"] = baths["bath"].astype(str)
    rng = np.random.default_rng(seed)
    rows = []
    for rec in baths.to_dict("records"):
        k = _rate(rec["temperature"], rec["chelator"]) * math.exp(rng.normal(0, 0.05))
        for j in range(2):
            c0 = rng.uniform(75, 95)
            for t in INSPECTIONS_H:
                rows.append({"bath": rec["bath"], "coupon": f"{rec['bath']}-{j}",
                             "elapsed_h": t, "coverage_pct": float(np.clip(
                                 c0 * math.exp(-k * math.exp(rng.normal(0, 0.03)) * t)
                                 + rng.normal(0, 0.3), 0, 100))})
    tc = pd.DataFrame(rows)
    table, _, _ = fit_baths(tc)
    baths["time_to_clean"] = baths["bath"].map(table.set_index("bath")["time_to_90_h"])
    return folder, baths, tc


def test_a_level_where_no_bath_finished_is_reported_and_tested(tmp_path):
    folder, baths, tc = _trial(tmp_path, 3)
    data = analyze(folder, baths=baths, timecourse=tc)
    assert "time_to_clean" not in data.fits        # the linear model has one temperature
    cen = data.to_dict()["responses"]["time_to_clean"]["censoring"]
    assert cen["n_baths"] == 12 and cen["n_censored"] == 6
    stuck = cen["fully_censored_levels"]
    assert [(s["factor"], s["level"]) for s in stuck] == [("temperature", 20.0)]
    text = [f["text"] for f in build_report(data).findings
            if f["response"] == "time_to_clean" and f["term"] == "temperature"]
    p_ref = stats.fisher_exact([[6, 0], [0, 6]])[1]            # reference: scipy
    assert text and f"p = {p_ref:.2g}" in text[0] and "cannot say by how much" in text[0]
    assert "Every bath at temperature 20 °C (6) was still short of 90 %" in text[0]
    # the note counts every bath, not only those left after setting the stuck level aside
    note = [n for n in data.notes["analysis"] if n.startswith("time_to_clean: ")]
    assert any("6 of 12 baths had not reached" in n for n in note), note


@pytest.mark.parametrize("seed", [11, 12, 13, 14])
def test_the_other_factor_is_estimated_from_the_baths_that_carry_it(tmp_path, seed):
    folder, baths, tc = _trial(tmp_path, seed)
    data = analyze(folder, baths=baths, timecourse=tc)
    cf = data.censored_fits["time_to_clean"]
    assert cf.n == 6 and cf.columns == ["intercept", "chelator"]
    # truth at 40 °C: t90 ratio (6 % over 2 %) = k(2) / k(6) = 1 / 1.4
    row = cf.summary.set_index("term").loc["chelator"]
    low, high = math.exp(2 * row.ci_low), math.exp(2 * row.ci_high)
    assert low <= 1 / 1.4 <= high and high < 1       # more chelator: faster, and shown
    said = [f["text"] for f in build_report(data).findings
            if f["response"] == "time_to_clean" and f["term"] == "chelator"]
    assert said and said[0].startswith("Raising chelator from 2 to 6 % w/v shortened the "
                                       "median time to clean")
    # the recommendation predicts the time from this model, inside its physical range
    # never a level where no bath got there; the fastest chelator by the censored model
    assert data.recommendation["settings"] == {"temperature": 40.0, "chelator": 6.0}
    assert "log-normal time model" in data.recommendation["source"]
    rec = data.recommendation["predictions"].set_index("response").loc["time_to_clean"]
    assert rec.scale.startswith("log (median")
    assert 0 < rec.ci_low <= rec.predicted <= rec.ci_high


def test_too_few_finished_baths_shrink_the_censored_model_to_main_effects():
    # issue 15: four finished baths cannot carry a + b + a:b (four coefficients and a
    # scale), but they can carry the main effects; with two finished nothing is fitted
    from trialkit.analysis.censored import fit_censored
    from trialkit.analysis.censored_times import fit_shrinking
    from trialkit.exceptions import AnalysisError
    from trialkit.trial.factors import Factor

    a, b = Factor.continuous("a", 0, 1), Factor.continuous("b", 0, 1)
    t = pd.DataFrame({"a": [0, 1, 0, 1, 0, 1], "b": [0, 0, 1, 1, 0, 1],
                      "time": [5.0, 3, 4, 2, 9, 9], "censored": [0, 0, 0, 0, 1, 1]})
    with pytest.raises(AnalysisError, match="only 4 baths reached"):
        fit_censored(t, "time", [a, b], "a + b + a:b", censored="censored")
    fit, model, why = fit_shrinking(t, [a, b], "a + b + a:b", 0.05)
    assert model == "a + b" and why == ""
    same = fit_censored(t, "time", [a, b], "a + b", censored="censored")
    assert list(fit.beta) == pytest.approx(list(same.beta)) and fit.columns == same.columns
    t2 = t.assign(censored=[0, 0, 1, 1, 1, 1])
    assert fit_shrinking(t2, [a, b], "a + b + a:b", 0.05)[:2] == (None, None)
