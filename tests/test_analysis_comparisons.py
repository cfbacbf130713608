"""Comparisons of levels (Tukey) and of treatments with the controls (Dunnett).

References: statsmodels' ``pairwise_tukeyhsd`` (statsmodels.stats.multicomp) and scipy's
``scipy.stats.dunnett``, general-purpose reference libraries, on the same invented bath
values (not measurements)."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from scipy import stats
from statsmodels.stats.multicomp import pairwise_tukeyhsd

from trialkit.analysis.comparisons import (
    level_comparisons,
    level_means,
    treatment_label,
    versus_controls,
)
from trialkit.analysis.model import fit_model
from trialkit.exceptions import AnalysisError
from trialkit.trial.factors import Factor

SALT = Factor.categorical("salt", ["tetrasodium EDTA", "disodium EDTA", "sodium citrate",
                                   "sodium gluconate"])


def _salts(seed: int, n=(3, 4, 3, 5)) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    means = {"tetrasodium EDTA": 80.0, "disodium EDTA": 74.0, "sodium citrate": 62.0,
             "sodium gluconate": 70.0}
    rows = [{"salt": lev, "removal": means[lev] + rng.normal(0, 4.0), "point": "factorial"}
            for lev, k in zip(SALT.levels, n, strict=True) for _ in range(k)]
    return pd.DataFrame(rows)


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_tukey_equals_statsmodels_pairwise_tukeyhsd(seed):
    table = _salts(seed)
    fit = fit_model(table, "removal", [SALT], "main")
    ours = {(r["level_a"], r["level_b"]): r for r in level_comparisons(fit, SALT, "removal")}
    ref = pairwise_tukeyhsd(table["removal"], table["salt"], alpha=0.05)
    frame = pd.DataFrame(ref._results_table.data[1:], columns=ref._results_table.data[0])
    assert len(frame) == len(ours) == 6
    for r in frame.itertuples():
        # statsmodels: meandiff = group2 - group1
        mine = ours.get((r.group2, r.group1))
        sign = 1.0
        if mine is None:
            mine, sign = ours[(r.group1, r.group2)], -1.0
        assert sign * mine["difference"] == pytest.approx(r.meandiff, abs=1e-3)
        assert mine["p_adjusted"] == pytest.approx(r._4, abs=1e-3)  # p-adj
        lo, hi = sorted((sign * mine["low"], sign * mine["high"]))
        assert lo == pytest.approx(r.lower, abs=1e-3) and hi == pytest.approx(r.upper, abs=1e-3)


def test_level_means_are_the_group_means_in_a_one_factor_trial():
    table = _salts(4)
    fit = fit_model(table, "removal", [SALT], "main")
    means = level_means(fit, SALT).set_index("level")
    for lev, g in table.groupby("salt"):
        assert means.loc[lev, "mean"] == pytest.approx(g["removal"].mean(), rel=1e-12)
        # a t interval on the pooled residual SD (classical one-way result)
        se = np.sqrt(fit.sigma2 / len(g))
        t = stats.t.ppf(0.975, fit.df_resid)
        assert means.loc[lev, "high"] - means.loc[lev, "mean"] == pytest.approx(t * se)


def test_dunnett_equals_scipy_and_names_treatments():
    rng = np.random.default_rng(9)
    chel = Factor.continuous("chelator", 1, 9, unit="% w/v")
    rows = [{"point": "sweep", "chelator": c, "removal": 50 + 5 * c + rng.normal(0, 3)}
            for c in (1, 5, 9) for _ in range(3)]
    rows += [{"point": "control", "chelator": np.nan, "removal": 3 + rng.normal(0, 1)}
             for _ in range(3)]
    rows += [{"point": "reference", "chelator": np.nan, "removal": 95 + rng.normal(0, 1)}
             for _ in range(3)]
    baths = pd.DataFrame(rows)
    got = versus_controls(baths, "removal", [chel])
    assert [g["control"] for g in got] == ["untreated"] * 3 + ["reference"] * 3
    assert got[0]["treatment"] == "chelator 1 % w/v"
    groups = [baths.loc[baths.chelator == c, "removal"].to_numpy() for c in (1, 5, 9)]
    for kind, point in (("untreated", "control"), ("reference", "reference")):
        control = baths.loc[baths.point == point, "removal"].to_numpy()
        ref = stats.dunnett(*groups, control=control, random_state=0)  # same QMC seed
        ci = ref.confidence_interval()
        mine = [g for g in got if g["control"] == kind]
        assert [m["p_adjusted"] for m in mine] == pytest.approx(list(ref.pvalue), abs=1e-3)
        assert [m["low"] for m in mine] == pytest.approx(list(ci.low), abs=1e-9)
        assert [m["high"] for m in mine] == pytest.approx(list(ci.high), abs=1e-9)


def test_comparisons_refuse_what_they_cannot_do():
    chel = Factor.continuous("chelator", 1, 9)
    table = pd.DataFrame({"chelator": [1.0, 5, 9, 1, 5, 9], "y": [1.0, 2, 3, 1.5, 2.5, 2.9]})
    fit = fit_model(table, "y", [chel], "main")
    with pytest.raises(AnalysisError, match="continuous"):
        level_comparisons(fit, chel, "y")
    assert versus_controls(table.assign(point="sweep"), "y", [chel]) == []
    assert treatment_label(pd.Series({"chelator": 5.0}), [chel]) == "chelator 5"
    salt = Factor.categorical("salt", ["A", "B"])
    assert treatment_label(pd.Series({"salt": "A"}), [salt]) == "salt = A"
