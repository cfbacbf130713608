"""Full factorial, fractional factorial and Plackett–Burman builders."""

import json
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from pyDOE3 import fracfact_by_res

from trialkit.exceptions import DesignError
from trialkit.planning.designs import alias_structure, build_design
from trialkit.planning.designs._common import sign_matrix
from trialkit.planning.designs.generators import FRACTION_TABLE, check_generator_set
from trialkit.planning.designs.twolevel import fraction_matrix
from trialkit.trial.factors import FACTOR_LETTERS, Factor

REF = json.loads((Path(__file__).parent / "reference" / "designs" /
                  "design_properties.json").read_text())
TABLE = REF["fractional_factorial_generators"]["designs"]
ROMAN = {"III": 3, "IV": 4, "V": 5, "VI": 6, "VII": 7}


def cont(k, low=1.0, high=5.0):
    return [Factor.continuous(f"x{i}", low, high) for i in range(k)]


def test_full_factorial_mixed_levels_standard_order():
    fs = [Factor.continuous("ph", 5, 8), Factor.categorical("acid", ["citric", "oxalic", "none"])]
    d = build_design(fs, "full-factorial", {}, seed=0)
    assert d.n_points == 6
    assert d.coded["ph"].tolist() == [-1.0, 1.0] * 3  # first factor fastest
    assert d.coded["acid"].tolist() == ["citric"] * 2 + ["oxalic"] * 2 + ["none"] * 2
    assert d.has_center and d.aliases is None  # a three-level factor: no two-level aliases


def test_full_factorial_levels_option_and_explicit_levels():
    fs = [Factor.continuous("t", 20, 60), Factor.continuous("c", 1, 9, levels=[1, 3, 9])]
    d = build_design(fs, "full-factorial", {"levels": 3}, seed=0)
    assert sorted(set(d.natural()["t"])) == [20.0, 40.0, 60.0]
    assert sorted(set(d.natural()["c"])) == pytest.approx([1.0, 3.0, 9.0])
    assert d.n_points == 9


def test_full_two_level_factorial_has_alias_table_without_aliases():
    d = build_design(cont(3), "full-factorial", {}, seed=0)
    assert d.resolution is None and d.defining_relation == ()
    assert list(d.aliases.columns) == ["effect", "aliases"]
    assert (d.aliases.aliases == "").all() and len(d.aliases) == 3 + 3


def test_ehandbook_2k5m1_e_abcd_is_resolution_v():
    # source: e-Handbook Table 3.17, 2^(5-1) with E = ABCD, resolution V
    d = build_design(cont(5), "fractional-factorial", {"generators": ["E = ABCD"]}, seed=0)
    assert d.resolution == 5 and d.n_points == 16
    assert d.defining_relation == ("I = +ABCDE",)


def test_ehandbook_2k7m4_is_resolution_iii():
    # source: e-Handbook Table 3.17, 2^(7-4) resolution III in 8 runs
    d = build_design(cont(7), "fractional-factorial", {"resolution": 3}, seed=0)
    assert d.n_points == 8 and d.resolution == 3
    assert d.generators == tuple(TABLE["2^(7-4)"]["generators"])


@pytest.mark.parametrize("k", range(3, 11))
@pytest.mark.parametrize("res", range(3, 9))
def test_by_resolution_never_below_and_minimum_tabulated_runs(k, res):
    if res > k:
        with pytest.raises(DesignError, match="reaches"):
            build_design(cont(k), "fractional-factorial", {"resolution": res}, seed=0)
        return
    d = build_design(cont(k), "fractional-factorial", {"resolution": res}, seed=0)
    s = alias_structure(sign_matrix(d))
    assert s.resolution >= res
    # smallest design of the e-Handbook table reaching res, else the half fraction
    runs = [r["runs"] for r in TABLE.values() if r["k"] == k and ROMAN[r["resolution"]] >= res]
    assert d.n_points == (min(runs) if runs else 2 ** (k - 1))


def test_pydoe3_fault_by_resolution_below_v_for_seven_factors():
    # pyDOE3 1.6.2 fracfact_by_res(7, 5) returns a 32-run design of resolution IV;
    # no 32-run 7-factor fraction reaches V (e-Handbook Table 3.17: 2^(7-2) is IV)
    theirs = fracfact_by_res(7, 5)
    assert alias_structure(theirs).resolution < 5
    d = build_design(cont(7), "fractional-factorial", {"resolution": 5}, seed=0)
    assert d.resolution >= 5 and d.n_points == 64


def test_pydoe3_fault_by_resolution_refuses_five_factors_at_v():
    # pyDOE3 1.6.2 raises "design not possible"; 2^(5-1) with E = ABCD (16 runs) is V
    with pytest.raises(ValueError):
        fracfact_by_res(5, 5)
    d = build_design(cont(5), "fractional-factorial", {"resolution": 5}, seed=0)
    assert d.n_points == 16 and d.resolution == 5


def test_given_generators_below_requested_resolution_refused():
    with pytest.raises(DesignError, match="below the resolution"):
        build_design(cont(5), "fractional-factorial",
                     {"generators": ["D = AB", "E = AC"], "resolution": 4}, seed=0)


def test_two_level_categorical_takes_part_as_plus_minus_one():
    fs = cont(3) + [Factor.categorical("stir", ["off", "on"])]
    d = build_design(fs, "fractional-factorial", {"generators": ["D = -ABC"]}, seed=0)
    x = sign_matrix(d)
    on = d.coded["stir"] == "on"
    assert np.array_equal(on.to_numpy(), -np.prod(x[:, :3], axis=1) > 0)
    assert d.defining_relation == ("I = -ABCD",)


def test_plackett_burman_runs_and_point_type():
    d = build_design(cont(11), "plackett-burman", {}, seed=0)
    assert d.n_points == 12 and set(d.point) == {"screening"} and d.has_center
    assert d.resolution == 3


def two_level_cases():
    full = st.integers(2, 6).map(lambda k: (k, "full-factorial", {}))
    frac = st.integers(3, 10).flatmap(lambda k: st.integers(3, min(k, 8)).map(
        lambda r: (k, "fractional-factorial", {"resolution": r})))
    pb = st.integers(2, 23).map(lambda k: (k, "plackett-burman", {}))
    return st.one_of(full, frac, pb)


@settings(max_examples=40, deadline=None, derandomize=True)
@given(two_level_cases())
def test_property_two_level_balanced_and_orthogonal(case):
    # defining property of orthogonal two-level designs (common practice)
    k, kind, opts = case
    d = build_design(cont(k), kind, opts, seed=0)
    x = sign_matrix(d)
    n = len(x)
    assert np.all(x.sum(axis=0) == 0)
    assert np.array_equal(x.T @ x, n * np.eye(k))


def test_listed_levels_of_continuous_factor_noted_in_two_level_design():
    fs = cont(3) + [Factor.continuous("c", 1, 9, levels=[1, 3, 9])]
    d = build_design(fs, "plackett-burman", {}, seed=0)
    assert sorted(set(d.coded["c"])) == [-1.0, 1.0]
    assert any("listed levels of c" in n for n in d.notes)


def _pydoe3_fraction(k, generators):
    """The matrix trialkit built before numpy did: pyDOE3 ``fracfact``, base re-sorted."""
    import string

    from pyDOE3 import fracfact

    parsed = check_generator_set(list(generators), FACTOR_LETTERS[:k])
    base = k - len(parsed)
    terms = list(string.ascii_lowercase[:base])
    for _, sign, mask in sorted(parsed):
        word = "".join(string.ascii_lowercase[i] for i in range(base) if mask >> i & 1)
        terms.append(("-" if sign < 0 else "") + word)
    x = fracfact(" ".join(terms))
    return x[np.lexsort(tuple(x[:, j] for j in range(base)))]


@pytest.mark.parametrize("kp", sorted(FRACTION_TABLE))
def test_fraction_matrix_equals_pydoe3_fracfact_for_every_table_design(kp):
    # reference: pyDOE3 1.6.2 ``fracfact`` on the e-Handbook Table 3.17 generators; the
    # same rows in the same order keep plan fingerprints as they were
    k, _ = kp
    np.testing.assert_array_equal(fraction_matrix(k, FRACTION_TABLE[kp]),
                                  _pydoe3_fraction(k, FRACTION_TABLE[kp]))


@settings(max_examples=60, deadline=None, derandomize=True)
@given(data=st.data())
def test_property_fraction_matrix_equals_pydoe3_with_signed_generators(data):
    # reference: pyDOE3 1.6.2 ``fracfact``, negative generators included
    k = data.draw(st.integers(4, 8))
    # p added factors need p distinct words of two or more base letters
    p = data.draw(st.sampled_from([p for p in range(1, k - 1)
                                   if 2 ** (k - p) - (k - p) - 1 >= p]))
    base = k - p
    letters = FACTOR_LETTERS[:k]
    words = [m for m in range(3, 2 ** base) if m & (m - 1)]  # two letters or more
    masks = data.draw(st.lists(st.sampled_from(words), min_size=p, max_size=p, unique=True))
    gens = []
    for t, mask in zip(range(base, k), masks, strict=True):
        sign = data.draw(st.sampled_from(["", "-"]))
        word = "".join(letters[i] for i in range(base) if mask >> i & 1)
        gens.append(f"{letters[t]} = {sign}{word}")
    np.testing.assert_array_equal(fraction_matrix(k, gens), _pydoe3_fraction(k, gens))
