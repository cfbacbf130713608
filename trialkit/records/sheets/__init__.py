"""Recording sheets: export (XLSX, CSV, printable HTML and labels) and checked ingest.

openpyxl and jinja2 are imported only when a workbook or page is written or read, so
that reading a trial file (which parses ``[sheet]`` here) stays fast.
"""

from trialkit.records.config import SheetConfig, parse_sheet_section, sheet_config
from trialkit.records.sheets.export_csv import export_csv
from trialkit.records.sheets.export_html import export_html
from trialkit.records.sheets.export_xlsx import export_xlsx
from trialkit.records.sheets.ingest import IngestReport, check_sheet, ingest_sheet

__all__ = ["IngestReport", "SheetConfig", "check_sheet", "export_csv", "export_html",
           "export_xlsx", "ingest_sheet", "parse_sheet_section", "sheet_config"]
