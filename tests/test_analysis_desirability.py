"""Derringer–Suich desirability (trialkit.analysis.desirability)."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from trialkit.analysis.desirability import Aim, optimize_desirability
from trialkit.analysis.model import fit_model
from trialkit.exceptions import AnalysisError
from trialkit.trial.factors import Factor

REF = Path(__file__).parent / "reference" / "stats"


def test_desirability_tire_tread_published_optimum():
    """Derringer & Suich (1980) tire tread, as worked in NIST/SEMATECH e-Handbook 5.5.3.2.2:
    best compromise near x = (-0.10, 0.15, -1.0), D = 0.596 (published to those digits)."""
    ref = json.loads((REF / "desirability" / "derringer_suich_1980_tire_tread.json").read_text())
    runs = pd.DataFrame(ref["runs"]).replace({1.63: 1.633, -1.63: -1.633})  # see the JSON note
    fs = [Factor.continuous(n, -1, 1) for n in ("x1", "x2", "x3")]
    fits = {"y1": fit_model(runs, "y1", fs, "quadratic", block=None),
            "y2": fit_model(runs, "y2", fs, "quadratic", block=None),
            "y3": fit_model(runs, "y3", fs, "main", block=None),
            "y4": fit_model(runs, "y4", fs, "quadratic", block=None)}
    c1 = fits["y1"].coded_coefficients.set_index("term").estimate
    assert c1["x1:x3"] == pytest.approx(ref["published_fits"]["y1"]["coefficients"]["x1:x3"],
                                        abs=0.005)
    aims = []
    for r in ref["responses"]:
        if r["aim"] == "higher":
            aims.append(Aim(r["name"], "higher", r["unacceptable"], r["satisfactory"]))
        else:
            aims.append(Aim(r["name"], "on-target", tuple(r["unacceptable"]),
                            ideal=r["ideal"]))
    res = optimize_desirability(fits, aims, seed=1, n_tries=8)
    pub = ref["published_optimum"]
    for i, n in enumerate(("x1", "x2", "x3")):
        assert res.settings[n] == pytest.approx(pub["x"][i], abs=0.01)
    assert res.overall == pytest.approx(pub["D"], abs=0.001)
    pred = res.summary.set_index("response").predicted
    for n, v in pub["predicted"].items():
        assert pred[n] == pytest.approx(v, rel=2e-3)
    tab = res.summary
    assert (tab.pi_low < tab.predicted).all() and (tab.predicted < tab.pi_high).all()
    g = res.grid("x1", "x2", n=9)
    assert g.desirability.max() <= res.overall + 1e-9


@pytest.mark.parametrize("kwargs, fragment", [
    ({"aim": "maximise", "unacceptable": 0, "satisfactory": 1}, "must be one of"),
    ({"aim": "higher", "unacceptable": 2, "satisfactory": 1}, "must lie below"),
    ({"aim": "lower", "unacceptable": 1, "satisfactory": 2}, "must lie above"),
    ({"aim": "on-target", "unacceptable": (0, 1)}, "on-target aim needs"),
    ({"aim": "on-target", "unacceptable": (0, 1), "ideal": 2}, "on-target aim needs"),
    ({"aim": "higher", "unacceptable": 0}, "one unacceptable and one satisfactory"),
    ({"aim": "lower", "unacceptable": 1, "satisfactory": 0, "priority": 0}, "must be > 0"),
])
def test_bad_aims(kwargs, fragment):
    with pytest.raises(AnalysisError, match=fragment):
        Aim("y", **kwargs)


def test_on_target_desirability_shape_and_priority():
    g = Aim("y", "on-target", (400, 600), ideal=500, shape=2, shape_above=0.5)
    np.testing.assert_allclose(g.desirability([400, 450, 500, 550, 600, 700]),
                               [0, 0.25, 1, np.sqrt(0.5), 0, 0])
