"""The recommendation (trialkit.analysis.recommend): "either setting will do" only where
the change's interval lies inside the practical margin (issue 15).  Invented data."""

from __future__ import annotations

from types import SimpleNamespace

import numpy as np
import pandas as pd

from trialkit.analysis.config import AnalysisConfig
from trialkit.analysis.model import fit_model
from trialkit.analysis.recommend import _equivalence_text
from trialkit.trial.factors import Factor

FS = [Factor.continuous("a", -1, 1), Factor.continuous("b", -1, 1)]


def _data(sd):
    pts = [(a, b) for a in (-1.0, 1.0) for b in (-1.0, 1.0)] * 4
    df = pd.DataFrame(pts, columns=["a", "b"])
    df["y"] = 100 + 10 * df.a + np.random.default_rng(4).normal(0, sd, len(df))
    fit = fit_model(df, "y", FS, "main", block=None)
    trial = SimpleNamespace(factors=FS, sections={"analysis": AnalysisConfig()})
    return SimpleNamespace(fits={"y": fit}, trial=trial)


def test_either_setting_only_inside_the_practical_margin():
    # margin: relative_tolerance 0.05 x |prediction| ~ 5.5; b has no effect
    precise = _equivalence_text(_data(0.5), "y", {"a": 1.0, "b": 0.0}, ["b"])
    assert "either setting will do" in precise and "cannot say" not in precise
    noisy = _equivalence_text(_data(12.0), "y", {"a": 1.0, "b": 0.0}, ["b"])
    assert "cannot say that either setting will do" in noisy
