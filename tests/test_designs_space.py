"""Sweeps and Latin hypercubes."""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from pyDOE3 import lhs

from trialkit.exceptions import DesignError
from trialkit.planning.designs import build_design
from trialkit.trial.factors import Factor

CHEL = Factor.continuous("chelator", 1.0, 16.0, unit="% w/v")


def test_sweep_listed_levels_in_natural_units():
    d = build_design([CHEL], "sweep", {"levels": [1, 2, 4, 8, 16]}, seed=0)
    assert d.natural()["chelator"].tolist() == [1.0, 2.0, 4.0, 8.0, 16.0]
    assert set(d.point) == {"sweep"} and not d.has_center


def test_sweep_linear_count():
    d = build_design([CHEL], "sweep", {"count": 4, "spacing": "linear"}, seed=0)
    assert d.natural()["chelator"].tolist() == pytest.approx([1.0, 6.0, 11.0, 16.0])


@settings(max_examples=50, deadline=None, derandomize=True)
@given(low=st.floats(0.01, 100.0), ratio=st.floats(1.5, 1000.0), count=st.integers(2, 12))
def test_property_geometric_sweep_constant_ratio(low, ratio, count):
    # geometric spacing: successive levels in constant ratio (definition)
    f = Factor.continuous("c", low, low * ratio)
    d = build_design([f], "sweep", {"count": count, "spacing": "geometric"}, seed=0)
    v = d.natural()["c"].to_numpy()
    r = v[1:] / v[:-1]
    assert np.allclose(r, (f.high / f.low) ** (1 / (count - 1)), rtol=1e-9)
    assert v[0] == pytest.approx(f.low, rel=1e-12) and v[-1] == pytest.approx(f.high, rel=1e-12)


def test_sweep_other_factors_held_and_categorical_crossed():
    fs = [CHEL, Factor.continuous("ph", 5, 9), Factor.categorical("stir", ["off", "on"])]
    d = build_design(fs, "sweep", {"factor": "chelator", "count": 3}, seed=0)
    assert d.n_points == 6
    assert (d.natural()["ph"] == 7.0).all()
    assert d.coded["stir"].tolist() == ["off"] * 3 + ["on"] * 3


def test_lhs_seeded_and_reproducible():
    fs = [CHEL, Factor.continuous("ph", 5, 9)]
    a = build_design(fs, "latin-hypercube", {"runs": 8}, seed=7)
    b = build_design(fs, "latin-hypercube", {"runs": 8}, seed=7)
    c = build_design(fs, "latin-hypercube", {"runs": 8}, seed=8)
    assert a.coded.equals(b.coded) and not a.coded.equals(c.coded)
    with pytest.raises(DesignError, match="seed"):
        build_design(fs, "latin-hypercube", {"runs": 8}, seed=None)


@settings(max_examples=40, deadline=None, derandomize=True)
@given(k=st.integers(1, 4), runs=st.integers(2, 30), seed=st.integers(0, 2 ** 31),
       spread=st.sampled_from([None, "cell-centres", "widest-gaps", "centred-gaps",
                               "least-correlated"]))
def test_property_lhs_one_point_per_stratum(k, runs, seed, spread):
    # McKay, Beckman & Conover (1979): each of the runs equal strata of every factor
    # holds exactly one point
    fs = [Factor.continuous(f"x{i}", -3.0, 7.0) for i in range(k)]
    opts = {"runs": runs} | ({"spread": spread} if spread else {})
    d = build_design(fs, "latin-hypercube", opts, seed=seed)
    nat = d.natural().to_numpy()
    assert nat.min() >= -3.0 and nat.max() <= 7.0
    strata = np.floor((nat + 3.0) / 10.0 * runs).astype(int)
    for j in range(k):
        assert sorted(strata[:, j]) == list(range(runs))


def test_pydoe3_lhs_is_on_unit_interval_ours_on_factor_range():
    # pyDOE3 lhs returns [0, 1]; the design maps it to coded -1..+1, then natural units
    u = lhs(1, samples=10, seed=np.random.default_rng(3))
    assert u.min() >= 0.0 and u.max() <= 1.0
    d = build_design([CHEL], "latin-hypercube", {"runs": 10}, seed=3)
    assert np.allclose(d.coded["chelator"].to_numpy(), 2 * u[:, 0] - 1)
    assert np.allclose(d.natural()["chelator"].to_numpy(), 1.0 + 15.0 * u[:, 0])


def test_pydoe3_fault_correlation_criterion_one_factor():
    # pyDOE3 1.6.2 lhs(criterion="correlation") fails with one factor (no correlations)
    with pytest.raises(ValueError):
        lhs(1, samples=3, criterion="correlation", seed=1)
    d = build_design([CHEL], "latin-hypercube", {"runs": 3, "spread": "least-correlated"},
                     seed=1)
    assert d.n_points == 3


def test_least_correlated_spread_lowers_correlation():
    fs = [Factor.continuous(f"x{i}", 0, 1) for i in range(3)]

    def worst(d):
        r = np.corrcoef(d.coded.to_numpy().T)
        return np.max(np.abs(r - np.eye(3)))

    plain = build_design(fs, "latin-hypercube", {"runs": 10}, seed=11)
    best = build_design(fs, "latin-hypercube",
                        {"runs": 10, "spread": "least-correlated", "iterations": 50}, seed=11)
    # the first candidate of the search is the plain design drawn from the same seed
    assert worst(best) <= worst(plain)
