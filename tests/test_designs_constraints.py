"""Tests of trialkit.planning.designs.constraints: the linear-constraint reader (never eval)."""

import numpy as np
import pytest

from trialkit.exceptions import DesignError
from trialkit.planning.designs.constraints import parse_cannot_mix, parse_constraint
from trialkit.trial.factors import Factor

FS = (Factor.continuous("chelator", 2, 10, unit="% w/v"),
      Factor.categorical("surfactant", ["none", "added"]),
      Factor.continuous("ph", 5, 8))


def _natural_ok(c, chelator, ph):
    u = np.array([[FS[0].to_coded(chelator), 0.0, FS[2].to_coded(ph)]])
    return bool(c.satisfied(u)[0])


@pytest.mark.parametrize("text, chelator, ph, ok", [
    ("ph >= 4 + 0.2*chelator", 10, 6.0, True),           # 6 >= 6
    ("ph >= 4 + 0.2*chelator", 10, 5.9, False),
    ("ph > 4 + chelator/5", 10, 5.9, False),              # division by a number
    ("2*chelator - 3.5 * ph <= -10", 4, 5.2, True),       # 8 - 18.2 = -10.2
    ("2*chelator - 3.5 * ph <= -10", 4, 5.0, False),      # 8 - 17.5 = -9.5
    ("-ph <= -6", 2, 6.5, True),
    ("1e1 >= chelator + 0.5*ph", 6, 8, True),             # 10 >= 10
    ("chelator*2 =< 2*ph", 7, 6.9, False),
])
def test_constraint_in_natural_units(text, chelator, ph, ok):
    assert _natural_ok(parse_constraint(text, FS), chelator, ph) is ok


@pytest.mark.parametrize("text, message", [
    ("ph >= chelator*chelator", "not linear"),
    ("ph >= 4 + acid", "not a continuous factor"),
    ("surfactant >= 1", "not a continuous factor"),
    ("ph >= 4 +", "empty"),
    ("ph >= 4 >= chelator", "exactly one"),
    ("ph == 6", "cannot read|exactly one"),
    ("__import__('os') >= 1", "cannot read|not a continuous factor"),
    ("4 >= 2", "names no factor"),
    ("ph >= 6/chelator", "only a number"),
])
def test_bad_constraints_are_refused_with_a_reason(text, message):
    with pytest.raises(DesignError, match=message):
        parse_constraint(text, FS)


def test_disallowed_combination_matches_levels_and_ranges():
    d = parse_cannot_mix({"surfactant": "added", "chelator": [8, 10]}, FS)
    U = np.array([[FS[0].to_coded(9.0), 1, 0.0], [FS[0].to_coded(9.0), 0, 0.0],
                  [FS[0].to_coded(6.0), 1, 0.0]])
    assert d.matches(U, FS).tolist() == [True, False, False]


@pytest.mark.parametrize("spec, message", [
    ({"colour": "red"}, "not a factor"),
    ({"surfactant": "lots"}, "not a level"),
    ({"chelator": "high"}, "number or a"),
    ({}, "must be a table"),
])
def test_bad_disallowed_combinations(spec, message):
    with pytest.raises(DesignError, match=message):
        parse_cannot_mix(spec, FS)
