"""ANOVA tables and model fits (trialkit.analysis.anova, trialkit.analysis.model)."""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import statsmodels.formula.api as smf
from scipy import stats
from statsmodels.stats.anova import anova_lm

from trialkit.analysis.model import fit_model
from trialkit.exceptions import AnalysisError, ModelSpecError
from trialkit.trial.factors import Factor

REF = Path(__file__).parent / "reference" / "stats" / "ehandbook"


def _unbalanced(seed=20261201):
    """Invented unbalanced data: two categorical factors and one continuous one."""
    rng = np.random.default_rng(seed)
    rows = []
    for a, na in (("still", 3), ("stirred", 5), ("ultrasonic", 2)):
        for b in ("none", "added"):
            for _ in range(na + (b == "added")):
                t = rng.uniform(20, 50)
                y = 10 + {"still": 0, "stirred": 3, "ultrasonic": 5}[a] + 2 * (b == "added") \
                    + 0.1 * t + 1.5 * (a == "stirred") * (b == "added") + rng.normal(0, 1)
                rows.append({"agitation": a, "surfactant": b, "temperature": t, "y": y})
    return pd.DataFrame(rows)


FACT = [Factor.categorical("agitation", ["still", "stirred", "ultrasonic"]),
        Factor.categorical("surfactant", ["none", "added"]),
        Factor.continuous("temperature", 20, 50)]


@pytest.mark.parametrize("typ", [1, 2, 3])
def test_types_equal_statsmodels_with_sum_contrasts_on_unbalanced_data(typ):
    """Reference library: statsmodels anova_lm with C(., Sum) contrasts, same model."""
    df = _unbalanced()
    df["tc"] = (df.temperature - 35.0) / 15.0  # coded like ours
    # patsy puts terms without numeric factors first; same order here for type 1
    fit = fit_model(df, "y", FACT, "agitation + surfactant + agitation:surfactant + "
                    "temperature + surfactant:temperature", block=None)
    sm = smf.ols("y ~ C(agitation, Sum) + C(surfactant, Sum) + "
                 "C(agitation, Sum):C(surfactant, Sum) + tc + C(surfactant, Sum):tc", df).fit()
    ref = anova_lm(sm, typ=typ)
    ours = fit.anova(typ).summary
    ref_rows = ref.drop(index=[i for i in ref.index if i in ("Intercept", "Residual")])
    np.testing.assert_allclose(ours.sum_sq.to_numpy(), ref_rows.sum_sq.to_numpy(), rtol=1e-10)
    np.testing.assert_allclose(ours.F.to_numpy(), ref_rows.F.to_numpy(), rtol=1e-10)
    np.testing.assert_allclose(ours.p.to_numpy(), ref_rows["PR(>F)"].to_numpy(), rtol=1e-8)
    assert fit.anova(typ).residual["sum_sq"] == pytest.approx(ref.loc["Residual", "sum_sq"],
                                                              rel=1e-12)


def test_type3_refuses_treatment_coding():
    df = _unbalanced()
    fit = fit_model(df, "y", FACT, "agitation + surfactant", block=None, coding="treatment")
    with pytest.raises(AnalysisError, match="sum-to-zero"):
        fit.anova(3)


def test_eddy_current_final_model_reproduced():
    """NIST/SEMATECH e-Handbook 5.6.1 (eddy current 2^3): published y ~ x1 + x2 output."""
    ref = json.loads((REF / "eddy_current_2k3_full_factorial.json").read_text())
    runs = pd.DataFrame(ref["runs_standard_order"])
    fs = [Factor.continuous(f["name"], f["low"], f["high"]) for f in ref["factors"]]
    nat = runs.copy()
    for f in fs:
        nat[f.name] = f.to_natural(runs[f.name].to_numpy())
    fit = fit_model(nat, "y", fs, "x1 + x2", block=None)
    pub = ref["published"]["final_model_y~x1+x2"]
    c = fit.coded_coefficients.set_index("term")
    for term in ("x1", "x2"):
        assert c.loc[term, "estimate"] == pytest.approx(pub["coefficients"][term], abs=5e-5)
        assert c.loc[term, "std_error"] == pytest.approx(pub["std_error_each"], abs=5e-5)
    assert c.loc["intercept", "estimate"] == pytest.approx(2.65875, abs=1e-12)
    assert np.sqrt(fit.sigma2) == pytest.approx(pub["residual_sd"], abs=5e-5)
    assert fit.r_squared == pytest.approx(pub["r_squared"], abs=5e-5)
    assert fit.adj_r_squared == pytest.approx(pub["adj_r_squared"], abs=5e-5)
    assert fit.anova(1).model["F"] == pytest.approx(pub["F"], abs=0.05)
    assert fit.anova(1).model["p"] == pytest.approx(pub["F_p"], rel=1e-3)
    np.testing.assert_allclose(fit.resid, pub["residuals_standard_order"], atol=1e-12)
    pred = fit.predict({"x1": 90, "x2": 0.38, "x3": 44})
    assert pred.predicted[0] == pytest.approx(pub["prediction_at_x1=-1,x2=-1"], abs=1e-12)


def test_eddy_current_saturated_model_uses_lenth_not_f_zero():
    """e-Handbook 5.6.1 saturated model coefficients; no residual df -> Lenth's test."""
    ref = json.loads((REF / "eddy_current_2k3_full_factorial.json").read_text())
    runs = pd.DataFrame(ref["runs_standard_order"])
    fs = [Factor.continuous(n, -1, 1) for n in ("x1", "x2", "x3")]
    fit = fit_model(runs, "y", fs, "x1 + x2 + x3 + x1:x2 + x1:x3 + x2:x3 + x1:x2:x3",
                    block=None)
    pub = ref["published"]["saturated_model_coefficients"]
    c = fit.coded_coefficients.set_index("term").estimate
    for term, value in pub.items():
        assert c["intercept" if term == "Intercept" else term] == pytest.approx(value, abs=1e-12)
    table = fit.anova(2)
    assert table.test == "lenth"
    assert table.summary.F.notna().all() and (table.summary.F > 0).all()
    assert table.summary.p.between(0, 1).all()
    # x1 dominates: effect 3.1025 (derived in the reference) is far above the others
    assert table.summary.set_index("term").p["x1"] == table.summary.p.min()


def test_catapult_reduced_model_lack_of_fit():
    """e-Handbook 5.4.7.2 catapult 2^(5-1) + centre points: reduced model ANOVA, lack of fit."""
    ref = json.loads((REF / "catapult_2k5m1_with_centre_points.json").read_text())
    runs = pd.DataFrame(ref["runs_in_run_order"])
    fs = [Factor.continuous(n, -1, 1) for n in "hsble"]
    fit = fit_model(runs, "distance", fs, "h + s + b + l + e + b:l", block=None)
    pub = ref["published"]["reduced_model_h_s_b_l_e_bl"]
    an = pub["anova"]
    c = fit.coded_coefficients.set_index("term")
    for term, value in pub["coefficients"].items():
        assert c.loc["intercept" if term == "Intercept" else term, "estimate"] == \
            pytest.approx(value, abs=5e-4)
    table = fit.anova(1)
    assert table.model["sum_sq"] == pytest.approx(an["model_ss"], abs=5e-3)
    assert table.residual["sum_sq"] == pytest.approx(an["error_ss"], abs=5e-3)
    lof = table.lack_of_fit
    assert (lof["lack_of_fit_df"], lof["pure_error_df"]) == (an["lack_of_fit_df"],
                                                             an["pure_error_df"])
    assert lof["lack_of_fit_sum_sq"] == pytest.approx(an["lack_of_fit_ss"], abs=5e-3)
    assert lof["pure_error_sum_sq"] == pytest.approx(an["pure_error_ss"], abs=5e-3)
    assert lof["F"] == pytest.approx(an["lack_of_fit_F"], abs=5e-3)
    assert lof["p"] == pytest.approx(an["lack_of_fit_p"], abs=5e-5)
    assert fit.r_squared == pytest.approx(pub["r_squared"], abs=5e-5)
    assert fit.adj_r_squared == pytest.approx(pub["adj_r_squared"], abs=5e-4)


def test_curvature_from_centre_points():
    """Invented data: a bowl-shaped response with centre points -> curvature detected.

    The curvature sum of squares n_f n_c (ybar_f - ybar_c)^2 / (n_f + n_c) is the textbook
    single-degree-of-freedom test (common practice); the numbers here follow by hand.
    """
    corners = [(-1, -1), (1, -1), (-1, 1), (1, 1)]
    rows = [{"a": a, "b": b, "y": 10.0 + a + 0.5 * b} for a, b in corners]
    rows += [{"a": 0, "b": 0, "y": v} for v in (14.0, 14.2, 13.8)]
    fs = [Factor.continuous("a", -1, 1), Factor.continuous("b", -1, 1)]
    fit = fit_model(pd.DataFrame(rows), "y", fs, "main", block=None)
    cur = fit.anova(2).curvature
    assert cur["mean_factorial"] == pytest.approx(10.0)
    assert cur["mean_center"] == pytest.approx(14.0)
    assert cur["sum_sq"] == pytest.approx(4 * 3 * 16 / 7)
    assert cur["error"] == "pure_error" and cur["error_df"] == 2
    assert cur["F"] == pytest.approx((4 * 3 * 16 / 7) / 0.04)
    assert cur["p"] == pytest.approx(stats.f.sf(cur["F"], 1, 2), rel=1e-12) and cur["p"] < 0.01


def test_blocks_enter_as_fixed_effect_first():
    df = _unbalanced()
    df["block"] = np.where(np.arange(len(df)) % 2 == 0, 1, 2)
    fit = fit_model(df, "y", FACT, "agitation + temperature")
    assert fit.spec.term_names[0] == "block"
    assert fit.anova(1).summary.term.tolist() == ["block", "agitation", "temperature"]
    pred = fit.predict({"agitation": "still", "temperature": 35.0})
    assert np.isfinite(pred.pi_low[0]) and pred.pi_low[0] < pred.predicted[0]


def test_predicted_r_squared_matches_leave_one_out_refits():
    """PRESS by the hat-matrix identity equals brute-force leave-one-out refits."""
    df = _unbalanced()
    fit = fit_model(df, "y", FACT, "agitation + temperature", block=None)
    press = 0.0
    for i in range(len(df)):
        sub = fit_model(df.drop(index=i), "y", FACT, "agitation + temperature", block=None)
        press += (df.y[i] - sub.predict(df.iloc[[i]]).predicted[0]) ** 2
    assert fit.press == pytest.approx(press, rel=1e-10)
    assert fit.pred_r_squared == pytest.approx(1 - press / fit.tss, rel=1e-10)


@pytest.mark.parametrize("change, model, error, fragment", [
    ("text", "main", AnalysisError, "must hold numbers"),
    ("one_level", "main", AnalysisError, "only one level"),
    (None, "agitation + colour", ModelSpecError, "unknown factor 'colour'"),
    ("few", "agitation*temperature", ModelSpecError, "unexpected"),
    ("few", "interactions", AnalysisError, "coefficients but only"),
])
def test_bad_input_gives_clear_errors(change, model, error, fragment):
    df = _unbalanced()
    if change == "text":
        df["y"] = df.y.astype(object)
        df.loc[3, "y"] = "about 12"
    elif change == "one_level":
        df["surfactant"] = "none"
    elif change == "few":
        df = df.iloc[[0, 5, 11, 18, 20]]
    with pytest.raises(error, match=fragment):
        fit_model(df, "y", FACT, model, block=None)


def test_to_dict_contract_keys_and_natural_units():
    df = _unbalanced()
    d = fit_model(df, "y", FACT, "agitation + temperature", block=None).to_dict(3)
    assert set(d["anova"][0]) == {"term", "df", "sum_sq", "mean_sq", "F", "p",
                                  "error_stratum", "error_df"}
    assert set(d["residual"]) == {"df", "sum_sq", "mean_sq"}
    assert {(r["error_stratum"], r["error_df"]) for r in d["anova"]} == \
        {("residual (baths)", d["residual"]["df"])}
    assert set(d["coefficients"][0]) == {"term", "estimate", "std_error", "ci_low", "ci_high"}
    nat = {r["term"]: r for r in d["coefficients"]}
    coded = {r["term"]: r for r in d["coded_coefficients"]}
    # natural slope = coded slope / half range (15 degC)
    assert nat["temperature"]["estimate"] == pytest.approx(
        coded["temperature"]["estimate"] / 15.0, rel=1e-12)
    json.dumps(d, allow_nan=False)


def test_profile_averages_hidden_categorical_factors():
    """Main-effect profile: with sum coding, hidden categorical factors are averaged, so
    the profile of 'surfactant' equals the mean of the per-agitation predictions."""
    df = _unbalanced()
    fit = fit_model(df, "y", FACT, "agitation + surfactant + agitation:surfactant + "
                    "temperature", block=None)
    prof = fit.profile("surfactant")
    cells = fit.profile("surfactant", by="agitation")
    assert set(prof.columns) >= {"surfactant", "predicted", "ci_low", "ci_high"}
    for level in ("none", "added"):
        mean_cells = cells[cells.surfactant == level].predicted.mean()
        assert prof.set_index("surfactant").predicted[level] == pytest.approx(mean_cells)
    line = fit.profile("temperature", n=5)
    assert line.temperature.tolist() == [20.0, 27.5, 35.0, 42.5, 50.0]
    assert np.allclose(np.diff(line.predicted, 2), 0)  # straight line in temperature
    with pytest.raises(AnalysisError, match="not a factor"):
        fit.profile("colour")


def _unreplicated_with_one_centre(seed, bump, model):
    """Invented 2^3 factorial plus one centre point, no replicates (no pure error)."""
    import itertools

    from trialkit.analysis.model import fit_model
    from trialkit.trial.factors import Factor

    pts = [*itertools.product([-1.0, 1.0], repeat=3), (0.0, 0.0, 0.0)]
    df = pd.DataFrame(pts, columns=["a", "b", "c"])
    rng = np.random.default_rng(seed)
    df["y"] = (10 + 2 * df.a - df.b + 0.5 * df.c + bump * (df.a == 0)
               + rng.normal(0, 1.0, len(df)))
    fs = [Factor.continuous(n, -1, 1) for n in "abc"]
    return fit_model(df, "y", fs, model, block=None)


def test_curvature_without_pure_error_keeps_its_level_and_power():
    # issue 15: with no pure error the old test divided by a residual that held the
    # curvature itself and could never reject.  400 fresh seeded trials each (invented):
    # rejection <= 0.06 with no curvature, >= 0.8 with a bump of 6 SD at the centre.
    null = [_unreplicated_with_one_centre(10_000 + s, 0.0, "main").anova(2).curvature
            for s in range(400)]
    bump = [_unreplicated_with_one_centre(20_000 + s, 6.0, "main").anova(2).curvature
            for s in range(400)]
    assert all(c["error"] == "residual_with_centre_indicator" and c["error_df"] == 4
               for c in null)
    assert np.mean([c["p"] < 0.05 for c in null]) <= 0.06
    assert np.mean([c["p"] < 0.05 for c in bump]) >= 0.8


def test_curvature_not_testable_when_no_residual_is_left():
    cur = _unreplicated_with_one_centre(1, 5.0, "a + b + c + a:b + a:c + b:c + a:b:c"
                                        ).anova(2).curvature
    assert cur is None or (cur["testable"] is False and math.isnan(cur["p"]))
