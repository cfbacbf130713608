"""Hierarchical model reduction (trialkit.analysis.reduction)."""

from __future__ import annotations

import itertools

import numpy as np
import pandas as pd
import pytest

from trialkit.analysis.model import fit_model
from trialkit.analysis.reduction import information, reduce_model
from trialkit.exceptions import AnalysisError
from trialkit.trial.factors import Factor

FS = [Factor.continuous(n, -1, 1) for n in ("a", "b", "c")]


def _data(seed=3):
    """Invented 2^3 twice: y depends on a, b:c (b and c themselves have no effect)."""
    rng = np.random.default_rng(seed)
    runs = list(itertools.product([-1.0, 1.0], repeat=3)) * 2
    df = pd.DataFrame(runs, columns=["a", "b", "c"])
    df["y"] = 20 + 3 * df.a + 2 * df.b * df.c + rng.normal(0, 0.3, len(df))
    return df


def test_p_reduction_keeps_parents_of_significant_interaction():
    fit = fit_model(_data(), "y", FS, "interactions", block=None)
    red = reduce_model(fit, criterion="p", threshold=0.05)
    assert set(red.final.spec.term_names) == {"a", "b", "c", "b:c"}
    assert red.final.spec.is_hierarchical()
    steps = red.steps
    assert steps.step.tolist() == list(range(len(steps)))
    assert pd.isna(steps.removed.iloc[0]) and set(steps.removed.iloc[1:]) == {"a:b", "a:c"}
    assert (steps.p.iloc[1:] > 0.05).all()
    # every step's p equals the type 3 p of that term in the model before the step
    before = fit_model(_data(), "y", FS, steps.model.iloc[0], block=None)
    p0 = before.anova(3).summary.set_index("term").p[steps.removed.iloc[1]]
    assert steps.p.iloc[1] == pytest.approx(p0, rel=1e-12)


def test_aic_steps_lower_the_criterion_each_time():
    fit = fit_model(_data(), "y", FS, "interactions", block=None)
    red = reduce_model(fit, criterion="aic")
    assert np.all(np.diff(red.steps.aic.to_numpy()) < 0)
    assert red.steps.aic.iloc[-1] == pytest.approx(information(red.final)[0])
    assert {"a", "b:c"} <= set(red.final.spec.term_names)
    bic = reduce_model(fit, criterion="bic")
    assert len(bic.final.spec.terms) <= len(red.final.spec.terms)


def test_information_matches_definition():
    fit = fit_model(_data(), "y", FS, "main", block=None)
    n, p = fit.n, 4
    aic, bic = information(fit)
    assert aic == pytest.approx(n * np.log(fit.ls.rss / n) + 2 * p)
    assert bic == pytest.approx(n * np.log(fit.ls.rss / n) + np.log(n) * p)


def test_bad_options():
    fit = fit_model(_data(), "y", FS, "main", block=None)
    with pytest.raises(AnalysisError, match="criterion"):
        reduce_model(fit, criterion="stepwise")
    with pytest.raises(AnalysisError, match="threshold"):
        reduce_model(fit, threshold=5)
