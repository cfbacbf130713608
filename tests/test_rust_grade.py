"""ASTM D610 grade boundaries, read from tests/reference/corrosion/rust_grade_scales.json."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from trialkit.exceptions import ResponseError
from trialkit.responses.rust_grade import d610_grade, d610_grades

REF = json.loads(
    (Path(__file__).parent / "reference/corrosion/rust_grade_scales.json").read_text()
)["ASTM_D610_SSPC_VIS2"]
# ASTM D610-08 (R2012) Table 1 (retrieved): grade g covers (lower, upper]
ROWS = REF["grades"]


@pytest.mark.parametrize("row", ROWS, ids=lambda r: f"grade{r['grade']}")
def test_each_d610_boundary_both_sides(row):
    # ASTM D610 Table 1: the upper boundary belongs to the grade, just above it does not
    upper = row["pct_upper_inclusive"]
    lower = row["pct_lower_exclusive"]
    assert d610_grade(upper) == row["grade"]
    assert d610_grades([upper]).iloc[0] == row["grade"]
    if lower is not None:
        above_lower = np.nextafter(lower, np.inf)
        assert d610_grade(above_lower) == row["grade"]
        assert d610_grade(lower) == row["grade"] + 1  # the boundary itself is the better grade
    if upper < 100:
        just_above = np.nextafter(upper, np.inf)
        assert d610_grade(just_above) == row["grade"] - 1
        assert d610_grades([just_above]).iloc[0] == row["grade"] - 1


def test_zero_rust_is_grade_10():
    assert d610_grade(0.0) == 10  # ASTM D610 Table 1: <= 0.01 % is grade 10


@given(st.floats(0, 100))
def test_scalar_and_vector_agree_and_grade_is_monotone(p):
    g = d610_grade(p)
    assert d610_grades([p]).iloc[0] == g
    assert d610_grade(min(100.0, p * 1.5 + 0.01)) <= g


def test_nan_gives_missing():
    assert d610_grade(float("nan")) is None
    assert d610_grades([float("nan"), 5.0]).isna().tolist() == [True, False]


@pytest.mark.parametrize("bad", [-0.5, 100.5, 250])
def test_outside_0_100_raises(bad):
    with pytest.raises(ResponseError, match="between 0 and 100"):
        d610_grade(bad)
    with pytest.raises(ResponseError, match="between 0 and 100"):
        d610_grades([1.0, bad])
