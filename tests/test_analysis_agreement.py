"""Bland–Altman limits and ICC(A,1) against published worked examples
(tests/reference/stats/agreement/, sources in its README), and the pairing of hand and
photo coverages from record-log values."""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from trialkit.analysis.agreement import (
    bland_altman,
    coverage_agreement,
    coverage_pairs,
    icc_a1,
)
from trialkit.exceptions import AnalysisError

REF = json.loads((Path(__file__).parent / "reference/stats/agreement/agreement_examples.json")
                 .read_text())


def test_bland_altman_lancet_1986_pefr():
    # Bland & Altman (1986) Lancet, Table 1 and text: mean difference -2.1, SD 38.8,
    # limits -79.7 to 75.5 with 2 SD (the paper rounds the mean and SD first)
    ex = REF["bland_altman_1986_pefr"]
    r = bland_altman(ex["mini_wright"], ex["wright"])  # other - reference = wright - mini
    pub = ex["published"]
    assert r["n"] == 17
    assert r["bias"] == pytest.approx(pub["mean_difference_wright_minus_mini"], abs=0.05)
    assert r["sd"] == pytest.approx(pub["sd_difference"], abs=0.05)
    lo, hi = pub["limits_2sd"]
    assert round(r["bias"], 1) - 2 * round(r["sd"], 1) == pytest.approx(lo, abs=0.01)
    assert round(r["bias"], 1) + 2 * round(r["sd"], 1) == pytest.approx(hi, abs=0.01)
    # ours use 1.96 SD: narrower than 2 SD by 0.04 SD on each side
    assert r["upper"] - r["lower"] == pytest.approx(2 * 1.959964 * r["sd"], rel=1e-6)


def test_icc_a1_shrout_fleiss_1979():
    # Shrout & Fleiss (1979) Table 2 data; ICC(2,1) = 0.29 in their Table 4 (from memory)
    ex = REF["shrout_fleiss_1979"]
    assert round(icc_a1(ex["ratings"]), 2) == ex["published_from_memory"]["ICC(2,1)"]


def test_icc_penalises_a_constant_offset_and_is_one_for_identical_methods():
    # absolute agreement (McGraw & Wong 1996): an offset lowers ICC(A,1); identical gives 1
    x = np.array([5.0, 20.0, 35.0, 60.0, 80.0])
    assert icc_a1(np.c_[x, x]) == pytest.approx(1.0)
    assert icc_a1(np.c_[x, x + 15.0]) < 0.95
    with pytest.raises(AnalysisError, match="at least two coupons"):
        icc_a1([[1.0, 2.0]])
    with pytest.raises(AnalysisError, match="at least two coupons"):
        bland_altman([1.0], [2.0])


def test_pairs_from_record_log_values():
    current = pd.DataFrame({
        "coupon": ["B01-R1", "B01-R2", "B02-R1"],
        "coverage_before_pct": [80.0, 60.0, np.nan],
        "coverage_before_photo_pct": [76.0, 63.0, 50.0],
        "coverage_after_pct": [5.0, 10.0, 4.0],
        "coverage_after_photo_pct": [6.5, np.nan, 3.0]})
    long = pd.DataFrame({"coupon": ["B01-R1", "B01-R1", "B01-R2"], "inspection": [1, 1, 1],
                         "field": ["coverage_pct", "coverage_photo_pct", "coverage_pct"],
                         "value": [40.0, 44.0, 30.0]})
    pairs = coverage_pairs(current, long)
    # only the coupons and moments read both ways
    assert sorted(zip(pairs.coupon, pairs.inspection, pairs.reading, strict=True)) == [
        ("B01-R1", 0, "coverage_after_pct"), ("B01-R1", 0, "coverage_before_pct"),
        ("B01-R1", 1, "coverage_pct"), ("B01-R2", 0, "coverage_before_pct"),
        ("B02-R1", 0, "coverage_after_pct")]
    agr = coverage_agreement(current, long)
    d = pairs.photo_pct - pairs.hand_pct
    assert agr.n == 5 and agr.bias == pytest.approx(d.mean())
    assert agr.sd == pytest.approx(d.std(ddof=1))
    assert "ICC(A,1)" in agr.icc_form and not math.isnan(agr.icc)
    assert json.loads(json.dumps(agr.to_dict()))["n"] == 5
    assert "Bland–Altman" in agr.sentence()
    assert coverage_agreement(current.iloc[:0]) is None
