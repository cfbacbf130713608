"""Read the cells of a filled recording sheet (XLSX or CSV) without judging them.

The readers find the stamp (metadata), the two heading rows and the data rows, and
report only problems of the file as a whole: empty file, wrong encoding, not a workbook,
no trialkit stamp, extra or missing tabs, merged cells, formulas with no saved value.
Judging the values is :mod:`trialkit.records.sheets.validate`'s job.

CSV files must be UTF-8 (with or without byte-order mark).  Commas, semicolons and tabs
are recognised as separators; in a semicolon- or tab-separated file a decimal comma
(``12,5``) is read as a decimal point, as spreadsheet programs set to such locales write
it.  In a comma-separated file a number with a comma is refused (it is ambiguous).

Before a workbook is handed to openpyxl its zip is checked: at most :data:`MAX_MEMBERS`
members and :data:`MAX_XLSX_BYTES` once decompressed (a "zip bomb" is refused without
being inflated), no DOCTYPE or entity declarations in its XML, and every member whole.  A
CSV file may hold at most :data:`MAX_CSV_BYTES` and a cell at most :data:`MAX_CELL_CHARS`
characters.  A stamp of a sheet-format version this trialkit does not know is refused.
"""

from __future__ import annotations

import csv
import io
import re
import zipfile
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from trialkit.problems import ProblemReport
from trialkit.records.sheets.layout import (
    INSTRUCTIONS_TAB,
    META_TAB,
    SHEET_FORMAT,
    SHEET_VERSION,
    TAB_NAMES,
)
from trialkit.records.sheets.textsafe import unescape_text

_SCAN_ROWS = 12
#: Size limits of a sheet, far above any real one (a 5,000-coupon sheet is a few MB).
MAX_XLSX_BYTES = 100_000_000
MAX_MEMBERS = 1_000
MAX_CSV_BYTES = 50_000_000
MAX_CELL_CHARS = 100_000


@dataclass
class RawTable:
    """The cells of one tab (or one CSV file), not yet validated.

    Attributes
    ----------
    tab : str
        Tab name (XLSX) or the layout's tab name (CSV), used as "sheet" in problems.
    layout : str
        Layout name from the stamp (``"coupons"`` or ``"inspections"``).
    meta : dict
        The stamp: format, version, layout, fingerprint, seed, title.
    headings, names : list of str
        The heading row (words and units) and the machine-name row.
    rows : list of (int, list)
        Spreadsheet row number and cell values of each non-empty data row.
    from_csv : bool
        Text cells carry formula-injection escapes to undo.
    decimal_comma : bool
        Numbers may use a decimal comma.
    column_letters : list of str
        Column labels as the spreadsheet shows them (``A``, ``B`` ...).
    """

    tab: str
    layout: str
    meta: dict[str, str]
    headings: list[str]
    names: list[str]
    rows: list[tuple[int, list[Any]]] = field(default_factory=list)
    from_csv: bool = False
    decimal_comma: bool = False


def _blank(v: Any) -> bool:
    return v is None or (isinstance(v, str) and not v.strip())


def _find_name_row(rows: list[list[Any]]) -> int | None:
    for i, row in enumerate(rows[:_SCAN_ROWS]):
        if any(isinstance(v, str) and v.strip() == "coupon" for v in row):
            return i
    return None


def read_sheet_file(path: Path, data: bytes, problems: ProblemReport) -> list[RawTable]:
    """Read ``data`` (the bytes of ``path``) into raw tables, adding file-level problems."""
    if not data.strip():
        problems.add("", "the file is empty", check="empty_file",
                     fix="export a sheet with 'trialkit sheet', fill it in and save it")
        return []
    suffix = path.suffix.lower()
    if suffix in (".xlsx", ".xlsm") or data[:2] == b"PK":
        return _read_xlsx(data, problems)
    if suffix in (".csv", ".txt", ".tsv"):
        return _read_csv(data, problems)
    problems.add("", f"cannot read a {suffix or 'nameless'} file as a sheet", value=path.name,
                 check="unknown_format", fix="give an .xlsx or .csv recording sheet")
    return []


# -- XLSX ---------------------------------------------------------------------------
#: A formula element (``<f>``, ``<f t="shared" ...>``, ``<x:f>``) or a merged range in a
#: worksheet's XML: such a workbook is read in full (its formulas and merges are checked).
_FORMULA_OR_MERGE = re.compile(rb"<(?:\w+:)?(?:f[\s/>]|mergeCell)")


def _check_zip(data: bytes, problems: ProblemReport) -> bool | None:
    """Refuse a workbook zip that is too large inflated, damaged or declares XML entities.

    Returns None when refused, else whether its worksheets are plain: no formula and no
    merged cell in any of them.
    """
    try:
        archive = zipfile.ZipFile(io.BytesIO(data))
        members = archive.infolist()
    except (zipfile.BadZipFile, OSError, ValueError, EOFError) as exc:
        problems.add("", "the file is not a readable XLSX workbook (the zip is damaged or "
                     "truncated)", value=type(exc).__name__, check="not_a_workbook",
                     fix="open it in a spreadsheet program and save it as .xlsx again")
        return None
    total = sum(m.file_size for m in members)
    if len(members) > MAX_MEMBERS or total > MAX_XLSX_BYTES:
        problems.add("", f"the workbook would be {total:,} bytes in {len(members)} parts once "
                     f"unpacked; the limit is {MAX_XLSX_BYTES:,} bytes in {MAX_MEMBERS} parts",
                     value=f"{total:,} bytes", check="too_large",
                     fix="a recording sheet is a few MB at most: export a fresh one")
        return None
    import zlib

    plain = True
    for m in members:
        try:
            content = archive.read(m)
        except (zipfile.BadZipFile, zlib.error, EOFError, OSError, ValueError,
                NotImplementedError) as exc:
            problems.add("", f"part {m.filename!r} of the workbook is damaged or truncated",
                         value=type(exc).__name__, check="not_a_workbook",
                         fix="open it in a spreadsheet program and save it as .xlsx again")
            return None
        if m.filename.endswith((".xml", ".rels")) and (b"<!DOCTYPE" in content
                                                       or b"<!ENTITY" in content):
            problems.add("", f"part {m.filename!r} declares a DOCTYPE or entities, which a "
                         "workbook never needs (they can make a reader expand text without "
                         "end)", value=m.filename, check="xml_declarations",
                         fix="save the sheet again from a spreadsheet program")
            return None
        if m.filename.startswith("xl/chartsheets/") or (
                m.filename.startswith("xl/worksheets/") and _FORMULA_OR_MERGE.search(content)):
            plain = False
    return plain


def _read_xlsx(data: bytes, problems: ProblemReport) -> list[RawTable]:
    from openpyxl import load_workbook

    plain = _check_zip(data, problems)
    if plain is None:
        return []
    try:
        if plain:  # nothing to find in formulas or merges: one read-only pass, every cell
            wb_values = _read_only_grids(load_workbook(io.BytesIO(data), read_only=True,
                                                       data_only=True))
            wb_formulas = None
        else:
            wb_values = load_workbook(io.BytesIO(data), data_only=True)
            wb_formulas = load_workbook(io.BytesIO(data), data_only=False)
    except Exception as exc:  # openpyxl raises many types on a damaged workbook
        problems.add("", "the file is not a readable XLSX workbook (its XML is malformed: "
                     f"{type(exc).__name__})", value=type(exc).__name__,
                     check="not_a_workbook",
                     fix="open it in a spreadsheet program and save it as .xlsx")
        return []
    if META_TAB not in wb_values.sheetnames:
        problems.add("", f"no {META_TAB!r} tab: this workbook was not exported by trialkit "
                     "or the tab was deleted", check="no_metadata",
                     fix="fill in a sheet exported with 'trialkit sheet'")
        return []
    meta: dict[str, str] = {}
    for row in wb_values[META_TAB].iter_rows(values_only=True):
        if row and row[0] is not None:
            meta[str(row[0])] = "" if len(row) < 2 or row[1] is None else str(row[1])
    if meta.get("format") != SHEET_FORMAT:
        problems.add(META_TAB, "the metadata tab does not hold a trialkit stamp",
                     value=meta.get("format", ""), check="no_metadata",
                     fix="fill in a sheet exported with 'trialkit sheet'")
        return []
    if not _known_version(meta, META_TAB, problems):
        return []
    wanted = {TAB_NAMES[name]: name for name in meta.get("layout", "").split(",")
              if name in TAB_NAMES}
    if not wanted:
        problems.add(META_TAB, "the stamp names no known sheet layout",
                     value=meta.get("layout", ""), check="unknown_layout",
                     fix="fill in a sheet exported with 'trialkit sheet'")
        return []
    tables = []
    for name in wb_values.sheetnames:
        if name in (META_TAB, INSTRUCTIONS_TAB):
            continue
        ws = wb_values[name]
        if name not in wanted:
            if any(not _blank(v) for row in ws.iter_rows(values_only=True) for v in row):
                problems.add(name, f"unexpected tab {name!r} with data in it", value=name,
                             check="extra_sheet",
                             fix=f"move its readings into {', '.join(map(repr, wanted))} "
                                 "or delete the tab")
            continue
        table = _xlsx_tab(ws, wb_formulas[name] if wb_formulas else None, wanted[name], meta,
                          problems)
        if table is not None:
            tables.append(table)
    for tab in wanted:
        if tab not in wb_values.sheetnames:
            problems.add(tab, f"the tab {tab!r} is missing", check="missing_tab",
                         fix="do not rename or delete the tabs of the sheet")
    return tables


class _Grid:
    """The cell values of one tab of a read-only workbook, read whole (every cell, beyond
    any size the file states: ``reset_dimensions``), with the worksheet's names."""

    def __init__(self, ws: Any):
        ws.reset_dimensions()
        self.title = ws.title
        self.rows = [list(r) for r in ws.iter_rows(values_only=True)]
        self.merged_cells = None  # a plain workbook has none (see _check_zip)

    def iter_rows(self, values_only: bool = True) -> list[list[Any]]:
        return self.rows


class _Grids(dict):
    """A read-only workbook read whole: tab name -> :class:`_Grid`, in tab order."""

    @property
    def sheetnames(self) -> list[str]:
        return list(self)


def _read_only_grids(wb: Any) -> _Grids:
    """Every tab of a read-only openpyxl workbook, read at once (so that a damaged part
    fails here, inside the reader's error handling), then the workbook closed."""
    try:
        return _Grids((ws.title, _Grid(ws)) for ws in wb.worksheets)
    finally:
        wb.close()


def _xlsx_tab(ws: Any, ws_f: Any, layout: str, meta: dict[str, str],
              problems: ProblemReport) -> RawTable | None:
    from openpyxl.utils import get_column_letter

    grid = [list(r) for r in ws.iter_rows(values_only=True)]
    at = _find_name_row(grid)
    if at is None or at == 0:
        problems.add(ws.title, "no row of machine names (a cell 'coupon') near the top",
                     check="no_header",
                     fix="keep heading rows 3 and 4 of the exported sheet as they are")
        return None
    name_row = at + 1  # 1-based
    for rng in ws.merged_cells.ranges if ws.merged_cells is not None else ():
        if rng.max_row >= name_row - 1:
            problems.add(ws.title, f"merged cells {rng.coord}", row=rng.min_row,
                         column=get_column_letter(rng.min_col), value=rng.coord,
                         check="merged_cells",
                         fix="unmerge the cells and write the value into each cell")
    names = ["" if v is None else str(v).strip() for v in grid[at]]
    headings = ["" if v is None else str(v) for v in grid[at - 1]]
    rows = []
    for r_index in range(at + 1, len(grid)):
        values = grid[r_index]
        if all(_blank(v) for v in values):
            continue
        r = r_index + 1
        for c, v in enumerate(values, start=1):
            if v is None and ws_f is not None:
                fcell = ws_f.cell(r, c)
                if fcell.data_type == "f" or (isinstance(fcell.value, str)
                                             and fcell.value.startswith("=")
                                             and fcell.data_type != "s"):
                    col = names[c - 1] if c - 1 < len(names) else get_column_letter(c)
                    problems.add(ws.title, "formula with no saved value", row=r, column=col,
                                 value=str(fcell.value), check="formula_not_saved",
                                 fix="open the file in a spreadsheet program, let it compute "
                                     "and save it, then read it in again")
        rows.append((r, values))
    return RawTable(ws.title, layout, meta, headings, names, rows)


# -- CSV ----------------------------------------------------------------------------
def _read_csv(data: bytes, problems: ProblemReport) -> list[RawTable]:
    if data[:2] in (b"\xff\xfe", b"\xfe\xff"):
        problems.add("", "the file is UTF-16 text; trialkit reads CSV in UTF-8",
                     check="wrong_encoding", fix="save the file as 'CSV UTF-8'")
        return []
    if len(data) > MAX_CSV_BYTES:
        problems.add("", f"the file has {len(data):,} bytes; the limit is {MAX_CSV_BYTES:,}",
                     value=f"{len(data):,} bytes", check="too_large",
                     fix="a recording sheet is a few MB at most: export a fresh one")
        return []
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        problems.add("", f"the file is not UTF-8 text (byte {exc.start} is "
                     f"0x{data[exc.start]:02x})", check="wrong_encoding",
                     fix="save the file as 'CSV UTF-8' in your spreadsheet program")
        return []
    limit = csv.field_size_limit()
    csv.field_size_limit(MAX_CELL_CHARS)
    at = None
    try:
        for delimiter in (",", ";", "\t"):
            grid = list(csv.reader(io.StringIO(text, newline=""), delimiter=delimiter))
            at = _find_name_row(grid)
            if at is not None:
                break
    except csv.Error as exc:
        problems.add("", f"the file cannot be read as CSV: {exc} (a cell may hold at most "
                     f"{MAX_CELL_CHARS:,} characters)", value=str(exc)[:60],
                     check="csv_unreadable",
                     fix="shorten the long cell, or export a fresh sheet and fill it in")
        return []
    finally:
        csv.field_size_limit(limit)
    if at is None:
        problems.add("", "no row of machine names (a cell 'coupon') near the top",
                     check="no_header",
                     fix="keep the two heading rows of the exported sheet as they are")
        return []
    meta: dict[str, str] = {}
    for row in grid[:at]:
        if row and row[0].strip() == "# " + SHEET_FORMAT:
            meta["format"] = SHEET_FORMAT
            for cell in row[1:]:
                key, sep, value = cell.partition("=")
                if sep:
                    meta[key.strip()] = unescape_text(value)
    if not meta:
        problems.add("", "no '# trialkit-sheet' stamp line above the headings",
                     check="no_metadata",
                     fix="fill in a sheet exported with 'trialkit sheet --format csv' and "
                         "keep its first line")
        return []
    if not _known_version(meta, "", problems):
        return []
    layout = meta.get("layout", "")
    if layout not in TAB_NAMES or at == 0:
        problems.add("", "the stamp names no known sheet layout", value=layout,
                     check="unknown_layout", fix="fill in a sheet exported with trialkit")
        return []
    names = [v.strip() for v in grid[at]]
    headings = [unescape_text(v) for v in grid[at - 1]]
    rows = [(i + 1, list(values)) for i, values in enumerate(grid) if i > at
            and not all(_blank(v) for v in values)]
    return [RawTable(TAB_NAMES[layout], layout, meta, headings, names, rows, True,
                     delimiter != ",")]


def _known_version(meta: dict[str, str], where: str, problems: ProblemReport) -> bool:
    """False (and a problem) for a stamp of a sheet-format version this build cannot read."""
    version = meta.get("version", "")
    if version != SHEET_VERSION:
        problems.add(where, f"the sheet's stamp has format version {version[:20]!r}; this "
                     f"trialkit reads version {SHEET_VERSION}", value=version[:20],
                     check="unknown_sheet_version",
                     fix="export the sheet again with this trialkit, or read it with the "
                         "trialkit that exported it")
        return False
    return True
