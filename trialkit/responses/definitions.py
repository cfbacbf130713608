"""Definitions and per-step helpers of :mod:`trialkit.responses.compute` (kept apart for size).

Each response has a canonical snake_case name (usable as ``[[response]] measure`` in the
trial file), a unit, the coupons it applies to and a method text for the report.
"""

from __future__ import annotations

import math
import re
from collections.abc import Callable
from typing import Any

import numpy as np
import pandas as pd

from trialkit.exceptions import TrialkitError
from trialkit.problems import ProblemReport
from trialkit.records.fields import COUPON_FIELDS, PHOTO_COVERAGE_FIELDS

ENTRY_COLUMNS = frozenset([f.name for f in COUPON_FIELDS]
                          + [f.name for f in PHOTO_COVERAGE_FIELDS.values()])

#: name -> (unit, applies_to, method)
RESPONSES: dict[str, tuple[str, str, str]] = {
    "area_cm2": ("cm2", "all", "recorded exposed area, else total area from the dimensions "
                 "(plate/bar 2(LW+Lt+Wt) less holes plus bores; disc (pi/2)(D²-d²)+pi t(D+d);"
                 " cylinder)"),
    "exposure_h": ("h", "all", "immersion end minus immersion start"),
    "mass_loss_g": ("g", "all", "mass before immersion minus mass after cleaning"),
    "mass_loss_g_per_m2": ("g/m2", "all", "mass loss divided by area"),
    "corrected_mass_loss_g": ("g", "all", "cleaning-corrected mass loss (ASTM G1): line "
                              "through the repeated cleaning cycles after the products are "
                              "gone, extrapolated to zero cycles; else minus a blank's loss; "
                              "else uncorrected"),
    "corrected_mass_loss_g_per_m2": ("g/m2", "all", "corrected mass loss divided by area"),
    "cleaning_correction": ("", "all", "which correction was applied: cycles, blank, none"),
    "base_metal_loss_g_per_m2": ("g/m2", "all", "witness: its corrected loss per area; rusted:"
                                 " the bath's mean witness loss per area and hour times the "
                                 "coupon's immersion time (per area only, if times missing)"),
    "corrosion_rate_mm_per_y": ("mm/y", "witness", "ASTM G1 CR = K W/(A T D), K = 8.76e4 "
                                "(W g, A cm², T h, D g/cm³), on witness coupons"),
    "rust_removed_g_per_m2": ("g/m2", "rusted", "corrected loss per area minus the base-metal "
                              "loss estimated from the witnesses of the same bath"),
    "removal_pct": ("%", "rusted", "100 (coverage before - coverage after) / coverage before"),
    "coverage_after_pct": ("%", "all", "rust coverage after the bath, as recorded"),
    "rust_grade": ("grade", "all", "ASTM D610 (SSPC-VIS 2) grade of the coverage after"),
    "rate_constant_per_h": ("1/h", "bath", "rate constant k of the removal curve fitted to "
                            "the bath's time-course coverage (first-order c0 exp(-kt), or a "
                            "lag-plateau model where its AIC is lower)"),
    "time_to_50_h": ("h", "bath", "time for the fitted curve to fall to half its start; "
                     "missing if not reached within the readings"),
    "time_to_90_h": ("h", "bath", "time for the fitted curve to fall to 10 % of its start; "
                     "missing if not reached within the readings"),
}

#: Physical range of each measure, (low, high), None for no bound on that side: shares of
#: a surface are 0-100 %, rates, masses removed, corrosion rates and times are at least 0
#: (common practice).  A mass loss may come out slightly negative from weighing noise, so
#: the mass-loss measures have no bound.
RANGES: dict[str, tuple[float | None, float | None]] = {
    "area_cm2": (0.0, None),
    "exposure_h": (0.0, None),
    "rust_removed_g_per_m2": (0.0, None),
    "corrosion_rate_mm_per_y": (0.0, None),
    "removal_pct": (0.0, 100.0),
    "coverage_after_pct": (0.0, 100.0),
    "rust_grade": (0.0, 10.0),
    "rate_constant_per_h": (0.0, None),
    "time_to_50_h": (0.0, None),
    "time_to_90_h": (0.0, None),
}


def physical_range(measure: str | None, unit: str | None = None
                   ) -> tuple[float | None, float | None]:
    """The physical range of a measure; a response in ``%`` of no known measure is 0-100.

    >>> physical_range("removal_pct"), physical_range("my_share", "%")
    ((0.0, 100.0), (0.0, 100.0))
    >>> physical_range("cost_per_l")
    (None, None)
    """
    if measure in RANGES:
        return RANGES[measure]
    if unit is not None and unit.strip() == "%":
        return (0.0, 100.0)
    return (None, None)


#: Responses summarised per bath (mean, SD, n) and the coupon kind each is taken from.
BATH_SUMMARY: dict[str, str] = {
    "mass_loss_g_per_m2": "rusted",
    "corrected_mass_loss_g_per_m2": "rusted",
    "rust_removed_g_per_m2": "rusted",
    "removal_pct": "rusted",
    "coverage_after_pct": "rusted",
    "rust_grade": "rusted",
    "base_metal_loss_g_per_m2": "witness",
    "corrosion_rate_mm_per_y": "witness",
}
KINETIC = ("rate_constant_per_h", "time_to_50_h", "time_to_90_h")


def methods(density: float, metal: str) -> dict[str, dict]:
    out = {}
    for name, (unit, applies, text) in RESPONSES.items():
        if name == "corrosion_rate_mm_per_y":
            text = f"{text}; D = {density} g/cm³ ({metal}, ASTM G1 Table X1.1)"
        out[name] = {"unit": unit, "applies_to": applies, "method": text}
    return out


def _num(frame: pd.DataFrame, col: str) -> pd.Series:
    if col not in frame:
        return pd.Series(np.nan, index=frame.index, dtype=float)
    return pd.to_numeric(frame[col], errors="coerce").astype(float)


def _given(value: Any) -> bool:
    return value is not None and not (isinstance(value, float) and math.isnan(value))


def coupon_areas(frame: pd.DataFrame, spec: Any, report: ProblemReport,
                 area_fn: Callable[..., float]) -> pd.Series:
    recorded = _num(frame, "area_cm2")
    dims = {c: _num(frame, c) for c in ("length_mm", "width_mm", "thickness_mm")}
    areas = pd.Series(np.nan, index=frame.index, dtype=float)
    for i in frame.index:
        coupon = frame.at[i, "coupon"]
        if _given(recorded[i]):
            if recorded[i] <= 0:
                report.add(coupon, "area must be positive", value=recorded[i],
                           check="area_not_positive", column="area_cm2",
                           fix="enter the exposed area in cm², or leave it empty")
            else:
                areas[i] = recorded[i]
            continue
        overrides = {k: v[i] for k, v in dims.items() if _given(v[i])}
        if spec is None and not overrides:
            report.add(coupon, "no area: neither area_cm2 nor dimensions nor a [coupons] "
                       "section", check="no_area", column="area_cm2",
                       fix="record the area or add a [coupons] section to the trial file")
            continue
        try:
            if spec is None:
                areas[i] = area_fn(shape="plate", **overrides)
            else:
                areas[i] = area_fn(spec, **overrides)
        except TrialkitError as exc:
            report.add(coupon, str(exc), value=overrides, check="area_not_positive",
                       column="area_cm2", fix="check the dimensions")
    return areas


def exposure_hours(frame: pd.DataFrame, report: ProblemReport) -> pd.Series:
    hours = pd.Series(np.nan, index=frame.index, dtype=float)
    if "immersion_start" not in frame or "immersion_end" not in frame:
        return hours
    times = {}
    for col in ("immersion_start", "immersion_end"):
        raw = frame[col]
        parsed = pd.to_datetime(raw, errors="coerce", format="mixed")
        for i in frame.index[parsed.isna() & raw.notna() & (raw.astype(str).str.strip() != "")]:
            report.add(frame.at[i, "coupon"], "cannot read the date and time",
                       value=raw[i], check="bad_time", column=col,
                       fix="write it like 2026-12-01 09:30")
        times[col] = parsed
    span = (times["immersion_end"] - times["immersion_start"]).dt.total_seconds() / 3600.0
    for i in frame.index[(span <= 0).fillna(False)]:
        report.add(frame.at[i, "coupon"], "immersion end is not after its start",
                   value=f"{frame.at[i, 'immersion_start']} -> {frame.at[i, 'immersion_end']}",
                   check="end_before_start", column="immersion_end",
                   fix="check the dates and times (24-hour clock)")
    hours[:] = np.where(span > 0, span, np.nan)
    return hours


def cycle_columns(frame: pd.DataFrame, cycles: Any, pattern: re.Pattern) -> list[str]:
    found = sorted((int(m.group(1)), c) for c in frame.columns
                   if (m := pattern.match(str(c))))
    if _given(cycles):
        found = [(n, c) for n, c in found if n <= int(cycles)]
    return [c for _, c in found]


def cleaning_corrections(frame, initial, loss, cycles, area, blank_per_m2, extrapolate,
                         report: ProblemReport, notes: list[str]):
    corrected = loss.copy()
    how = pd.Series("none", index=frame.index, dtype=object)
    if cycles is not None:
        for i in frame.index:
            row = cycles.loc[i].to_numpy(dtype=float)
            recorded = row[~np.isnan(row)]
            if recorded.size < 2 or not np.isfinite(initial[i]):
                continue
            if np.isnan(row[: recorded.size]).any():
                notes.append(f"{frame.at[i, 'coupon']}: cleaning cycles not recorded in "
                             "sequence; cycle correction skipped")
                continue
            fit = extrapolate((initial[i] - recorded).tolist())
            if fit.intercept_g > initial[i]:
                report.add(frame.at[i, "coupon"], "corrected mass loss larger than the "
                           "coupon's mass", value=fit.intercept_g,
                           check="mass_loss_exceeds_mass", column="mass_cycle_1_g",
                           fix="check the cycle masses")
                corrected[i] = np.nan
                continue
            corrected[i], how[i] = fit.intercept_g, "cycles"
            if len(fit.cycles_used) < 3:
                notes.append(f"{frame.at[i, 'coupon']}: cleaning line through "
                             f"{len(fit.cycles_used)} cycles only; its start is not confirmed")
    if blank_per_m2 is not None:
        use = (how == "none") & loss.notna()
        corrected[use] = loss[use] - float(blank_per_m2) * area[use] / 1e4
        how[use] = "blank"
    return corrected, how


def witness_estimate(frame, out, witness, rusted, report: ProblemReport) -> pd.Series:
    """Base-metal loss per area each rusted coupon suffered, from its bath's witnesses."""
    est = pd.Series(np.nan, index=frame.index, dtype=float)
    per_m2 = out["corrected_mass_loss_g_per_m2"]
    hours = out["exposure_h"]
    for bath, idx in frame.groupby("bath").groups.items():
        w = [i for i in idx if witness[i] and np.isfinite(per_m2[i])]
        r = [i for i in idx if rusted[i]]
        if not r:
            continue
        if not w:
            report.add(str(bath), "no witness coupon with a mass loss in this bath: rust "
                       "removed cannot be told apart from base metal dissolved",
                       check="witness_missing",
                       fix="record the bath's witness coupon masses (or add one next time)")
            continue
        per_h = [per_m2[i] / hours[i] for i in w if np.isfinite(hours[i])]
        for i in r:
            if per_h and np.isfinite(hours[i]):
                est[i] = float(np.mean(per_h)) * hours[i]
            else:
                est[i] = float(np.mean([per_m2[j] for j in w]))
    return est


def coverage(frame: pd.DataFrame, col: str, report: ProblemReport) -> pd.Series:
    values = _num(frame, col)
    bad = (values < 0) | (values > 100)
    for i in frame.index[bad.fillna(False)]:
        report.add(frame.at[i, "coupon"], "coverage must be between 0 and 100 %",
                   value=values[i], check="coverage_out_of_range", column=col,
                   fix="enter the rusted share of the surface in percent")
    values[bad.fillna(False)] = np.nan
    return values


def bath_table(coupons: pd.DataFrame, plan_cols: list[str]) -> pd.DataFrame:
    keep = [c for c in plan_cols if c not in ("coupon", "coupon_kind")]
    rows = []
    for bath, grp in coupons.groupby("bath", sort=True):
        row: dict[str, Any] = {}
        for c in keep:
            vals = grp[c].dropna().unique()
            row[c] = vals[0] if len(vals) == 1 else (bath if c == "bath" else None)
        row["coupons_rusted"] = int((grp["coupon_kind"] == "rusted").sum())
        row["coupons_witness"] = int((grp["coupon_kind"] == "witness").sum())
        for name, kind in BATH_SUMMARY.items():
            v = pd.to_numeric(grp.loc[grp["coupon_kind"] == kind, name],
                              errors="coerce").astype(float).dropna()
            row[f"{name}_mean"] = float(v.mean()) if len(v) else math.nan
            row[f"{name}_sd"] = float(v.std(ddof=1)) if len(v) > 1 else math.nan
            row[f"{name}_n"] = len(v)
        rows.append(row)
    return pd.DataFrame(rows)


def records(frame: pd.DataFrame) -> list[dict]:
    out = []
    for row in frame.to_dict(orient="records"):
        out.append({str(k): plain(v) for k, v in row.items()})
    return out


def plain(value: Any) -> Any:
    if value is None or value is pd.NA or value is pd.NaT:
        return None
    if isinstance(value, pd.Timestamp):
        return value.isoformat()
    if isinstance(value, np.generic):
        value = value.item()
    if isinstance(value, float) and not math.isfinite(value):
        return None
    return value
