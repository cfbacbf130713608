"""Checks of the trial file's ``[coupons]`` section (used by :mod:`trialkit.trial.file`).

Every dimension must be a positive length within :data:`~trialkit.trial.limits.COUPON_MM`,
a given area within :data:`~trialkit.trial.limits.COUPON_AREA_CM2`, the holes must fit the
coupon (its area is computed once here, as the sheets and responses will), and the metal
is named in plain text.  Nothing raises; every fault is a problem.

Examples
--------
>>> from trialkit.problems import ProblemReport
>>> p = ProblemReport("trial.toml")
>>> spec = check_coupons({"length": 1e18, "width": 25, "thickness": 2}, p)
>>> p.checks()
['out_of_range']
"""

from __future__ import annotations

from typing import Any

from trialkit.problems import ProblemReport, did_you_mean
from trialkit.trial import limits
from trialkit.trial.geometry import GeometryError, coupon_area_cm2
from trialkit.trial.limits import short, text
from trialkit.trial.section_checks import unknown_keys, whole_number
from trialkit.trial.spec import CouponSpec
from trialkit.units import UnitError, to_unit

COUPON_KEYS = ("shape", "length", "width", "thickness", "diameter", "holes", "area", "metal",
               "cleaning_cycles", "description")
COUPON_SHAPES = ("plate", "disc", "cylinder", "bar", "given")


def _length_mm(value: Any, where: str, p: ProblemReport) -> float | None:
    if isinstance(value, bool) or not isinstance(value, (int, float, str)):
        p.add(where, "a length must be a number (mm) or text with a unit", value=short(value),
              check="bad_length", fix='write a length such as 50 (mm) or "2 in"')
        return None
    try:
        mm = to_unit(value, "mm", default_unit="mm")
    except UnitError as exc:
        p.add(where, str(exc), value=short(value), check="bad_length",
              fix='write a length such as 50 (mm) or "2 in"')
        return None
    if mm <= 0:
        p.add(where, "lengths must be positive", value=value, check="not_positive",
              fix="give the dimension in mm, above zero")
        return None
    low, high = limits.COUPON_MM
    if not low <= mm <= high:
        p.add(where, f"a coupon dimension must lie between {low:g} and {high:g} mm",
              value=f"{mm:g} mm", check="out_of_range",
              fix="check the number and its unit (lengths are in mm unless written)")
        return None
    return mm


def check_coupons(table: Any, p: ProblemReport) -> CouponSpec | None:
    if not isinstance(table, dict):
        p.add("coupons", "[coupons] must be a table", check="not_table")
        return None
    unknown_keys(table, COUPON_KEYS, "coupons", p)
    shape = table.get("shape", "plate")
    if not isinstance(shape, str) or shape not in COUPON_SHAPES:
        p.add("coupons.shape", f"unknown coupon shape {short(shape)!r}", value=short(shape),
              check="bad_shape", fix=did_you_mean(short(shape), list(COUPON_SHAPES)))
        return None
    n_before = len(p)
    dims = {k: _length_mm(table[k], f"coupons.{k}", p)
            for k in ("length", "width", "thickness", "diameter") if k in table}
    holes_raw = table.get("holes", [])
    if not isinstance(holes_raw, list):
        p.add("coupons.holes", "holes must be a list of hole diameters", value=short(holes_raw),
              check="bad_length", fix="write e.g. holes = [4]")
        holes_raw = []
    holes = tuple(h for h in (_length_mm(h, "coupons.holes", p) for h in holes_raw)
                  if h is not None)
    area = None
    if "area" in table:
        area = _area_cm2(table["area"], p)
    needed = {"plate": ("length", "width", "thickness"), "bar": ("length", "width", "thickness"),
              "disc": ("diameter", "thickness"), "cylinder": ("diameter", "length"),
              "given": ()}[shape]
    if shape == "given" and area is None and "area" not in table:
        p.add("coupons.area", 'shape = "given" needs area', check="missing_key",
              fix='add area = "30 cm**2"')
    for key in needed:
        if key not in table and area is None and "area" not in table:
            p.add(f"coupons.{key}", f"a {shape} coupon needs {key} (or give area)",
                  check="missing_key", fix=f"add {key} = <mm>")
    cycles = whole_number(table, "cleaning_cycles", "coupons", p, 0, 0,
                          limits.MAX_CLEANING_CYCLES)
    metal = text(table, "metal", "coupons", p, "carbon steel")
    if not metal.strip() or len(metal) > 80:
        p.add("coupons.metal", "name the metal in a few words (up to 80 characters)",
              value=short(metal), check="bad_metal", fix='write e.g. metal = "carbon steel"')
        metal = "carbon steel"
    spec = CouponSpec(shape=shape, length_mm=dims.get("length"), width_mm=dims.get("width"),
                      thickness_mm=dims.get("thickness"), diameter_mm=dims.get("diameter"),
                      holes=holes, area_cm2=area, metal=metal, cleaning_cycles=cycles,
                      description=text(table, "description", "coupons", p))
    if area is None and len(p) == n_before and all(k in table for k in needed):
        _check_computed_area(spec, p)
    return spec


def _area_cm2(value: Any, p: ProblemReport) -> float | None:
    if isinstance(value, bool) or not isinstance(value, (int, float, str)):
        p.add("coupons.area", "area must be a number (cm²) or text with a unit",
              value=short(value), check="bad_area", fix='write e.g. area = 30 or "30 cm**2"')
        return None
    try:
        area = to_unit(value, "cm**2", default_unit="cm**2")
    except UnitError as exc:
        p.add("coupons.area", str(exc), value=short(value), check="bad_area",
              fix='write an area such as 30 (cm²) or "0.003 m**2"')
        return None
    low, high = limits.COUPON_AREA_CM2
    if not low <= area <= high:
        p.add("coupons.area", f"a coupon area must lie between {low:g} and {high:g} cm²",
              value=f"{area:g} cm²", check="out_of_range",
              fix="check the number and its unit (areas are in cm² unless written)")
        return None
    return area


def _check_computed_area(spec: CouponSpec, p: ProblemReport) -> None:
    """The area the sheets will compute from these dimensions: holes must fit."""
    try:
        coupon_area_cm2(shape=spec.shape, length_mm=spec.length_mm, width_mm=spec.width_mm,
                        thickness_mm=spec.thickness_mm, diameter_mm=spec.diameter_mm,
                        holes=list(spec.holes))
    except GeometryError as exc:
        p.add("coupons.holes", str(exc), value=list(spec.holes), check="holes_do_not_fit",
              fix="check the hole diameters against the coupon's size")
