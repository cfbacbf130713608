"""Rust grade of a surface from the share of its area still rusted (ASTM D610 scale).

ASTM D610 (with SSPC-VIS 2), Table 1 "Scale and description of rust ratings", grades a
surface 10 (best) to 0 by the percent of area rusted.  Grade g covers the interval
(lower, upper]: more than ``lower`` and at most ``upper`` percent.  Boundaries as read
from a retrieved copy of ASTM D610-08 (reapproved 2012), Table 1.

Examples
--------
>>> d610_grade(0.01), d610_grade(0.011), d610_grade(60)
(10, 9, 0)
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd

from trialkit.exceptions import ResponseError

#: (grade, upper boundary in % area rusted, inclusive), best grade first.
#: Source: ASTM D610-08 (R2012) Table 1; grade 0 is "greater than 50 percent".
D610_UPPER_PCT: tuple[tuple[int, float], ...] = (
    (10, 0.01),
    (9, 0.03),
    (8, 0.1),
    (7, 0.3),
    (6, 1.0),
    (5, 3.0),
    (4, 10.0),
    (3, 16.0),
    (2, 33.0),
    (1, 50.0),
    (0, 100.0),
)

SCALE_NAME = "ASTM D610 (SSPC-VIS 2) rust grade"


def d610_grade(pct_area_rusted: float) -> int | None:
    """ASTM D610 grade (10..0) for a percent of area rusted; ``None`` for NaN.

    Raises
    ------
    ResponseError
        The percentage is outside 0–100.
    """
    if pct_area_rusted is None:
        return None
    p = float(pct_area_rusted)
    if math.isnan(p):
        return None
    if not 0.0 <= p <= 100.0:
        raise ResponseError(
            f"percent of area rusted must be between 0 and 100; got {pct_area_rusted}. "
            "Enter coverage as a percentage of the coupon surface."
        )
    for grade, upper in D610_UPPER_PCT:
        if p <= upper:
            return grade
    return 0  # pragma: no cover - p <= 100 always matches


def d610_grades(pct_area_rusted) -> pd.Series:
    """Vectorised :func:`d610_grade`: a nullable integer Series (``<NA>`` where NaN).

    Examples
    --------
    >>> d610_grades([0.5, 12.0, float("nan")]).tolist()
    [6, 3, <NA>]
    """
    values = pd.Series(pct_area_rusted, dtype=float)
    arr = values.to_numpy()
    bad = ~np.isnan(arr) & ((arr < 0) | (arr > 100))
    if bad.any():
        raise ResponseError(
            f"percent of area rusted must be between 0 and 100; got {arr[bad][:3].tolist()}."
            " Enter coverage as a percentage of the coupon surface."
        )
    uppers = np.array([u for _, u in D610_UPPER_PCT])
    grades = np.array([g for g, _ in D610_UPPER_PCT])
    idx = np.searchsorted(uppers, np.nan_to_num(arr), side="left")
    out = pd.Series(grades[np.minimum(idx, len(grades) - 1)], index=values.index,
                    dtype="Int64")
    out[np.isnan(arr)] = pd.NA
    return out
