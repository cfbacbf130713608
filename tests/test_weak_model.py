"""A weak model does not choose the recipe on its own (issue 15, claims within reach).

Invented trial (not measurements): removal is pure noise around 60 %, so no model can
predict left-out baths (predicted R² far below 0.5).  The recommendation must then be the
best treatment the trial actually ran, checked here against a plain pandas group mean of
the same baths, and say why.
"""

from __future__ import annotations

import numpy as np
import pytest
from test_lean_settings import TRIAL

from trialkit.analysis.trial_analysis import analyze
from trialkit.planning.plan import make_plan
from trialkit.trial.file import load_trial


@pytest.mark.parametrize("seed", [21, 22])
def test_a_weak_model_recommends_the_best_treatment_run(tmp_path, seed):
    folder = tmp_path / f"weak{seed}"
    folder.mkdir()
    (folder / "trial.toml").write_text(TRIAL, encoding="utf-8")
    plan = make_plan(load_trial(folder))
    baths = plan.baths.copy()
    baths["removal"] = 60 + np.random.default_rng(seed).normal(0, 5.0, len(baths))
    data = analyze(folder, baths=baths)
    assert data.fits["removal"].pred_r_squared < 0.5
    rec = data.to_dict()["recommendation"]
    means = baths.groupby(["chelator", "surfactant", "temperature"])["removal"].mean()
    chelator, surfactant, temperature = means.idxmax()            # reference: pandas
    assert rec["settings"] == {"chelator": float(chelator), "surfactant": surfactant,
                               "temperature": float(temperature)}
    assert rec["set_to_cheapest"] == {}
    said = [r for r in rec["reasons"] if r.startswith("The model for removal is weak")]
    assert said and "best treatment the trial ran" in said[0]
    assert f"over {int((baths.groupby(list(means.index.names)).size()).max())} baths" \
        in said[0]
