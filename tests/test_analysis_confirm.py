"""Confirmation baths (trialkit.analysis.confirm)."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from scipy import stats

from trialkit.analysis.confirm import confirm
from trialkit.analysis.model import fit_model
from trialkit.exceptions import AnalysisError
from trialkit.trial.factors import Factor


def _fit():
    """Invented straight-line data with known residual scatter."""
    x = np.repeat([-1.0, 0.0, 1.0], 4)
    y = 10 + 2 * x + np.tile([-0.3, 0.1, 0.3, -0.1], 3)
    return fit_model(pd.DataFrame({"a": x, "y": y}), "y", [Factor.continuous("a", -1, 1)],
                     "a", block=None)


def test_interval_formula_and_inside_flags():
    fit = _fit()
    res = confirm(fit, {"a": 0.0}, [10.1, 9.8, 14.0])
    s2, n = fit.sigma2, fit.n
    t = stats.t.ppf(0.975, fit.df_resid)
    half_one = t * np.sqrt(s2 * (1 + 1 / n))  # at the centre x = 0, se_fit^2 = s2 / n
    assert res.table.pi_high[0] - 10.0 == pytest.approx(half_one, rel=1e-10)
    assert res.table.inside.tolist() == [True, True, False]
    half_mean = t * np.sqrt(s2 * (1 / 3 + 1 / n))
    assert res.mean["pi_high"] - 10.0 == pytest.approx(half_mean, rel=1e-10)
    assert res.mean["inside"] is bool(abs(np.mean([10.1, 9.8, 14.0]) - 10.0) <= half_mean)
    assert res.all_inside is False
    assert confirm(fit, {"a": 0.0}, [10.1, 9.8]).all_inside is True


def test_confirmation_values_must_be_numbers():
    with pytest.raises(AnalysisError, match="row 2"):
        confirm(_fit(), {"a": 0.0}, ["10.1", "ten"])
