"""Judge every cell of a raw sheet against the plan and the entry fields.

All problems are collected (never raised) so that a user fixes everything in one pass.
Check codes (the ``check`` column of the problem table):

``wrong_plan``, ``unknown_layout``, ``duplicate_column``, ``unknown_column``,
``missing_column``, ``heading_mismatch``, ``unit_mismatch``, ``missing_coupon``,
``unknown_coupon``, ``duplicate_coupon``, ``plan_column_edited``, ``wrong_type``,
``out_of_range``, ``coverage_out_of_range``, ``unknown_choice``, ``unexpected_value``,
``missing_required``, ``end_before_start``, ``mass_gain``.
"""

from __future__ import annotations

import math
import re
from typing import Any

import numpy as np
import pandas as pd

from trialkit.problems import ProblemReport, did_you_mean
from trialkit.records.config import SheetConfig
from trialkit.records.sheets.cells import (
    entry_column,
    number_column,
    parse_datetime,
    parse_number,
    shown_text,
)
from trialkit.records.sheets.layout import (
    COUPON_LAYOUT,
    Column,
    SheetLayout,
    cell_text,
    coupon_layout,
    inspection_layout,
    plan_rows,
    split_heading,
)
from trialkit.records.sheets.readers import RawTable

_MASS_LATER = ("mass_final_g",)

#: One accepted reading: (coupon, inspection number or 0, field, value).
Reading = tuple[str, int, str, Any]


def _text(v: Any, raw: RawTable) -> str:
    return shown_text(v, raw.from_csv)


def _parse_number(v: Any, raw: RawTable) -> float:
    return parse_number(v, raw.decimal_comma)


def _layout_for(raw: RawTable, plan: Any, config: SheetConfig,
                problems: ProblemReport) -> SheetLayout | None:
    fp = raw.meta.get("fingerprint", "")
    if fp != str(plan.fingerprint):
        problems.add(raw.tab, f"this sheet belongs to another plan (fingerprint {fp or 'none'}, "
                     f"title {raw.meta.get('title', '')!r}); the trial's plan has fingerprint "
                     f"{plan.fingerprint}", value=fp, check="wrong_plan",
                     fix="read it into the trial it was exported from, or export a fresh "
                         "sheet from this trial and copy the readings over")
        return None
    if raw.layout == COUPON_LAYOUT:
        return coupon_layout(plan, config)
    if not config.has_timecourse:
        problems.add(raw.tab, "this trial plans no inspections, but the sheet is an "
                     "inspection sheet", value=raw.layout, check="unknown_layout",
                     fix="add inspections_h to [sheet] in the trial file, or use the "
                         "coupon sheet")
        return None
    return inspection_layout(plan, config)


def _columns(raw: RawTable, layout: SheetLayout,
             problems: ProblemReport) -> dict[str, int]:
    known = {c.name: c for c in layout.columns}
    index: dict[str, int] = {}
    width = max([len(raw.names), len(raw.headings), *(len(v) for _, v in raw.rows)], default=0)
    for j in range(width):
        name = raw.names[j] if j < len(raw.names) else ""
        heading = raw.headings[j] if j < len(raw.headings) else ""
        if not name:
            if heading.strip() or any(j < len(v) and v[j] not in (None, "")
                                      for _, v in raw.rows):
                problems.add(raw.tab, "a column with no machine name in the row below the "
                             "headings", column=heading or f"#{j + 1}", value=heading,
                             check="unknown_column",
                             fix="delete the column, or give it back its machine name")
            continue
        if name not in known:
            problems.add(raw.tab, f"unknown column {name!r}", column=name, value=name,
                         check="unknown_column",
                         fix=did_you_mean(name, list(known)) + " Or delete the column.")
            continue
        if name in index:
            problems.add(raw.tab, f"column {name!r} appears twice", column=name, value=name,
                         check="duplicate_column", fix="keep one of the two columns")
            continue
        index[name] = j
        want_words, want_unit = split_heading(known[name].heading)
        got_words, got_unit = split_heading(heading)
        if got_words != want_words:
            problems.add(raw.tab, f"the heading above {name!r} should be "
                         f"{known[name].heading!r}", column=name, value=heading,
                         check="heading_mismatch",
                         fix="columns were moved without their machine names, or a heading "
                             "was retyped: put headings and machine names back together")
        elif got_unit != want_unit and not _same_unit(heading, known[name].heading):
            problems.add(raw.tab, f"the heading of {name!r} gives the unit {got_unit!r}; "
                         f"this column is in {want_unit!r}", column=name, value=heading,
                         check="unit_mismatch",
                         fix=f"write the values in {want_unit} and restore the heading "
                             f"{known[name].heading!r}")
    for c in layout.plan_columns:
        if c.name not in index:
            problems.add(raw.tab, f"plan column {c.name!r} is missing", column=c.name,
                         check="missing_column", fix="export a fresh sheet; keep plan columns")
    return index


def _unit_of(heading: str) -> str | None:
    m = re.search(r"\(([^()]*)\)\s*$", heading)
    if not m:
        return None
    text = m.group(1).strip()
    for a, b in (("²", "^2"), ("³", "^3"), ("°C", "degC"), ("°F", "degF")):
        text = text.replace(a, b)
    return text


def _same_unit(got_heading: str, want_heading: str) -> bool:
    """True when two headings name the same unit in different spellings (pint decides)."""
    from trialkit.units import registry

    got, want = _unit_of(got_heading), _unit_of(want_heading)
    if not got or not want:
        return False
    try:
        ureg = registry()
        return ureg.Unit(got) == ureg.Unit(want)
    except Exception:  # pint raises several types for unknown units
        return False


def _same_plan_value(got: Any, want: Any, col: Column, raw: RawTable) -> bool:
    want_text = cell_text(want)
    if col.kind in ("number", "integer") and want_text != "":
        try:
            return math.isclose(_parse_number(got, raw), float(want), rel_tol=1e-9,
                                abs_tol=1e-12)
        except (TypeError, ValueError):
            return False
    return _text(got, raw).strip() == want_text.strip()


def _entry_value(v: Any, col: Column, raw: RawTable, row: int,
                 problems: ProblemReport) -> Any:
    f = col.field
    if v is None or (isinstance(v, str) and not v.strip()):
        return None
    shown = _text(v, raw)
    if f.kind == "number":
        try:
            x = _parse_number(v, raw)
        except (TypeError, ValueError):
            hint = " with a decimal point" if "," in shown else ""
            problems.add(raw.tab, f"not a number: {f.heading}", row=row, column=f.name,
                         value=shown, check="wrong_type",
                         fix=f"write a plain number{hint} in {f.unit}; the unit is in the "
                             "heading")
            return None
        if f.unit == "%" and not 0.0 <= x <= 100.0:
            problems.add(raw.tab, "a coverage must lie between 0 and 100 %", row=row,
                         column=f.name, value=shown, check="coverage_out_of_range",
                         fix="write the share of the area as a percentage, 0 to 100")
            return None
        if (f.minimum is not None and x < f.minimum) or (f.maximum is not None
                                                           and x > f.maximum):
            problems.add(raw.tab, f"outside the allowed range {f.minimum:g} to {f.maximum:g} "
                         f"{f.unit}", row=row, column=f.name, value=shown,
                         check="out_of_range",
                         fix="check the reading and its unit; ranges are set in [sheet.ranges]")
            return None
        return x
    if f.kind == "datetime":
        try:
            return parse_datetime(v)
        except (TypeError, ValueError):
            problems.add(raw.tab, f"not a date and time: {f.heading}", row=row, column=f.name,
                         value=shown, check="wrong_type",
                         fix="write e.g. 2026-12-01 09:30 (year-month-day hour:minute)")
            return None
    if f.kind == "choice":
        lowered = {c.lower(): c for c in f.choices}
        hit = lowered.get(shown.strip().lower())
        if hit is None:
            problems.add(raw.tab, f"not one of the choices of {f.name!r}", row=row,
                         column=f.name, value=shown, check="unknown_choice",
                         fix=did_you_mean(shown.strip(), f.choices))
        return hit
    return shown


def validate_table(raw: RawTable, plan: Any, config: SheetConfig, problems: ProblemReport,
                   *, allow_mass_gain: bool = False) -> list[Reading]:
    """Check every cell of ``raw``; return the readings (empty when nothing is usable)."""
    layout = _layout_for(raw, plan, config, problems)
    if layout is None:
        return []
    index = _columns(raw, layout, problems)
    if "coupon" not in index:
        return []
    expected = {tuple(cell_text(r[k]) for k in layout.keys): r
                for r in plan_rows(plan, layout, config).to_dict("records")}
    plan_coupons = {k[0] for k in expected}
    coupons = sorted(plan_coupons)
    seen: dict[tuple, int] = {}
    readings: list[Reading] = []
    width_known = set(index.values())
    settled = _settled_rows(raw, layout, index, expected, getattr(plan.trial, "coupons", None),
                            config, allow_mass_gain)
    for (row, values), done in zip(raw.rows, settled, strict=True):
        if done is not None and done[0] not in seen:
            seen[done[0]] = row
            readings += done[1]
            continue
        cells = {name: (values[j] if j < len(values) else None) for name, j in index.items()}
        for j, v in enumerate(values):
            if j not in width_known and v not in (None, "") and j >= len(raw.names):
                problems.add(raw.tab, "a value outside the sheet's columns", row=row,
                             column=f"#{j + 1}", value=_text(v, raw), check="unexpected_value",
                             fix="move it into a column of the sheet or delete it")
        key = tuple(_text(cells.get(k), raw).strip() for k in layout.keys)
        coupon = key[0]
        entries = {c.name: _entry_value(cells.get(c.name), c, raw, row, problems)
                   for c in layout.entry_columns if c.name in index}
        if not coupon:
            problems.add(raw.tab, "a row with readings but no coupon id", row=row,
                         column="coupon", check="missing_coupon",
                         fix="write the coupon id back (export a fresh sheet if unsure)")
            continue
        if coupon not in plan_coupons:
            problems.add(raw.tab, f"coupon {coupon!r} is not in the plan", row=row,
                         column="coupon", value=coupon, check="unknown_coupon",
                         fix=did_you_mean(coupon, coupons))
            continue
        if key not in expected:
            problems.add(raw.tab, f"row key {key} is not in the plan", row=row,
                         column=layout.keys[-1], value=key[-1], check="unknown_coupon",
                         fix="do not change the inspection numbers")
            continue
        if key in seen:
            problems.add(raw.tab, f"coupon {coupon!r} appears again (first in row "
                         f"{seen[key]})", row=row, column="coupon", value=coupon,
                         check="duplicate_coupon",
                         fix="keep one row per coupon; merge the readings into it")
            continue
        seen[key] = row
        for c in layout.plan_columns:
            if c.name in index and c.name not in layout.keys:
                got, want = cells.get(c.name), expected[key][c.name]
                if not _same_plan_value(got, want, c, raw):
                    problems.add(raw.tab, f"plan column {c.name!r} was changed: the plan says "
                                 f"{cell_text(want)!r}", row=row, column=c.name,
                                 value=_text(got, raw), check="plan_column_edited",
                                 fix="put the plan's value back; plan columns cannot be "
                                     "edited on a sheet (change the trial file instead)")
        _row_checks(raw, row, entries, config, layout, problems, allow_mass_gain)
        _area_check(raw, row, entries, getattr(plan.trial, "coupons", None), problems)
        inspection = int(key[1]) if len(key) > 1 else 0
        readings += [(coupon, inspection, name, v) for name, v in entries.items()
                     if v is not None]
    return readings


def _settled_rows(raw: RawTable, layout: SheetLayout, index: dict[str, int],
                  expected: dict[tuple, dict], spec: Any, config: SheetConfig,
                  allow_mass_gain: bool) -> list[tuple[tuple, list[Reading]] | None]:
    """Per data row, its key and readings when no check can find fault with it, else None.

    The cells are read a column at a time (:func:`cells.entry_column`; plan numbers
    compared in one step); the row checks run on a scratch report.  A row that any
    check might refuse, or that is not plain enough to be settled here, is None and goes
    through the one-row checks of :func:`validate_table`, which word the problems.
    """
    rows = raw.rows
    n, n_names = len(rows), len(raw.names)
    columns = {name: [v[j] if j < len(v) else None for _, v in rows]
               for name, j in index.items()}
    keys = [tuple(shown_text(columns[k][i] if k in columns else None, raw.from_csv).strip()
                  for k in layout.keys) for i in range(n)]
    ok = np.array([bool(key[0]) and key in expected and (len(values) <= n_names or not any(
        x not in (None, "") for x in values[n_names:])) for key, (_, values) in zip(
        keys, rows, strict=True)], dtype=bool)
    entries: dict[str, list[Any]] = {}
    for c in layout.entry_columns:
        if c.name in index:
            entries[c.name], flagged = entry_column(columns[c.name], c.field,
                                                    from_csv=raw.from_csv,
                                                    decimal_comma=raw.decimal_comma)
            ok &= ~flagged
    for c in layout.plan_columns:
        if c.name in index and c.name not in layout.keys:
            ok &= _plan_column_kept(columns[c.name], [
                expected[k][c.name] if good else None for k, good in zip(keys, ok.tolist(),
                                                                        strict=True)],
                c, raw)
    out: list[tuple[tuple, list[Reading]] | None] = [None] * n
    scratch = ProblemReport("")
    for i in np.flatnonzero(ok).tolist():
        row, key = rows[i][0], keys[i]
        values = {name: column[i] for name, column in entries.items()}
        _row_checks(raw, row, values, config, layout, scratch, allow_mass_gain)
        _area_check(raw, row, values, spec, scratch)
        if scratch:
            scratch = ProblemReport("")
            continue
        inspection = int(key[1]) if len(key) > 1 else 0
        out[i] = (key, [(key[0], inspection, name, v) for name, v in values.items()
                        if v is not None])
    return out


def _plan_column_kept(got: list[Any], want: list[Any], col: Column,
                      raw: RawTable) -> np.ndarray:
    """Per row, True where the plan column still holds the plan's value.

    The same rule as :func:`_same_plan_value`, numbers compared in one numpy step.
    """
    want_text = [cell_text(w) for w in want]
    kept = np.zeros(len(got), dtype=bool)
    numeric = [i for i, t in enumerate(want_text) if t != ""
               and col.kind in ("number", "integer")]
    if numeric:
        x, empty, flagged = number_column([got[i] for i in numeric], raw.decimal_comma)
        w = np.array([float(want[i]) for i in numeric])
        with np.errstate(invalid="ignore"):
            close = np.abs(x - w) <= np.maximum(1e-9 * np.maximum(np.abs(x), np.abs(w)),
                                                1e-12)
        kept[numeric] = ~empty & ~flagged & close
    for i, t in enumerate(want_text):
        if (t == "" or col.kind not in ("number", "integer")) and want[i] is not None:
            kept[i] = _text(got[i], raw).strip() == t.strip()
    return kept


def _row_checks(raw: RawTable, row: int, entries: dict[str, Any], config: SheetConfig,
                layout: SheetLayout, problems: ProblemReport, allow_mass_gain: bool) -> None:
    if not any(v is not None for v in entries.values()):
        return
    if layout.name == COUPON_LAYOUT:
        for name in config.required:
            if name in entries and entries[name] is None:
                problems.add(raw.tab, f"required reading {name!r} is empty", row=row,
                             column=name, check="missing_required",
                             fix="fill it in, or leave the whole row empty until it is done")
    start, end = entries.get("immersion_start"), entries.get("immersion_end")
    if start and end and pd.Timestamp(end) < pd.Timestamp(start):
        problems.add(raw.tab, "immersion end is before immersion start", row=row,
                     column="immersion_end", value=f"{end} < {start}",
                     check="end_before_start", fix="check the dates and times of both")
    initial = entries.get("mass_initial_g")
    if initial is not None and not allow_mass_gain:
        later = [n for n in entries if n in _MASS_LATER or n.startswith("mass_cycle_")]
        for name in later:
            if entries[name] is not None and entries[name] > initial:
                problems.add(raw.tab, f"{name} is above the initial mass {initial:g} g",
                             row=row, column=name, value=entries[name], check="mass_gain",
                             fix="check the weighing; if deposits really added mass, ingest "
                                 "with --allow-mass-gain (allow_mass_gain=True)")


#: A recorded exposed area may differ from the area computed from the coupon's dimensions
#: by at most this share (either way) before the row is refused.
AREA_TOLERANCE = 0.25


def _area_check(raw: RawTable, row: int, entries: dict[str, Any], spec: Any,
                problems: ProblemReport) -> None:
    """A recorded area far from the area of the recorded (or the trial's) dimensions."""
    area = entries.get("area_cm2")
    if area is None or spec is None or spec.shape == "given":
        return
    from trialkit.trial.geometry import GeometryError, coupon_area_cm2

    dims = {k: entries.get(k) if entries.get(k) is not None else getattr(spec, k)
            for k in ("length_mm", "width_mm", "thickness_mm", "diameter_mm")}
    try:
        computed = coupon_area_cm2(shape=spec.shape, holes=list(spec.holes),
                                   **{k: v for k, v in dims.items() if v is not None})
    except (GeometryError, TypeError, ValueError):
        return  # the dimensions are incomplete: nothing to compare with
    if computed > 0 and abs(area - computed) > AREA_TOLERANCE * computed:
        problems.add(raw.tab, f"the exposed area {area:g} cm² differs from the "
                     f"{computed:.4g} cm² of the coupon's dimensions by more than "
                     f"{AREA_TOLERANCE:.0%}", row=row, column="area_cm2", value=area,
                     check="area_mismatch",
                     fix="check the area and its unit (cm²), or record the measured "
                         "dimensions; leave the area empty to compute it")
