"""File-level reading of sheets (the whole malformed corpus runs in test_sheets_ingest)."""

from __future__ import annotations

from pathlib import Path

import pytest
from malformed_sheets.make_corpus import _csv_grid, _write_grid, make_test_plan

from trialkit.problems import ProblemReport
from trialkit.records.sheets import export_csv
from trialkit.records.sheets.readers import read_sheet_file


@pytest.fixture
def blank(tmp_path):
    plan = make_test_plan(tmp_path / "trial")
    return export_csv(plan, tmp_path / "blank.csv")


def read(path: Path):
    problems = ProblemReport(path.name)
    return read_sheet_file(path, path.read_bytes(), problems), problems


@pytest.mark.parametrize("delimiter, encoding, decimal_comma", [
    (",", "utf-8-sig", False), (",", "utf-8", False), (";", "utf-8", True),
    ("\t", "utf-8-sig", True)])
def test_separators_and_byte_order_mark(blank, tmp_path, delimiter, encoding, decimal_comma):
    path = _write_grid(tmp_path / "x.csv", _csv_grid(blank), delimiter=delimiter,
                       encoding=encoding)
    (raw,), problems = read(path)
    assert not problems
    assert raw.names[:3] == ["run", "bath", "coupon"]
    assert raw.headings[2] == "Coupon id"
    assert raw.decimal_comma is decimal_comma
    assert raw.layout == "coupons" and raw.meta["seed"] == "4242"
    assert len(raw.rows) == 15 and raw.rows[0][0] == 5  # data starts on line 5


def test_no_machine_name_row(blank, tmp_path):
    grid = _csv_grid(blank)
    del grid[3]  # the machine names (below the stamp, the caution line, the headings)
    tables, problems = read(_write_grid(tmp_path / "x.csv", grid))
    assert tables == [] and problems.checks() == ["no_header"]


def test_whitespace_only_file_is_empty(tmp_path):
    path = tmp_path / "blank.csv"
    path.write_text("  \n\n", encoding="utf-8")
    assert read(path)[1].checks() == ["empty_file"]


def test_empty_extra_tab_is_ignored(tmp_path):
    from openpyxl import load_workbook

    from trialkit.records.sheets import export_xlsx

    plan = make_test_plan(tmp_path / "trial")
    path = export_xlsx(plan, tmp_path / "s.xlsx")
    wb = load_workbook(path)
    wb.create_sheet("Sheet1")
    wb.save(path)
    tables, problems = read(path)
    assert not problems
    assert [t.tab for t in tables] == ["Coupon readings", "Inspections"]
