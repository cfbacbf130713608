"""Bath volume for the coupons it holds.

The volume is the coupon area times a solution-volume-to-area ratio, rounded up to a
practical container size.  The default ratio, 0.20 mL per mm² (20 mL/cm²), is the
minimum example ratio of ASTM G31 ("Volume of Test Solution"; value as recorded in the
project's reference notes, marked there as from memory).

Examples
--------
>>> v = bath_volume(60.0)
>>> v.required_l, v.volume_l
(1.2, 2.0)
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from trialkit.exceptions import ChemistryError

#: ASTM G31 minimum example ratio, mL of solution per cm² of specimen area.
ASTM_G31_ML_PER_CM2 = 20.0
#: Container sizes a bath volume is rounded up to, litres.
DEFAULT_CONTAINERS_L = (0.1, 0.25, 0.5, 1.0, 2.0, 3.0, 5.0, 10.0, 20.0, 30.0, 60.0)


@dataclass(frozen=True)
class BathVolume:
    """Volume of one bath.

    Attributes
    ----------
    area_cm2 : float
        Total coupon area in the bath.
    ml_per_cm2 : float
        Ratio used.
    required_l : float
        Area times ratio.
    volume_l : float
        Bath volume: the smallest container size holding ``required_l``.
    """

    area_cm2: float
    ml_per_cm2: float
    required_l: float
    volume_l: float

    def to_dict(self) -> dict:
        return {"area_cm2": self.area_cm2, "ml_per_cm2": self.ml_per_cm2,
                "required_l": self.required_l, "volume_l": self.volume_l}


def bath_volume(area_cm2: float, ml_per_cm2: float = ASTM_G31_ML_PER_CM2,
                containers_l: tuple[float, ...] = DEFAULT_CONTAINERS_L) -> BathVolume:
    """Volume for ``area_cm2`` of coupons at ``ml_per_cm2``, rounded up to a container."""
    if not (area_cm2 > 0 and math.isfinite(area_cm2)):
        raise ChemistryError(f"coupon area must be above 0 cm², got {area_cm2}")
    if not ml_per_cm2 > 0:
        raise ChemistryError(f"volume-to-area ratio must be above 0 mL/cm², got {ml_per_cm2}")
    required = area_cm2 * ml_per_cm2 / 1000.0
    sizes = sorted(float(c) for c in containers_l)
    fits = [c for c in sizes if c >= required - 1e-12]
    if not fits:
        raise ChemistryError(
            f"{required:.3g} L are needed for {area_cm2:.4g} cm² of coupons but the largest "
            f"container is {sizes[-1]:g} L: add a larger container size or split the bath")
    return BathVolume(float(area_cm2), float(ml_per_cm2), round(required, 9), fits[0])
