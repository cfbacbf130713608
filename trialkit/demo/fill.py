"""Fill an exported recording sheet from a table of readings (demo and notebooks).

A person fills a recording sheet by hand; the demo and the notebooks fill a copy of the
exported sheet by program instead, from the invented readings of an example trial, so
that the sheet then goes through the same checked ingest as a hand-filled one.

The sheet's documented layout is used (:mod:`trialkit.records.sheets.layout`): in each data tab
(XLSX) or file (CSV) a row of machine names (the row holding the cell ``coupon``), then
one row per coupon (coupon sheet) or per coupon and inspection (inspection sheet).
Only *entry* columns are written; the plan columns are left as exported.

Examples
--------
>>> import pandas as pd
>>> _match_inspections(pd.DataFrame({"coupon": ["A", "A"], "elapsed_h": [4.0, 2.0]}),
...                    {("A", 1): 2.0, ("A", 2): 4.0})
{('A', 1): 1, ('A', 2): 0}
"""

from __future__ import annotations

import csv
import datetime as dt
import io
import math
import shutil
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import pandas as pd

from trialkit.exceptions import SheetError

#: Machine names of the plan columns of both sheet layouts (never written by a fill).
PLAN_NAMES = ("run", "bath", "coupon", "coupon_kind", "block", "point", "replicate",
              "inspection", "planned_h", "std_order")
_DATETIME_FIELDS = ("immersion_start", "immersion_end")


@dataclass(frozen=True)
class FillResult:
    """What :func:`fill_sheet` wrote.

    Attributes
    ----------
    path : Path
        The filled copy.
    rows_filled : int
        Sheet rows that received at least one value.
    values : int
        Cells written.
    missing : tuple of str
        Row keys of the sheet for which the readings had no row (left empty).
    """

    path: Path
    rows_filled: int
    values: int
    missing: tuple[str, ...] = ()

    def to_dict(self) -> dict:
        """Plain-data form for JSON."""
        return {"path": str(self.path), "rows_filled": self.rows_filled,
                "values": self.values, "missing": list(self.missing)}

    def __repr__(self) -> str:
        return (f"FillResult({self.path.name}: {self.values} values in {self.rows_filled} "
                f"rows, {len(self.missing)} rows without readings)")


def _blank(v: Any) -> bool:
    return v is None or (isinstance(v, float) and math.isnan(v)) or (
        isinstance(v, str) and not v.strip())


def _name_row(grid: list[list[Any]]) -> int:
    for i, row in enumerate(grid[:12]):
        if any(isinstance(v, str) and v.strip() == "coupon" for v in row):
            return i
    raise SheetError("no row of machine names (a cell 'coupon') in the first 12 rows of the "
                     "sheet; fill a sheet exported by trialkit ('trialkit sheet')")


def _match_inspections(readings: pd.DataFrame, planned: dict) -> dict:
    """Map each (coupon, inspection) of the sheet to a row of time-course ``readings``.

    A reading matches the planned inspection with the same time in bath; readings whose
    time matches no planned time are matched by their order per coupon.
    """
    out: dict = {}
    for coupon, group in readings.groupby("coupon", sort=False):
        rows = group.sort_values("elapsed_h", kind="stable")
        slots = sorted((k for k in planned if k[0] == coupon), key=lambda k: k[1])
        free = list(rows.index)
        for key in slots:
            hit = [i for i in free if math.isclose(float(rows.at[i, "elapsed_h"]),
                                                   float(planned[key]), abs_tol=1e-9)]
            if hit:
                out[key] = hit[0]
                free.remove(hit[0])
        for key in slots:
            if key not in out and free:
                out[key] = free.pop(0)
    return out


def _value(name: str, v: Any, xlsx: bool) -> Any:
    if _blank(v):
        return None
    if name in _DATETIME_FIELDS and xlsx:
        return dt.datetime.fromisoformat(str(v).strip())
    if isinstance(v, float) and v.is_integer() and name in ("inspection",):
        return int(v)
    return v


def _assign(names: list[str], keyrows: list[tuple[Any, dict]], readings: pd.DataFrame,
            layout: str) -> tuple[dict, list[str]]:
    """Per sheet row index: {column index: value}; and the keys with no reading."""
    entry = [(j, n) for j, n in enumerate(names) if n and n not in PLAN_NAMES]
    known = [(j, n) for j, n in entry if n in readings.columns]
    if "coupon" not in readings.columns:
        raise SheetError(f"the readings have no 'coupon' column (columns: "
                         f"{list(readings.columns)}); give one row per coupon")
    readings = readings.copy()
    readings["coupon"] = readings["coupon"].astype(str)
    writes: dict = {}
    missing: list[str] = []
    if layout == "inspections":
        if "elapsed_h" not in readings.columns:
            raise SheetError("time-course readings need an 'elapsed_h' column to match the "
                             "planned inspections")
        planned = {(str(k["coupon"]), int(float(k["inspection"]))): float(k["planned_h"])
                   for _, k in keyrows}
        match = _match_inspections(readings, planned)
        for r, k in keyrows:
            key = (str(k["coupon"]), int(float(k["inspection"])))
            if key not in match:
                missing.append(f"{key[0]}#{key[1]}")
                continue
            rec = readings.loc[match[key]]
            writes[r] = {j: rec[n] for j, n in known}
        return writes, missing
    by_coupon = readings.drop_duplicates("coupon", keep="last").set_index("coupon")
    for r, k in keyrows:
        coupon = str(k["coupon"])
        if coupon not in by_coupon.index:
            missing.append(coupon)
            continue
        rec = by_coupon.loc[coupon]
        writes[r] = {j: rec[n] for j, n in known}
    return writes, missing


def _fill_xlsx(src: Path, out: Path, coupons: pd.DataFrame,
               timecourse: pd.DataFrame | None) -> tuple[int, int, list[str]]:
    from openpyxl import load_workbook

    from trialkit.records.sheets.layout import TAB_NAMES

    wb = load_workbook(src)
    rows_filled = values = 0
    missing: list[str] = []
    for layout, tab in TAB_NAMES.items():
        if tab not in wb.sheetnames:
            continue
        table = coupons if layout == "coupons" else timecourse
        if table is None:
            continue
        ws = wb[tab]
        grid = [list(r) for r in ws.iter_rows(values_only=True)]
        at = _name_row(grid)
        names = ["" if v is None else str(v).strip() for v in grid[at]]
        keyrows = [(i, dict(zip(names, row, strict=False)))
                   for i, row in enumerate(grid) if i > at and not _blank(row[names.index(
                       "coupon")])]
        writes, miss = _assign(names, keyrows, table, layout)
        missing += miss
        for i, cells in writes.items():
            n = 0
            for j, v in cells.items():
                v = _value(names[j], v, True)
                if v is None:
                    continue
                cell = ws.cell(i + 1, j + 1)
                if isinstance(v, str):
                    cell.value, cell.data_type, cell.quotePrefix = v, "s", True
                else:
                    cell.value = v.item() if hasattr(v, "item") else v
                n += 1
            rows_filled += bool(n)
            values += n
    wb.save(out)
    return rows_filled, values, missing


def _fill_csv(src: Path, out: Path, table: pd.DataFrame) -> tuple[int, int, list[str]]:
    from trialkit.records.sheets.textsafe import escape_text

    text = src.read_bytes().decode("utf-8-sig")
    grid = list(csv.reader(io.StringIO(text, newline="")))
    at = _name_row(grid)
    names = [v.strip() for v in grid[at]]
    layout = "inspections" if "inspection" in names else "coupons"
    keyrows = [(i, dict(zip(names, row, strict=False))) for i, row in enumerate(grid)
               if i > at and row and row[names.index("coupon")].strip()]
    writes, missing = _assign(names, keyrows, table, layout)
    rows_filled = values = 0
    for i, cells in writes.items():
        row = grid[i] + [""] * (len(names) - len(grid[i]))
        n = 0
        for j, v in cells.items():
            v = _value(names[j], v, False)
            if v is None:
                continue
            row[j] = repr(float(v)) if isinstance(v, float) else escape_text(str(v))
            n += 1
        grid[i] = row
        rows_filled += bool(n)
        values += n
    buf = io.StringIO()
    csv.writer(buf, lineterminator="\n").writerows(grid)
    out.write_text(buf.getvalue(), encoding="utf-8-sig", newline="")
    return rows_filled, values, missing


def fill_sheet(sheet_path: str | Path, readings: pd.DataFrame | str | Path,
               out_path: str | Path, *, timecourse: pd.DataFrame | str | Path | None = None
               ) -> FillResult:
    """Write ``readings`` into a copy of an exported recording sheet.

    Parameters
    ----------
    sheet_path : path
        A sheet exported by :func:`trialkit.records.sheets.export_xlsx` or
        :func:`~trialkit.records.sheets.export_csv` (left unchanged).
    readings : DataFrame or path to CSV
        One row per coupon with ``coupon`` and entry fields named as the sheet's machine
        names (``mass_initial_g`` ...); other columns are ignored.  For a CSV inspection
        sheet, one row per coupon and inspection with ``coupon`` and ``elapsed_h``.
    out_path : path
        Where the filled copy goes (same format as ``sheet_path``).
    timecourse : DataFrame or path to CSV, optional
        Time-course readings for the ``Inspections`` tab of an XLSX workbook.

    Returns
    -------
    FillResult

    Raises
    ------
    SheetError
        The sheet has no machine-name row, or the readings lack the key columns.
    """
    src, out = Path(sheet_path), Path(out_path)
    if not src.exists():
        raise SheetError(f"sheet {src} not found; export one first ('trialkit sheet')")
    table = pd.read_csv(readings) if isinstance(readings, (str, Path)) else readings
    tc = pd.read_csv(timecourse) if isinstance(timecourse, (str, Path)) else timecourse
    out.parent.mkdir(parents=True, exist_ok=True)
    if src.resolve() != out.resolve():
        shutil.copyfile(src, out)
    suffix = src.suffix.lower()
    if suffix == ".xlsx":
        rows, n, missing = _fill_xlsx(out, out, table, tc)
    elif suffix == ".csv":
        rows, n, missing = _fill_csv(out, out, table)
    else:
        raise SheetError(f"cannot fill a {suffix or 'nameless'} file; give the .xlsx or "
                         ".csv sheet exported by trialkit")
    return FillResult(out, rows, n, tuple(missing))
