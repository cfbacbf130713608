"""Recording sheets: export (XLSX, CSV, printable HTML and labels) and checked ingest.

Names are loaded on first use, so that reading a trial file (which parses ``[sheet]``
through :mod:`trialkit.sheets.config`) does not import openpyxl or jinja2.
"""

from __future__ import annotations

import importlib
from typing import Any

_WHERE = {
    "SheetConfig": "config", "parse_sheet_section": "config", "sheet_config": "config",
    "export_csv": "export_csv", "export_html": "export_html", "export_xlsx": "export_xlsx",
    "IngestReport": "ingest", "check_sheet": "ingest", "ingest_sheet": "ingest",
}

__all__ = sorted(_WHERE)


def __getattr__(name: str) -> Any:
    if name in _WHERE:
        return getattr(importlib.import_module(f"trialkit.sheets.{_WHERE[name]}"), name)
    raise AttributeError(f"module 'trialkit.sheets' has no attribute {name!r}")
