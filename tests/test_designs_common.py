"""Center points and crossing with categorical factors."""

from collections import Counter

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from trialkit.exceptions import DesignError
from trialkit.planning.designs import build_design, center_points
from trialkit.planning.designs._common import (
    cross,
    full_factorial_index,
    level_combinations,
    two_level_full,
)
from trialkit.trial.factors import Factor

CONT = [Factor.continuous("chelator", 2, 10), Factor.continuous("ph", 5, 8)]


def test_center_points_continuous_at_zero_and_natural_midpoint():
    d = build_design(CONT, "central-composite", {}, seed=0)
    c = center_points(d, 4)
    assert c.shape == (4, 2) and (c.to_numpy() == 0).all()
    assert CONT[0].to_natural(c["chelator"].to_numpy()).tolist() == [6.0] * 4


@settings(max_examples=40, deadline=None, derandomize=True)
@given(n=st.integers(0, 40), a=st.integers(2, 3), b=st.integers(2, 4))
def test_property_center_points_cycle_categorical_levels_evenly(n, a, b):
    fs = CONT[:1] + [Factor.categorical("s", [f"s{i}" for i in range(a)]),
                     Factor.categorical("t", [f"t{i}" for i in range(b)])]
    d = build_design(fs, "full-factorial", {}, seed=0)
    c = center_points(d, n)
    counts = Counter(zip(c["s"], c["t"], strict=True))
    full = [counts.get(combo, 0) for combo in level_combinations(fs[1:])]
    assert sum(full) == n and max(full) - min(full) <= 1


def test_no_center_for_sweep_and_bad_count():
    d = build_design(CONT[:1], "sweep", {"count": 3}, seed=0)
    with pytest.raises(DesignError, match="no center"):
        center_points(d, 2)
    d = build_design(CONT, "central-composite", {}, seed=0)
    with pytest.raises(DesignError, match="whole number"):
        center_points(d, -1)
    with pytest.raises(DesignError, match="whole number"):
        center_points(d, 2.5)


def test_cross_runs_whole_core_at_each_combination():
    cats = [Factor.categorical("stir", ["off", "on"])]
    core = np.array([[-1.0], [1.0], [0.5]])
    frame, points = cross(CONT[:1] + cats, core, ("sweep",) * 3)
    assert frame["chelator"].tolist() == [-1.0, 1.0, 0.5] * 2
    assert frame["stir"].tolist() == ["off"] * 3 + ["on"] * 3
    assert points == ("sweep",) * 6


# reference: pyDOE3 1.6.2 ``fullfact`` (a general-purpose design library), whose standard
# order (first factor fastest) the numpy full factorial must keep, so that plan
# fingerprints made before it was built with numpy do not change.
@settings(max_examples=60, deadline=None, derandomize=True)
@given(levels=st.lists(st.integers(1, 5), min_size=1, max_size=5))
def test_property_full_factorial_index_equals_pydoe3_fullfact(levels):
    from pyDOE3 import fullfact

    ours = full_factorial_index(levels)
    assert ours.dtype.kind == "i"
    np.testing.assert_array_equal(ours, fullfact(levels).astype(int))


def test_two_level_full_equals_pydoe3_ff2n_reordered_and_refuses_no_levels():
    # reference: pyDOE3 1.6.2 ``fullfact([2] * k) * 2 - 1``, the matrix used before
    from pyDOE3 import fullfact

    for k in range(1, 8):
        np.testing.assert_array_equal(two_level_full(k), fullfact([2] * k) * 2.0 - 1.0)
    with pytest.raises(DesignError, match="at least one level"):
        full_factorial_index([2, 0])
