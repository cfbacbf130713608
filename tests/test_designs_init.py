"""build_design: every kind gives a consistent Design."""

import json

import numpy as np
import pytest

from trialkit.exceptions import DesignError
from trialkit.planning.designs import POINT_TYPES, build_design
from trialkit.trial.factors import Factor

FS = [Factor.continuous("chelator", 2, 10, unit="% w/v"), Factor.continuous("ph", 5, 8),
      Factor.continuous("temperature", 20, 50, unit="degC"),
      Factor.categorical("stir", ["off", "on"])]

KINDS = [
    ("full-factorial", {}, "factorial", True),
    ("fractional-factorial", {"resolution": 4}, "factorial", True),
    ("plackett-burman", {}, "screening", True),
    ("central-composite", {}, None, True),
    ("box-behnken", {}, "edge", True),
    ("sweep", {"factor": "chelator", "count": 4}, "sweep", False),
    ("latin-hypercube", {"runs": 6}, "space-filling", False),
]


@pytest.mark.parametrize("kind,options,point,center", KINDS, ids=[k[0] for k in KINDS])
def test_every_kind_consistent(kind, options, point, center):
    d = build_design(FS, kind, options, seed=42)
    assert d.kind == kind and list(d.coded.columns) == [f.name for f in FS]
    assert len(d.point) == d.n_points and set(d.point) <= set(POINT_TYPES)
    assert "center" not in d.point
    assert d.has_center is center
    if point:
        assert set(d.point) == {point}
    cont = d.coded[["chelator", "ph", "temperature"]].to_numpy(dtype=float)
    assert not np.any(np.all(cont == 0, axis=1))  # center points are the Plan's
    json.dumps(d.to_dict())  # plain data
    assert set(d.coded["stir"]) <= {"off", "on"}


def test_two_level_designs_carry_alias_table():
    d = build_design(FS, "fractional-factorial", {"resolution": 4}, seed=0)
    assert d.resolution == 4 and d.generators == ("D = ABC",)
    assert d.to_dict()["aliases"][0] == {"effect": "A", "aliases": "+BCD"}


def test_duplicate_factor_names_refused():
    with pytest.raises(DesignError, match="unique"):
        build_design([FS[0], FS[0]], "full-factorial", {}, seed=0)


def test_errors_carry_problem_report():
    with pytest.raises(DesignError) as info:
        build_design(FS, "box-behnken", {"alpha": 1, "runs": 3}, seed=0)
    assert info.value.problems.checks() == ["unknown_design_option"] * 2
