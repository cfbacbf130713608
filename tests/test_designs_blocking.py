"""Blocking two-level designs by confounding interactions."""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from trialkit.exceptions import DesignError
from trialkit.planning.designs import build_design, two_level_block_columns
from trialkit.planning.designs._common import sign_matrix
from trialkit.trial.factors import FACTOR_LETTERS, Factor


def full(k):
    fs = [Factor.continuous(f"x{i}", 0.0, 1.0) for i in range(k)]
    return build_design(fs, "full-factorial", {}, seed=0)


@pytest.mark.parametrize("k", [3, 4, 5, 6])
def test_two_blocks_confound_highest_order_interaction(k):
    # Box, Hunter & Hunter (2005) ch. 5: a 2^k in two blocks confounds ABC...K
    labels, confounded = two_level_block_columns(full(k), 2)
    assert confounded == [FACTOR_LETTERS[:k]]
    x = sign_matrix(full(k))
    word = np.prod(x, axis=1)
    assert np.array_equal(labels, np.where(word == word[0], 1, 2))


@pytest.mark.parametrize("k,blocks,lowest,n_lowest", [
    # Montgomery, Design and Analysis of Experiments, table of suggested blocking
    # arrangements for 2^k designs (from memory): lowest order confounded
    (4, 4, 2, 1),   # e.g. ABD, ACD, BC
    (5, 4, 3, 2),   # e.g. ABC, CDE, ABDE
    (5, 8, 2, 2),   # e.g. ABE, BCE, CDE, AC, ABCD, BD, ADE
    (6, 8, 3, 4),   # e.g. ABEF, ABCD, ACE, BCF, BDE, CDEF, ADF
])
def test_blocking_arrangement_lowest_order(k, blocks, lowest, n_lowest):
    labels, confounded = two_level_block_columns(full(k), blocks)
    lengths = sorted(len(w) for w in confounded)
    assert len(confounded) == blocks - 1
    assert lengths[0] == lowest and lengths.count(lowest) == n_lowest
    assert np.bincount(labels)[1:].tolist() == [2 ** k // blocks] * blocks


def test_fraction_in_two_blocks_and_main_effect_refusal():
    d = build_design([Factor.continuous(f"x{i}", 0, 1) for i in range(5)],
                     "fractional-factorial", {"resolution": 5}, seed=0)
    labels, confounded = two_level_block_columns(d, 2)
    assert len(confounded) == 1 and len(confounded[0]) == 2  # 2fi = 3fi class is best
    d3 = build_design([Factor.continuous(f"x{i}", 0, 1) for i in range(3)],
                      "fractional-factorial", {"resolution": 3}, seed=0)
    with pytest.raises(DesignError, match="main effect"):
        two_level_block_columns(d3, 2)


@pytest.mark.parametrize("design,blocks,fragment", [
    (lambda: full(3), 3, "power of two"),
    (lambda: full(2), 4, "fewer than 2"),
    (lambda: full(3), 0, "whole number"),
    (lambda: build_design([Factor.continuous(f"x{i}", 0, 1) for i in range(11)],
                          "plackett-burman", {}, seed=0), 2, "not a regular"),
    (lambda: build_design([Factor.continuous(f"x{i}", 0, 1) for i in range(2)],
                          "central-composite", {}, seed=0), 2, "two levels"),
])
def test_blocking_errors(design, blocks, fragment):
    with pytest.raises(DesignError, match=fragment):
        two_level_block_columns(design(), blocks)


def test_one_block_is_trivial():
    labels, confounded = two_level_block_columns(full(3), 1)
    assert labels.tolist() == [1] * 8 and confounded == []


@settings(max_examples=30, deadline=None, derandomize=True)
@given(km=st.integers(3, 7).flatmap(lambda k: st.tuples(st.just(k), st.integers(1, min(3, k - 1)))))
def test_property_blocks_balanced_and_main_effects_clear(km):
    # confounding a non-main-effect word leaves every main effect balanced in each block
    # (definition of confounding with blocks; common practice)
    k, m = km
    d = full(k)
    labels, confounded = two_level_block_columns(d, 2 ** m)
    x = sign_matrix(d)
    for b in range(1, 2 ** m + 1):
        rows = x[labels == b]
        assert len(rows) == 2 ** (k - m)
        assert np.all(rows.sum(axis=0) == 0)
        for w in confounded:
            col = np.prod(rows[:, [FACTOR_LETTERS.index(c) for c in w]], axis=1)
            assert len(set(col)) == 1
