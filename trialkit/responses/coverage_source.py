"""Which coverage readings the responses use: the hand estimates or the photo measurements.

The record log keeps both side by side (:data:`trialkit.records.fields.
PHOTO_COVERAGE_FIELDS`); the trial file's ``[photos] coverage_from`` names the one the
responses, the analysis and the report use (default ``"hand"``, so a trial without photos
is computed as before).  With ``"photo"`` a coupon without a photo measurement has no
coverage: the two are never mixed within one trial's responses.

Examples
--------
>>> import pandas as pd
>>> wide = pd.DataFrame({"coupon": ["B01-R1"], "coverage_before_pct": [80.0],
...                      "coverage_before_photo_pct": [76.5]})
>>> use_coverage(wide, "photo")["coverage_before_pct"].tolist()
[76.5]
>>> use_coverage(wide, "hand")["coverage_before_pct"].tolist()
[80.0]
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd

from trialkit.exceptions import ResponseError
from trialkit.records.fields import PHOTO_COVERAGE_FIELDS

SOURCES = ("hand", "photo")


def coverage_source(trial: Any) -> str:
    """``"hand"`` or ``"photo"``: the trial's ``[photos] coverage_from`` (default hand)."""
    section = (getattr(trial, "sections", None) or {}).get("photos")
    source = getattr(section, "coverage_from", "hand")
    if source not in SOURCES:
        raise ResponseError(f"coverage_from must be one of {SOURCES}; got {source!r}.")
    return source


def use_coverage(readings: pd.DataFrame, source: str) -> pd.DataFrame:
    """Coupon readings (wide) with the coverage columns taken from ``source``."""
    out = readings.copy()
    if source == "photo":
        for hand, photo in PHOTO_COVERAGE_FIELDS.items():
            if hand == "coverage_pct":
                continue
            out[hand] = (pd.to_numeric(out[photo.name], errors="coerce")
                         if photo.name in out else np.nan)
    return out


def use_coverage_long(long: pd.DataFrame, source: str) -> pd.DataFrame:
    """Inspection readings (long: coupon, inspection, field, value) with ``coverage_pct``
    taken from ``source``; the other source's coverage rows are left out."""
    if long is None or not len(long):
        return long
    photo = PHOTO_COVERAGE_FIELDS["coverage_pct"].name
    if source == "photo":
        out = long[long["field"] != "coverage_pct"].copy()
        out.loc[out["field"] == photo, "field"] = "coverage_pct"
        return out.reset_index(drop=True)
    return long[long["field"] != photo].reset_index(drop=True)
