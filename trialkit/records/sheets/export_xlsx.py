"""Recording sheets as an XLSX workbook (openpyxl).

Tabs: ``Coupon readings`` (one row per coupon), ``Inspections`` (only when the trial
plans time-course inspections), ``How to fill in`` (what each column means, units and
ranges) and a hidden ``trialkit-metadata`` tab holding the format, layout, plan
fingerprint, seed and title (the same facts are printed in the second row of every tab
and in the workbook's keywords property).

Rows 1-2 of a data tab: title and stamp; row 3: headings with units; row 4: machine
names; data from row 5.  The tabs are protected without a password: plan columns are
locked, entry cells are unlocked and carry data validation (numeric ranges, lists for
ratings).
"""

from __future__ import annotations

from copy import copy
from pathlib import Path
from typing import Any

import pandas as pd

from trialkit.records.config import SheetConfig, sheet_config
from trialkit.records.sheets.layout import (
    INSTRUCTIONS_TAB,
    META_TAB,
    SheetLayout,
    cell_text,
    layouts,
    plan_rows,
    sheet_metadata,
    visible_stamp,
)

HEADING_ROW = 3
NAME_ROW = 4
FIRST_DATA_ROW = 5
_PLAN_GREY = "E8E8E8"
_CAUTION = ("Safety: wear eye and skin protection when handling alkaline or acidic solids "
            "and baths; acid on steel gives hydrogen, so never close a container on a working "
            "bath; ventilate; dispose of spent baths with dissolved metals as local "
            "regulations require. Follow the safety data sheets and local codes.")


def put_text(cell: Any, text: str) -> None:
    """Write ``text`` as a plain string cell that no spreadsheet reads as a formula."""
    cell.value = str(text)
    cell.data_type = "s"
    cell.quotePrefix = True


def _put(cell: Any, value: Any, kind: str) -> None:
    if value is None or (isinstance(value, float) and pd.isna(value)):
        return
    if kind == "integer":
        cell.value = int(value)
    elif kind == "number" and not isinstance(value, str):
        cell.value = float(value)
    else:
        put_text(cell, cell_text(value))


def _validation(col: Any) -> Any:
    from openpyxl.worksheet.datavalidation import DataValidation

    f = col.field
    if f is None:
        return None
    if f.kind == "number":
        lo = -1e300 if f.minimum is None else f.minimum
        hi = 1e300 if f.maximum is None else f.maximum
        return DataValidation(type="decimal", operator="between", formula1=repr(lo),
                              formula2=repr(hi), allow_blank=True, showErrorMessage=True,
                              errorTitle="Out of range",
                              error=f"{f.heading}: a number from {lo:g} to {hi:g}")
    if f.kind == "choice":
        return DataValidation(type="list", formula1='"' + ",".join(f.choices) + '"',
                              allow_blank=True, showErrorMessage=True,
                              error="choose one of: " + ", ".join(f.choices))
    return None


def _data_tab(wb: Any, plan: Any, layout: SheetLayout, config: SheetConfig) -> None:
    from openpyxl.styles import Alignment, Font, PatternFill, Protection
    from openpyxl.utils import get_column_letter

    ws = wb.create_sheet(layout.tab)
    meta = sheet_metadata(plan, layout)
    put_text(ws.cell(1, 1), meta["title"])
    ws.cell(1, 1).font = Font(bold=True, size=14)
    put_text(ws.cell(2, 1), visible_stamp(meta))
    rows = plan_rows(plan, layout, config)
    records = rows.to_dict("records")
    last = FIRST_DATA_ROW + len(rows) - 1
    plan_fill = PatternFill("solid", fgColor=_PLAN_GREY)
    unlocked = Protection(locked=False)
    for j, col in enumerate(layout.columns, start=1):
        letter = get_column_letter(j)
        head = ws.cell(HEADING_ROW, j)
        put_text(head, col.heading)
        head.font = Font(bold=True)
        head.alignment = Alignment(wrap_text=True, vertical="top")
        name = ws.cell(NAME_ROW, j)
        put_text(name, col.name)
        name.font = Font(color="808080", size=8)
        ws.column_dimensions[letter].width = max(10, min(28, len(col.heading) + 2))
        # The column's cell styles (with and without the quote prefix) are set once and
        # copied, as openpyxl's own worksheet copy does: assigning a fill cell by cell
        # hashes it every time.
        styles: dict[bool, Any] = {}
        for i, rec in enumerate(records):
            cell = ws.cell(FIRST_DATA_ROW + i, j)
            if col.role == "plan":
                _put(cell, rec.get(col.name), col.kind)
            known = styles.get(cell.quotePrefix)
            if known is not None:
                cell._style = copy(known)
                continue
            if col.role == "plan":
                cell.fill = plan_fill
            else:
                cell.protection = unlocked
                if col.kind == "datetime":
                    cell.number_format = "yyyy-mm-dd hh:mm"
            styles[cell.quotePrefix] = copy(cell._style)
        dv = _validation(col)
        if dv is not None and len(rows):
            ws.add_data_validation(dv)
            dv.add(f"{letter}{FIRST_DATA_ROW}:{letter}{last}")
    ws.freeze_panes = ws.cell(FIRST_DATA_ROW, 4)
    ws.protection.sheet = True
    ws.protection.formatColumns = False
    ws.protection.formatRows = False


def _instructions(wb: Any, plan: Any, all_layouts: list[SheetLayout]) -> None:
    from openpyxl.styles import Font

    ws = wb.create_sheet(INSTRUCTIONS_TAB)
    lines = [
        plan.trial.title,
        visible_stamp(sheet_metadata(plan, all_layouts[0])),
        "",
        "Grey columns come from the plan and are locked; do not change them.",
        "Type readings into the white columns as plain numbers in the unit of the heading.",
        "Leave cells empty for coupons not done yet; a partly filled sheet can be read in.",
        "Times: date and time, e.g. 2026-12-01 09:30. Do not add or rename tabs.",
        "Formulas are allowed; save the file in a spreadsheet program before reading it in.",
        _CAUTION,
        "",
    ]
    for r, text in enumerate(lines, start=1):
        put_text(ws.cell(r, 1), text)
    r = len(lines) + 1
    for k, head in enumerate(("Tab", "Heading", "Machine name", "Unit", "Allowed", "Meaning"),
                             start=1):
        put_text(ws.cell(r, k), head)
        ws.cell(r, k).font = Font(bold=True)
    for lay in all_layouts:
        for col in lay.entry_columns:
            r += 1
            f = col.field
            if f.kind == "number":
                allowed = f"{f.minimum:g} to {f.maximum:g}"
            elif f.kind == "choice":
                allowed = ", ".join(f.choices)
            else:
                allowed = {"datetime": "date and time", "text": "any text"}[f.kind]
            for k, text in enumerate((lay.tab, f.heading, f.name, f.unit, allowed,
                                      f.description), start=1):
                put_text(ws.cell(r, k), text)
    ws.column_dimensions["A"].width = 18
    ws.column_dimensions["B"].width = 34
    ws.protection.sheet = True


def _meta_tab(wb: Any, plan: Any, all_layouts: list[SheetLayout]) -> None:
    ws = wb.create_sheet(META_TAB)
    meta = sheet_metadata(plan, all_layouts[0])
    meta["layout"] = ",".join(lay.name for lay in all_layouts)
    for r, (k, v) in enumerate(meta.items(), start=1):
        put_text(ws.cell(r, 1), k)
        put_text(ws.cell(r, 2), v)
    ws.sheet_state = "hidden"
    ws.protection.sheet = True


def workbook(plan: Any, config: SheetConfig | None = None) -> Any:
    """The recording workbook of ``plan`` as an openpyxl ``Workbook``."""
    from openpyxl import Workbook

    config = config or sheet_config(plan.trial)
    all_layouts = layouts(plan, config)
    wb = Workbook()
    wb.remove(wb.active)
    for lay in all_layouts:
        _data_tab(wb, plan, lay, config)
    _instructions(wb, plan, all_layouts)
    _meta_tab(wb, plan, all_layouts)
    wb.properties.title = str(plan.trial.title)
    wb.properties.keywords = f"trialkit-sheet fingerprint={plan.fingerprint} seed={plan.seed}"
    return wb


def export_xlsx(plan: Any, path: str | Path, *, config: SheetConfig | None = None) -> Path:
    """Write the recording workbook of ``plan`` to ``path``; returns the path."""
    path = Path(path)
    workbook(plan, config).save(path)
    return path
