"""Coupon areas: hand-computed solid geometry, the ASTM G31 disc formula, exact inch."""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from trialkit.exceptions import ResponseError
from trialkit.trial.geometry import GeometryError, coupon_area_cm2


def test_plate_hand_computed():
    # Hand computation: 2(50*25 + 50*2 + 25*2) = 2800 mm² = 28.00 cm²
    assert coupon_area_cm2(shape="plate", length_mm=50, width_mm=25, thickness_mm=2) == (
        pytest.approx(28.0, rel=1e-12)
    )


def test_plate_with_hanging_hole_hand_computed():
    # 50 x 25 x 2 mm plate with one 6 mm hole: faces lose 2*pi*3², bore adds pi*6*2
    expected = (2800 - 2 * math.pi * 9 + math.pi * 12) / 100
    got = coupon_area_cm2(shape="plate", length_mm=50, width_mm=25, thickness_mm=2,
                          holes=[6])
    assert got == pytest.approx(expected, rel=1e-12)
    assert got == pytest.approx(27.8115, abs=5e-5)  # hand computation, 4 decimals


def test_disc_with_hole_astm_g31_formula():
    # ASTM G31 7.3.1 (formula from memory; plain geometry): A = pi/2(D²-d²) + t pi D + t pi d
    # for the G31 suggested specimen 38 mm x 3 mm with an 8 mm hole
    d_out, d_in, t = 38.0, 8.0, 3.0
    expected = (math.pi / 2 * (d_out**2 - d_in**2) + t * math.pi * d_out
                + t * math.pi * d_in) / 100
    got = coupon_area_cm2(shape="disc", diameter_mm=38, thickness_mm=3, hole_diameter_mm=8)
    assert got == pytest.approx(expected, rel=1e-12)
    assert got == pytest.approx(26.0124, abs=5e-5)


def test_disc_without_hole_equals_short_cylinder():
    # self-consistency: a disc of thickness t is a cylinder of length t
    disc = coupon_area_cm2(shape="disc", diameter_mm=30, thickness_mm=4)
    rod = coupon_area_cm2(shape="cylinder", diameter_mm=30, length_mm=4)
    assert disc == pytest.approx(rod, rel=1e-12)


def test_cylinder_hand_computed():
    # 10 mm rod, 100 mm long: 2*pi*25 + pi*10*100 = 3298.67 mm²
    assert coupon_area_cm2(shape="cylinder", diameter_mm=10, length_mm=100) == (
        pytest.approx(32.9867, abs=5e-5)
    )


def test_inch_is_exactly_25_4_mm():
    # NIST SP 811: 1 in = 25.4 mm exactly; 1 in² = 6.4516 cm² exactly
    assert coupon_area_cm2(shape="given", area_cm2="1 in**2") == pytest.approx(6.4516,
                                                                               rel=1e-12)
    inch = coupon_area_cm2(shape="bar", length_mm="2 in", width_mm="1 in",
                           thickness_mm="0.1 in")
    mm = coupon_area_cm2(shape="bar", length_mm=50.8, width_mm=25.4, thickness_mm=2.54)
    assert inch == pytest.approx(mm, rel=1e-12)


@dataclass
class _Spec:  # stands in for the trial file's CouponSpec
    shape: str = "plate"
    length_mm: float = 50.0
    width_mm: float = 25.0
    thickness_mm: float = 2.0
    diameter_mm: float | None = None
    holes: list = field(default_factory=list)
    area_cm2: float | None = None


def test_spec_object_and_overrides():
    assert coupon_area_cm2(_Spec()) == pytest.approx(28.0)
    # a measured width overrides the trial default: 2(50*20 + 100 + 40) = 2280 mm²
    assert coupon_area_cm2(_Spec(), width_mm=20) == pytest.approx(22.8)


@settings(max_examples=60, deadline=None)
@given(st.floats(1, 200), st.floats(1, 200), st.floats(0.1, 20), st.floats(0.5, 4))
def test_area_scales_with_square_of_size(length, width, t, s):
    # property: area is homogeneous of degree 2 in the dimensions
    a1 = coupon_area_cm2(shape="plate", length_mm=length, width_mm=width, thickness_mm=t)
    a2 = coupon_area_cm2(shape="plate", length_mm=s * length, width_mm=s * width,
                         thickness_mm=s * t)
    assert a2 == pytest.approx(s * s * a1, rel=1e-9)


@pytest.mark.parametrize(
    "kwargs, words",
    [
        ({"shape": "plate", "length_mm": -5, "width_mm": 25, "thickness_mm": 2},
         "positive length"),
        ({"shape": "plate", "length_mm": 0, "width_mm": 25, "thickness_mm": 2},
         "positive length"),
        ({"shape": "given", "area_cm2": 0}, "must be positive"),
        ({"shape": "given", "area_cm2": -3.0}, "must be positive"),
        ({"shape": "disc", "diameter_mm": 20, "thickness_mm": 2, "hole_diameter_mm": 25},
         "smaller than the disc"),
        ({"shape": "plate", "length_mm": 50, "width_mm": 25}, "needs thickness_mm"),
        ({"shape": "triangle", "length_mm": 5}, "not known"),
        ({"shape": "plate", "length_mm": "5 kg", "width_mm": 25, "thickness_mm": 2},
         "cannot be expressed"),
    ],
)
def test_bad_dimensions_raise_clear_error(kwargs, words):
    with pytest.raises(GeometryError, match=words) as info:
        coupon_area_cm2(**kwargs)
    assert isinstance(info.value, ResponseError)


def test_area_stands_in_for_missing_dimensions():
    # the trial file allows "a plate coupon needs length (or give area)"
    assert coupon_area_cm2(shape="plate", area_cm2=30.0) == pytest.approx(30.0)
    # complete dimensions win over a spec area: 2(50*25 + 50*2 + 25*2) mm² = 28 cm²
    assert coupon_area_cm2(shape="plate", length_mm=50, width_mm=25, thickness_mm=2,
                           area_cm2=30.0) == pytest.approx(28.0)
