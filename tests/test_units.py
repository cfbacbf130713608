"""Unit checks at the boundaries (trialkit.units): the short cuts that need no pint registry
give what the registry gives."""

from __future__ import annotations

import math

import pytest

from trialkit.units import COMMON_UNITS, UnitError, check_unit, registry, to_unit


# reference: pint (the general-purpose units library behind trialkit.units) must know every
# spelling that check_unit accepts without asking it
@pytest.mark.parametrize("unit", sorted(COMMON_UNITS))
def test_every_common_unit_is_known_to_pint(unit):
    assert check_unit(unit) == unit
    assert registry().Unit(unit) is not None  # raises UndefinedUnitError otherwise


def test_unknown_unit_still_refused_with_the_fix():
    with pytest.raises(UnitError, match="unknown unit 'spoonfuls'.*'g/L'"):
        check_unit("spoonfuls")


@pytest.mark.parametrize(("value", "unit"), [(50, "mm"), (2.5, "cm**2"), (25, "degC"),
                                             (0, "mm"), (-3.25, "g/L")])
def test_bare_number_in_its_own_unit_equals_the_registry_conversion(value, unit):
    # reference: pint's own Quantity(value, unit).to(unit)
    expected = registry().Quantity(float(value), unit).to(unit).magnitude
    got = to_unit(value, unit, default_unit=unit)
    assert isinstance(got, float) and got == expected


def test_bare_number_in_another_unit_is_converted_by_pint():
    # 1 inch = 25.4 mm exactly (NIST SP 811, appendix B.8)
    assert math.isclose(to_unit(2, "mm", default_unit="inch"), 50.8)
    with pytest.raises(UnitError, match="cannot be expressed in 'mm'"):
        to_unit(2, "mm", default_unit="kg")
