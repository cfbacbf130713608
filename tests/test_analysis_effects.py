"""Two-level effects, alias chains and Lenth's method (trialkit.analysis.effects)."""

from __future__ import annotations

import itertools
import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from scipy import stats

from trialkit.analysis.effects import lenth, two_level_effects
from trialkit.exceptions import AnalysisError
from trialkit.trial.factors import Factor

REF = Path(__file__).parent / "reference" / "stats"


def _full_factorial(names, y):
    runs = list(itertools.product([-1, 1], repeat=len(names)))
    df = pd.DataFrame([dict(zip(names[::-1], r, strict=True)) for r in runs])[names]
    df["y"] = y
    return df


def test_pilot_plant_lenth_pse():
    """Box, Hunter & Hunter (2005) pilot-plant 2^3; Lenth (1989) PSE 2.25 (published in the
    vignette quoted in tests/reference/stats/lenth); ME/SME as computed there."""
    ref = json.loads((REF / "lenth" / "lenth_pse_examples.json").read_text())["examples"][0]
    names = ref["factor_order"]
    df = _full_factorial(names, ref["y_standard_order"])
    fs = [Factor.continuous(n, -1, 1) for n in names]
    res = two_level_effects(df, "y", fs)
    eff = res.summary.set_index("term").effect
    mapping = {"T": "T", "C": "C", "K": "K", "TC": "T:C", "TK": "T:K", "CK": "C:K",
               "TCK": "T:C:K"}
    for pub, ours in mapping.items():
        assert eff[ours] == pytest.approx(ref["effects"][pub], abs=1e-12)
    assert res.mean == pytest.approx(ref["mean"])
    assert res.lenth.pse == pytest.approx(ref["published_PSE_Lenth"], abs=1e-12)
    assert res.lenth.me == pytest.approx(ref["computed"]["ME"], abs=1e-4)
    assert res.lenth.sme == pytest.approx(ref["computed"]["SME"], abs=1e-4)
    sig = set(res.summary.term[res.summary.significant])
    assert sig == {"T", "T:K"}  # 23 and 10 exceed ME 8.47; nothing else does
    # half-normal quantiles increase with |effect| (largest effect plotted highest)
    # (summary is sorted by |effect|, largest first; quantiles Phi^-1(0.5 + 0.5 (i - 0.5)/m))
    hn = res.summary.half_normal_quantile.to_numpy()
    assert np.all(np.diff(hn) < 0)
    assert hn[0] == pytest.approx(stats.norm.ppf(0.5 + 0.5 * 6.5 / 7), rel=1e-12)
    # alias-table order: main effects first, then the interactions
    assert list(res.summary.sort_values("alias_order").term) == list(mapping.values())


def test_eddy_current_effects_match_ehandbook():
    """NIST/SEMATECH e-Handbook 5.6.1: effects = 2 x published saturated coefficients."""
    ref = json.loads((REF / "ehandbook" / "eddy_current_2k3_full_factorial.json").read_text())
    runs = pd.DataFrame(ref["runs_standard_order"])
    fs = [Factor.continuous(n, -1, 1) for n in ("x1", "x2", "x3")]
    eff = two_level_effects(runs, "y", fs).summary.set_index("term").effect
    for term, value in ref["derived"]["effects_2x_coefficient"].items():
        assert eff[term] == pytest.approx(value, abs=1e-12)


def test_half_fraction_reports_alias_chains_with_one_estimate():
    """Invented 2^(4-1), D = ABC: A:B is aliased with C:D; one chain, one estimate."""
    rows = []
    for a, b, c in itertools.product([-1, 1], repeat=3):
        d = a * b * c
        rows.append({"A": a, "B": b, "C": c, "D": d,
                     "y": 50 + 4 * a - 3 * b + 2.5 * a * b + 0.1 * c + 0.05 * d})
    df = pd.DataFrame(rows)
    fs = [Factor.continuous(n, -1, 1) for n in "ABCD"]
    res = two_level_effects(df, "y", fs)
    terms = res.summary.term.tolist()
    assert "A:B = C:D" in terms
    assert not any(t == "C:D" for t in terms)
    assert len(terms) == 7  # 8 runs -> 7 estimable contrasts
    chain = res.summary.set_index("term").loc["A:B = C:D"]
    assert chain.effect == pytest.approx(5.0) and chain.n_aliases == 2
    assert res.summary.set_index("term").loc["A = B:C:D", "effect"] == pytest.approx(8.0)


def test_lenth_needs_two_effects_and_nonzero_pse():
    with pytest.raises(AnalysisError, match="at least two"):
        lenth([1.0])
    with pytest.raises(AnalysisError, match="zero"):
        lenth([0.0, 0.0, 0.0, 5.0])


def test_three_level_factor_refused():
    df = pd.DataFrame({"a": ["x", "y", "z", "x"], "b": [-1, 1, -1, 1], "y": [1, 2, 3, 4.0]})
    with pytest.raises(AnalysisError, match="exactly two"):
        two_level_effects(df, "y", [Factor.categorical("a", ["x", "y", "z"]),
                                    Factor.continuous("b", -1, 1)])
