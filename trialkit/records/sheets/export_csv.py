"""Recording sheets as CSV files (UTF-8, comma-separated).

Layout of the file, one record per line:

1. the stamp: ``# trialkit-sheet``, then cells ``layout=...``, ``fingerprint=...``,
   ``seed=...``, ``version=...``, ``title=...`` (survives being opened and saved again
   by a spreadsheet program, since each item is its own cell);
2. the caution line (:data:`trialkit.chemistry.cautions.CSV_CAUTION`), one cell; ingest
   passes over it like any line above the headings;
3. the headings in words with units;
4. the machine names ingest uses to find the columns;
5. one row per coupon (or per coupon and inspection), plan columns filled in.

User text is escaped against formula injection (:mod:`trialkit.records.sheets.textsafe`).
The file is written with a byte-order mark so that spreadsheet programs read it as UTF-8.
"""

from __future__ import annotations

import csv
import io
from pathlib import Path
from typing import Any

import pandas as pd

from trialkit.chemistry.cautions import CSV_CAUTION
from trialkit.records.config import SheetConfig, sheet_config
from trialkit.records.sheets.layout import (
    SHEET_FORMAT,
    SheetLayout,
    cell_text,
    coupon_layout,
    inspection_layout,
    plan_rows,
    sheet_metadata,
)
from trialkit.records.sheets.textsafe import escape_text

#: First cell of the stamp line.
CSV_STAMP = "# " + SHEET_FORMAT


def _plain(value: Any, kind: str) -> str:
    if value is None or (isinstance(value, float) and pd.isna(value)):
        return ""
    if kind in ("number", "integer") and not isinstance(value, str):
        return repr(float(value)) if kind == "number" else cell_text(value)
    return escape_text(cell_text(value))


def csv_text(plan: Any, layout: SheetLayout, config: SheetConfig | None = None) -> str:
    """The CSV sheet of ``layout`` as text."""
    meta = sheet_metadata(plan, layout)
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow([CSV_STAMP] + [f"{k}={escape_text(v)}" for k, v in meta.items()
                              if k != "format"])
    w.writerow([CSV_CAUTION])
    w.writerow([escape_text(c.heading) for c in layout.columns])
    w.writerow([c.name for c in layout.columns])
    rows = plan_rows(plan, layout, config)
    for rec in rows.to_dict("records"):
        w.writerow([_plain(rec.get(c.name), c.kind) if c.role == "plan" else ""
                    for c in layout.columns])
    return buf.getvalue()


def export_csv(plan: Any, path: str | Path, *, layout: str = "coupons",
               config: SheetConfig | None = None) -> Path:
    """Write the CSV sheet of one layout (``"coupons"`` or ``"inspections"``) to ``path``.

    Returns the path written.
    """
    config = config or sheet_config(plan.trial)
    lay = coupon_layout(plan, config) if layout == "coupons" else inspection_layout(plan, config)
    path = Path(path)
    path.write_text(csv_text(plan, lay, config), encoding="utf-8-sig", newline="")
    return path
