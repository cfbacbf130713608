"""Tests of the model grammar and model matrices (trialkit.trial.model_grammar)."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from trialkit.exceptions import AnalysisError, ModelSpecError, TrialkitError
from trialkit.trial.factors import Factor
from trialkit.trial.model_grammar import Term, parse_model
from trialkit.trial.model_matrix import coded_frame, model_matrix

FACTORS = (
    Factor.continuous("chelator", 2.0, 10.0, unit="% w/v"),
    Factor.continuous("ph", 5.5, 7.5),
    Factor.continuous("temperature", 20.0, 50.0, unit="degC"),
    Factor.categorical("surfactant", ["none", "added"]),
    Factor.categorical("agitation", ["still", "stirred", "ultrasonic"]),
)


def test_keywords_expand_in_documented_order():
    fs = FACTORS[:2] + FACTORS[3:4]
    assert parse_model("main", fs).term_names == ("chelator", "ph", "surfactant")
    assert parse_model("linear", fs).term_names == ("chelator", "ph", "surfactant")
    assert parse_model("interactions", fs).term_names == (
        "chelator", "ph", "surfactant", "chelator:ph", "chelator:surfactant",
        "ph:surfactant")
    # squares only of continuous factors
    assert parse_model("quadratic", fs).term_names[-2:] == ("chelator^2", "ph^2")
    assert "surfactant^2" not in parse_model("quadratic", fs).term_names


def test_explicit_terms_are_canonical_and_deduplicated():
    m = parse_model("  ph:chelator+chelator + chelator:ph + chelator^2 ", FACTORS)
    assert m.term_names == ("chelator:ph", "chelator", "chelator^2")
    assert m.terms[0] == Term(("chelator", "ph"))
    assert m.terms[2].power == 2
    assert not m.is_hierarchical()  # ph missing for chelator:ph
    assert parse_model("main + chelator:ph", FACTORS[:2]).is_hierarchical()


@settings(max_examples=60, deadline=None)
@given(st.lists(st.sampled_from(["chelator", "ph", "temperature", "surfactant",
                                 "chelator:ph", "ph:surfactant", "chelator^2",
                                 "temperature^2", "chelator:ph:temperature"]),
                min_size=1, max_size=8))
def test_to_text_round_trips(parts):
    m = parse_model(" + ".join(parts), FACTORS)
    again = parse_model(m.to_text(), FACTORS)
    assert again.terms == m.terms
    assert len(m.terms) == len(set(parts))


@pytest.mark.parametrize("spec, fragment", [
    ("chelatr + ph", "did you mean 'chelator'"),
    ("chelator + + ph", "position 12"),
    ("chelator +", "missing after the last '+'"),
    ("surfactant^2", "only continuous factors can be squared"),
    ("chelator:chelator", "appears twice"),
    ("chelator*ph", "unexpected '*ph'"),
    ("chelator ph", "expected '+' between terms, found 'ph'"),
    ("chelator:ph^2", "single factor"),
    ("", "empty"),
    ("chelator:", "':' must be followed"),
    ("np.log(chelator)", "unexpected '(chelator)'"),
])
def test_bad_specs_name_position_and_token(spec, fragment):
    with pytest.raises(ModelSpecError) as err:
        parse_model(spec, FACTORS)
    assert fragment in str(err.value)
    assert isinstance(err.value, TrialkitError)


def test_injected_python_is_refused_without_running(tmp_path, monkeypatch):
    marker = tmp_path / "ran"
    monkeypatch.chdir(tmp_path)
    spec = f"__import__('os').system('touch {marker}')"
    with pytest.raises(ModelSpecError) as err:
        parse_model(spec, FACTORS)
    assert "position 11" in str(err.value)
    assert not marker.exists()


def test_model_matrix_sum_coding_and_interaction_columns():
    data = pd.DataFrame({
        "chelator": [-1.0, 1.0, -1.0, 1.0, 0.0],
        "agitation": ["still", "stirred", "ultrasonic", "still", "stirred"],
    })
    spec = parse_model("chelator + agitation + chelator:agitation", FACTORS)
    mm = model_matrix(spec, data)
    assert mm.columns == ("intercept", "chelator", "agitation = still", "agitation = stirred",
                          "chelator:agitation = still", "chelator:agitation = stirred")
    assert mm.term_columns["agitation"] == slice(2, 4)
    # sum-to-zero (deviation) coding: last level is -1 in every contrast column
    np.testing.assert_array_equal(mm.X[:, 2:4], [[1, 0], [0, 1], [-1, -1], [1, 0], [0, 1]])
    np.testing.assert_array_equal(mm.X[:, 4], mm.X[:, 1] * mm.X[:, 2])
    tr = model_matrix(spec, data, coding="treatment")
    assert tr.columns[2:4] == ("agitation = stirred", "agitation = ultrasonic")
    np.testing.assert_array_equal(tr.X[:, 2:4], [[0, 0], [1, 0], [0, 1], [0, 0], [1, 0]])


def test_model_matrix_square_column_and_errors():
    data = pd.DataFrame({"chelator": [-1.0, 0.5, 1.0], "ph": [0.0, 1.0, -1.0]})
    mm = model_matrix(parse_model("quadratic", FACTORS[:2]), data)
    np.testing.assert_array_equal(mm.X[:, mm.term_columns["chelator^2"]].ravel(),
                                  [1.0, 0.25, 1.0])
    with pytest.raises(AnalysisError, match="no column"):
        model_matrix(parse_model("temperature", FACTORS), data)
    with pytest.raises(AnalysisError, match="holds text"):
        model_matrix(parse_model("chelator", FACTORS), data.assign(chelator=["a", "b", "c"]))
    one = pd.DataFrame({"surfactant": ["none"] * 3})
    with pytest.raises(AnalysisError, match="at least two levels"):
        model_matrix(parse_model("surfactant", [Factor.categorical("surfactant", [])]), one)
    with pytest.raises(ModelSpecError, match="coding"):
        model_matrix(parse_model("chelator", FACTORS), data, coding="helmert")


def test_coded_frame_maps_low_high_to_minus_plus_one():
    df = pd.DataFrame({"chelator": [2.0, 10.0], "ph": [5.5, 7.5], "surfactant": ["none", 1]})
    coded = coded_frame(df, FACTORS)
    assert coded["chelator"].tolist() == [-1.0, 1.0]
    assert coded["ph"].tolist() == [-1.0, 1.0]
    assert coded["surfactant"].tolist() == ["none", "1"]


def test_parents_support_hierarchy():
    assert Term(("a", "b", "c")).parents() == (
        Term(("a",)), Term(("b",)), Term(("c",)), Term(("a", "b")), Term(("a", "c")),
        Term(("b", "c")))
    assert Term(("a",), 2).parents() == (Term(("a",)),)
