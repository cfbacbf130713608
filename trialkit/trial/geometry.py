"""Exposed surface area of test coupons from their shape and dimensions.

Shapes: a rectangular ``"plate"`` (optionally with round through-holes, e.g. a hanging
hole), a ``"disc"`` (optionally with a centre hole), a solid ``"cylinder"`` (rod), a
rectangular ``"bar"`` and a ``"given"`` area.  Dimensions are millimetres unless written
with a unit (``"1 in"``, ``"2.5 cm"``); they are read through :mod:`trialkit.units`.
The result is the *total* area wetted by the bath, all faces and edges, in cm².

Formulas are plain solid geometry (the disc-with-hole form is the one quoted in ASTM G31
for circular specimens):

- plate / bar: ``2(LW + Lt + Wt)``; each hole of diameter d removes ``2·πd²/4`` from the
  faces and adds its bore ``π·d·t``;
- disc: ``(π/2)(D² − d²) + π·D·t + π·d·t``;
- cylinder: ``2·πD²/4 + π·D·L``.

Examples
--------
>>> round(coupon_area_cm2(shape="plate", length_mm=50, width_mm=25, thickness_mm=2), 4)
28.0
>>> round(coupon_area_cm2({"shape": "given", "area_cm2": 12.5}), 4)
12.5
>>> round(coupon_area_cm2(shape="plate", length_mm="2 in", width_mm="1 in",
...                       thickness_mm="0.1 in"), 3)
29.677
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any

from trialkit.exceptions import ResponseError
from trialkit.units import UnitError, to_unit

#: Shapes understood by :func:`coupon_area_cm2`.
SHAPES: tuple[str, ...] = ("plate", "disc", "cylinder", "bar", "given")

#: Dimension keys each shape needs (``holes`` and ``hole_diameter_mm`` are optional).
REQUIRED: dict[str, tuple[str, ...]] = {
    "plate": ("length_mm", "width_mm", "thickness_mm"),
    "bar": ("length_mm", "width_mm", "thickness_mm"),
    "disc": ("diameter_mm", "thickness_mm"),
    "cylinder": ("diameter_mm", "length_mm"),
    "given": ("area_cm2",),
}

_KEYS = ("shape", "length_mm", "width_mm", "thickness_mm", "diameter_mm", "holes",
         "hole_diameter_mm", "area_cm2")


class GeometryError(ResponseError):
    """Coupon dimensions that do not describe a solid with a positive area."""


def _spec_to_dict(spec: Any) -> dict[str, Any]:
    if spec is None:
        return {}
    if isinstance(spec, Mapping):
        return dict(spec)
    return {k: getattr(spec, k) for k in _KEYS if hasattr(spec, k)}


def _missing(value: Any) -> bool:
    if value is None:
        return True
    try:
        return isinstance(value, float) and math.isnan(value)
    except TypeError:  # pragma: no cover
        return False


def _length_mm(name: str, value: Any) -> float:
    try:
        mm = to_unit(value, "mm", default_unit="mm")
    except UnitError as exc:
        raise GeometryError(f"coupon {name}: {exc}") from None
    if not math.isfinite(mm) or mm <= 0:
        raise GeometryError(
            f"coupon {name} must be a positive length; got {value!r}. "
            "Measure the coupon and enter the dimension in mm (e.g. 25)."
        )
    return mm


def _holes(value: Any) -> list[Any]:
    if _missing(value):
        return []
    if isinstance(value, (int, float, str)):
        return [value]
    return list(value)


def coupon_area_cm2(spec_or_kwargs: Any = None, /, **kwargs: Any) -> float:
    """Total exposed area of one coupon in cm².

    Parameters
    ----------
    spec_or_kwargs : mapping or object, optional
        A ``CouponSpec`` of the trial file (attributes ``shape``, ``length_mm``,
        ``width_mm``, ``thickness_mm``, ``diameter_mm``, ``holes``, ``area_cm2``) or a
        dict with the same keys.  Keyword arguments override its entries.
    **kwargs
        The same keys given directly.  Lengths are numbers in mm or text with a unit;
        ``holes`` is a list of hole diameters (plate, bar) and ``hole_diameter_mm`` (or a
        one-element ``holes``) the centre hole of a disc; ``area_cm2`` (number in cm² or
        text with an area unit) is used as is for ``shape="given"``, and for other
        shapes when a dimension they need is missing.

    Returns
    -------
    float
        Area in cm².

    Raises
    ------
    GeometryError
        Unknown shape, missing or non-positive dimension, holes that do not fit.

    Examples
    --------
    >>> round(coupon_area_cm2(shape="disc", diameter_mm=38, thickness_mm=3,
    ...                       hole_diameter_mm=8), 3)
    26.012
    """
    values = _spec_to_dict(spec_or_kwargs)
    values.update(kwargs)
    shape = values.get("shape")
    if _missing(shape):
        shape = "given" if not _missing(values.get("area_cm2")) else None
    if shape not in SHAPES:
        raise GeometryError(
            f"coupon shape {shape!r} is not known; allowed: "
            + ", ".join(repr(s) for s in SHAPES)
            + ". Set shape in the trial's [coupons] section."
        )
    need = [k for k in REQUIRED[shape] if _missing(values.get(k))]
    if need and shape != "given" and not _missing(values.get("area_cm2")):
        shape, need = "given", []  # the trial gave an area instead of the dimensions
    if need:
        raise GeometryError(
            f"a {shape} coupon needs {', '.join(need)}; got "
            + ", ".join(f"{k}={values.get(k)!r}" for k in REQUIRED[shape])
            + ". Add the missing dimension(s)."
        )
    if shape == "given":
        raw = values["area_cm2"]
        try:
            area = to_unit(raw, "cm**2", default_unit="cm**2")
        except UnitError as exc:
            raise GeometryError(f"coupon area_cm2: {exc}") from None
        if not math.isfinite(area) or area <= 0:
            raise GeometryError(
                f"coupon area must be positive; got {raw!r} cm². "
                "Enter the exposed area in cm², or the dimensions instead."
            )
        return float(area)

    holes = [_length_mm("hole diameter", h) for h in _holes(values.get("holes"))]
    if not _missing(values.get("hole_diameter_mm")):
        holes.append(_length_mm("hole_diameter_mm", values["hole_diameter_mm"]))

    if shape in ("plate", "bar"):
        length = _length_mm("length_mm", values["length_mm"])
        width = _length_mm("width_mm", values["width_mm"])
        t = _length_mm("thickness_mm", values["thickness_mm"])
        if sum(holes) >= min(length, width):
            raise GeometryError(
                f"holes of {holes} mm do not fit in a {length} x {width} mm {shape}; "
                "check the hole diameters."
            )
        area = 2.0 * (length * width + length * t + width * t)
        for d in holes:
            area += -2.0 * math.pi * d * d / 4.0 + math.pi * d * t
    elif shape == "disc":
        diameter = _length_mm("diameter_mm", values["diameter_mm"])
        t = _length_mm("thickness_mm", values["thickness_mm"])
        if len(holes) > 1:
            raise GeometryError(
                f"a disc takes one centre hole; got {len(holes)} holes {holes}. "
                "Give a single diameter."
            )
        d = holes[0] if holes else 0.0
        if d >= diameter:
            raise GeometryError(
                f"the centre hole ({d} mm) must be smaller than the disc ({diameter} mm)."
            )
        area = math.pi / 2.0 * (diameter**2 - d**2) + math.pi * diameter * t + math.pi * d * t
    else:  # cylinder
        diameter = _length_mm("diameter_mm", values["diameter_mm"])
        length = _length_mm("length_mm", values["length_mm"])
        if holes:
            raise GeometryError("holes are not supported on a cylinder; use shape='given'.")
        area = 2.0 * math.pi * diameter**2 / 4.0 + math.pi * diameter * length
    return float(area / 100.0)  # mm² -> cm²
