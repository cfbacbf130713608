"""Faults of the sheet files themselves (trialkit/records/sheets/readers.py): damaged or
malicious workbooks, oversized files and cells, unknown stamp versions.  Each is refused
with a named check, naming the file, and the record log stays byte-for-byte the same.
The readings are invented for testing."""

from __future__ import annotations

import io
import zipfile
from pathlib import Path

import pytest
from malformed_sheets.make_corpus import fill_csv, fill_xlsx, good_readings, make_test_plan

from trialkit.records.log import LOG_FILE
from trialkit.records.sheets import export_csv, export_xlsx, ingest_sheet
from trialkit.records.sheets.readers import MAX_CELL_CHARS, MAX_XLSX_BYTES


@pytest.fixture(scope="module")
def setup(tmp_path_factory):
    base = tmp_path_factory.mktemp("faults")
    plan = make_test_plan(base / "trial")
    first = fill_csv(export_csv(plan, base / "blank.csv"), base / "first.csv",
                     {"B01-R1": {"mass_initial_g": 25.0}})
    assert ingest_sheet(first, plan).ok  # a log with something in it
    xlsx = fill_xlsx(export_xlsx(plan, base / "blank.xlsx"), base / "filled.xlsx",
                     good_readings())
    csv_good = fill_csv(export_csv(plan, base / "blank2.csv"), base / "filled.csv",
                        good_readings())
    return plan, base, xlsx, csv_good


def refused(plan, path: Path, check: str) -> str:
    log = plan.trial.folder / LOG_FILE
    before = log.read_bytes()
    report = ingest_sheet(path, plan)
    assert report.status == "refused"
    assert report.problems.checks() == [check], report.problems.checks()
    assert all(p.source == path.name for p in report.problems)
    assert log.read_bytes() == before  # byte for byte
    return str(report.problems)


def rewrite_member(src: Path, dst: Path, name_part: str, change) -> Path:
    with zipfile.ZipFile(src) as zin, zipfile.ZipFile(dst, "w", zipfile.ZIP_DEFLATED) as zout:
        for item in zin.infolist():
            data = zin.read(item)
            if name_part in item.filename:
                data = change(data)
            zout.writestr(item, data)
    return dst


def test_malformed_xml_inside_a_valid_zip(setup, tmp_path):
    plan, _, xlsx, _ = setup
    bad = rewrite_member(xlsx, tmp_path / "bad.xlsx", "worksheets/sheet1.xml",
                         lambda d: d[: len(d) // 2])
    assert "its XML is malformed" in refused(plan, bad, "not_a_workbook")


def test_doctype_and_entity_declarations_are_refused(setup, tmp_path):
    plan, _, xlsx, _ = setup

    def add_entities(data: bytes) -> bytes:
        head, sep, rest = data.partition(b"?>")
        return head + sep + b'<!DOCTYPE x [<!ENTITY a "aaaaaaaaaa"><!ENTITY b "&a;&a;&a;">]>' \
            + rest

    bad = rewrite_member(xlsx, tmp_path / "entities.xlsx", "sharedStrings.xml", add_entities)
    if bad.read_bytes() == xlsx.read_bytes():  # pragma: no cover - no shared strings part
        bad = rewrite_member(xlsx, bad, "workbook.xml", add_entities)
    assert "DOCTYPE or entities" in refused(plan, bad, "xml_declarations")


def test_truncated_workbook(setup, tmp_path):
    plan, _, xlsx, _ = setup
    bad = tmp_path / "truncated.xlsx"
    bad.write_bytes(xlsx.read_bytes()[: len(xlsx.read_bytes()) * 2 // 3])
    assert "not a readable XLSX workbook" in refused(plan, bad, "not_a_workbook")


def test_zip_bomb_is_refused_without_inflating_it(setup, tmp_path):
    plan, _, _, _ = setup
    bomb = tmp_path / "bomb.xlsx"
    with zipfile.ZipFile(bomb, "w", zipfile.ZIP_DEFLATED) as z, \
            z.open("xl/worksheets/sheet1.xml", "w") as member:
        chunk = b"\0" * 1_000_000
        for _ in range(MAX_XLSX_BYTES // len(chunk) + 1):
            member.write(chunk)
    assert bomb.stat().st_size < 1_000_000
    text = refused(plan, bomb, "too_large")
    assert f"{MAX_XLSX_BYTES:,}" in text


def test_csv_cell_of_200000_characters(setup, tmp_path):
    plan, _, _, csv_good = setup
    lines = csv_good.read_text(encoding="utf-8").splitlines()
    lines[-1] = lines[-1] + "," + "x" * 200_000
    bad = tmp_path / "long_cell.csv"
    bad.write_text("\n".join(lines) + "\n", encoding="utf-8")
    text = refused(plan, bad, "csv_unreadable")
    assert f"{MAX_CELL_CHARS:,} characters" in text
    assert "x" * 100 not in text  # long input is quoted by a short prefix only


def test_unknown_stamp_version_csv(setup, tmp_path):
    plan, _, _, csv_good = setup
    text = csv_good.read_text(encoding="utf-8")
    assert "version=1" in text
    bad = tmp_path / "v9.csv"
    bad.write_text(text.replace("version=1", "version=9", 1), encoding="utf-8")
    assert "format version '9'" in refused(plan, bad, "unknown_sheet_version")


def test_unknown_stamp_version_xlsx(setup, tmp_path):
    from openpyxl import load_workbook

    from trialkit.records.sheets.layout import META_TAB

    plan, _, xlsx, _ = setup
    wb = load_workbook(xlsx)
    for row in wb[META_TAB].iter_rows():
        if row[0].value == "version":
            row[1].value = "2"
    buf = io.BytesIO()
    wb.save(buf)
    bad = tmp_path / "v2.xlsx"
    bad.write_bytes(buf.getvalue())
    assert "format version '2'" in refused(plan, bad, "unknown_sheet_version")


def test_area_that_disagrees_with_the_dimensions_is_refused(setup, tmp_path):
    """1 cm² recorded on a 50 x 25 x 2 mm plate (28 cm² by plain geometry)."""
    from trialkit.records.sheets.validate import AREA_TOLERANCE

    plan = make_test_plan(tmp_path / "trial", extra="\n[coupons]\nshape = \"plate\"\n"
                          "length = 50\nwidth = 25\nthickness = 2\n")
    blank = export_csv(plan, tmp_path / "blank.csv")
    first = fill_csv(blank, tmp_path / "ok.csv", {"B01-R1": {"mass_initial_g": 25.0,
                                                             "area_cm2": 27.5}})
    assert ingest_sheet(first, plan).ok  # within the tolerance of 28 cm²
    sheet = fill_csv(blank, tmp_path / "area.csv",
                     {"B01-R2": {"mass_initial_g": 25.0, "area_cm2": 1.0}})
    text = refused(plan, sheet, "area_mismatch")
    assert f"{AREA_TOLERANCE:.0%}" in text and "28 cm²" in text
