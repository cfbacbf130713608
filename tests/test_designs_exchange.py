"""Tests of trialkit.planning.designs.exchange: the allowed region and one
coordinate-exchange run."""

import numpy as np
import pytest

from trialkit.exceptions import DesignError
from trialkit.planning import power as pw
from trialkit.planning.designs.constraints import parse_cannot_mix, parse_constraint
from trialkit.planning.designs.exchange import Region, coordinate_exchange
from trialkit.trial.factors import Factor

FS = (Factor.continuous("chelator", 2, 10), Factor.continuous("ph", 5, 8),
      Factor.categorical("surfactant", ["none", "added"]))


def test_candidates_include_the_constraint_boundary():
    # ph >= 5 + 0.25*chelator; at chelator = 10 (coded +1) the boundary is ph 7.5
    region = Region(FS, [parse_constraint("ph >= 5 + 0.25*chelator", FS)], [], grid=5)
    cand = region.candidates(np.array([1.0, 1.0, 0.0]), 1)
    ph = FS[1].to_natural(cand[:, 1])
    assert np.isclose(ph, 7.5).any()
    assert np.all(ph >= 7.5 - 1e-9)              # infeasible grid levels left out


def test_feasible_checks_ranges_constraints_and_disallowed():
    region = Region(FS, [parse_constraint("ph >= 5 + 0.25*chelator", FS)],
                    [parse_cannot_mix({"surfactant": "added", "ph": [7, 8]}, FS)], grid=3)
    U = np.array([[1.0, 1.0, 0], [1.0, 0.0, 0], [0.0, 1.0, 1], [0.0, 0.0, 1],
                  [1.2, 1.0, 0]])
    assert region.feasible(U).tolist() == [True, False, False, True, False]


def test_exchange_never_lowers_the_log_determinant():
    fs = FS[:2]
    dm = pw.DesignModel.from_spec("quadratic", fs)
    region = Region(fs, [], [], grid=5)
    rng = np.random.default_rng(4)
    U = rng.choice(region.values[0], size=(8, 2))
    before = pw.log_det_information(dm.expand(U))
    tables = [dm.factor_columns(j, region.values[j]) for j in range(2)]
    after_U = coordinate_exchange(dm, region, U.copy(), np.ones(8, bool), "D", None, rng,
                                  50, tables)
    assert pw.log_det_information(dm.expand(after_U)) >= before


def test_empty_region_is_reported():
    region = Region(FS, [parse_constraint("ph >= 9", FS)], [], grid=3)
    with pytest.raises(DesignError, match="ph >= 9"):
        region.check_feasible()
