"""Ingest: round trips, the malformed-sheet corpus, revisions and the ingest report.

All readings are invented test values (tests/malformed_sheets/make_corpus.py).
"""

from __future__ import annotations

import hashlib
import json

import pandas as pd
import pytest
from malformed_sheets.make_corpus import (
    _csv_grid,
    _write_grid,
    build_corpus,
    fill_csv,
    fill_xlsx,
    good_readings,
    make_test_plan,
    set_saved_formula,
    xlsx_col,
    xlsx_row,
)

from trialkit.chemistry.cautions import CSV_CAUTION
from trialkit.exceptions import SheetError
from trialkit.records.log import RecordLog
from trialkit.records.sheets import export_csv, export_xlsx, ingest_sheet
from trialkit.records.sheets.ingest import check_sheet


def sha(path):
    return hashlib.sha256(path.read_bytes()).hexdigest()


@pytest.fixture
def plan(tmp_path):
    return make_test_plan(tmp_path / "trial")


@pytest.fixture
def blanks(plan, tmp_path):
    return export_csv(plan, tmp_path / "blank.csv"), export_xlsx(plan, tmp_path / "blank.xlsx")


def expected_frame(readings):
    rows = []
    for coupon, fields in readings.items():
        for name, value in fields.items():
            if name.startswith("immersion_"):
                value = pd.Timestamp(value)
            rows.append((coupon, name, value))
    return rows


@pytest.mark.parametrize("fmt", ["csv", "xlsx"])
def test_round_trip_every_field_type(fmt, plan, blanks, tmp_path):
    blank = blanks[0] if fmt == "csv" else blanks[1]
    fill = fill_csv if fmt == "csv" else fill_xlsx
    sheet = fill(blank, tmp_path / f"filled.{fmt}", good_readings())
    if fmt == "csv":  # issue 17: the caution line goes out, and ingest passes over it
        assert _csv_grid(sheet)[1] == [CSV_CAUTION]
    before = sha(sheet)
    report = ingest_sheet(sheet, plan)
    assert report.status == "accepted", repr(report)
    assert not [p for p in report.problems if "CAUTION" in str(p.value)]
    assert sha(sheet) == before  # the original file is never modified
    n_values = sum(len(v) for v in good_readings().values())
    assert len(report.accepted) == n_values
    current = RecordLog.for_folder(plan.trial.folder).current_values(plan).set_index("coupon")
    for coupon, name, value in expected_frame(good_readings()):
        assert current.loc[coupon, name] == value, (coupon, name)
    # text that looks like a formula comes back as the same plain text
    assert current.loc["B01-R1", "notes"] == "=1+2 looked odd"
    assert current.loc["B02-R2", "notes"] == "-pitted edge"
    assert pd.isna(current.loc["B05-R1", "mass_initial_g"])  # partial sheet: not done yet
    assert current["immersion_start"].dtype.kind == "M"


@pytest.fixture(scope="module")
def corpus(tmp_path_factory):
    folder = tmp_path_factory.mktemp("corpus")
    plan = make_test_plan(folder / "trial")
    files = build_corpus(folder / "files", plan)
    # a log that already holds one accepted sheet, so "unchanged" is not trivially empty
    good = fill_csv(export_csv(plan, folder / "blank.csv"), folder / "good.csv",
                    {"B03-R1": {"mass_initial_g": 21.0}})
    assert ingest_sheet(good, plan).status == "accepted"
    return plan, files


CORPUS_NAMES = [
    "empty_file", "latin1_encoding", "utf16_encoding", "wrong_type_mass", "bad_datetime",
    "decimal_comma_in_comma_file", "ph_out_of_range", "coverage_over_100", "duplicate_coupon",
    "unknown_coupon", "missing_coupon_id", "missing_required", "mass_gain", "no_stamp_line",
    "unknown_column", "transposed_columns", "unit_mismatch_heading", "end_before_start",
    "extra_sheet", "merged_cells", "edited_plan_column", "formula_without_saved_value",
    "unknown_rating", "missing_tab", "metadata_tab_deleted", "not_a_workbook",
    "unknown_format", "other_plan",
]


def test_corpus_is_complete(corpus):
    _, files = corpus
    assert sorted(files) == sorted(CORPUS_NAMES)
    assert len(files) >= 20
    assert all(path.exists() for path, _ in files.values())


@pytest.mark.parametrize("name", CORPUS_NAMES)
def test_malformed_sheet_refused_log_unchanged(corpus, name):
    plan, files = corpus
    path, checks = files[name]
    log = RecordLog.for_folder(plan.trial.folder)
    before_hist, before_file = log.history(), sha(path)
    report = ingest_sheet(path, plan)
    assert report.status == "refused"
    assert report.problems.checks() == checks
    assert not report.ok and len(report.accepted) == 0
    pd.testing.assert_frame_equal(log.history(), before_hist)
    assert sha(path) == before_file
    for p in report.problems:  # every problem says what to do
        assert p.fix and p.message and p.source == path.name


def test_problem_places_are_spreadsheet_rows(plan, blanks, tmp_path):
    csv_blank, xlsx_blank = blanks
    bad = {"B01-R1": {"mass_initial_g": "heavy"}, "B02-R2": {"bath_ph": 15.0},
           "B01-W1": {"mass_initial_g": 10.0, "coverage_after_pct": -1.0}}
    sheet = fill_csv(csv_blank, tmp_path / "bad.csv", bad)
    report = check_sheet(sheet, plan)
    grid = _csv_grid(sheet)
    line = {r[2]: i + 1 for i, r in enumerate(grid) if len(r) > 2}  # not the caution line
    got = {(p.row, p.column, p.check, p.value) for p in report.problems}
    assert got == {(line["B01-R1"], "mass_initial_g", "wrong_type", "heavy"),
                   (line["B02-R2"], "bath_ph", "out_of_range", "15.0"),
                   (line["B01-W1"], "coverage_after_pct", "coverage_out_of_range", "-1.0")}
    assert {p.where for p in report.problems} == {"Coupon readings"}
    xsheet = fill_xlsx(xlsx_blank, tmp_path / "bad.xlsx", bad)
    xreport = check_sheet(xsheet, plan)
    from openpyxl import load_workbook

    wb = load_workbook(xsheet)
    rows = {p.column: p.row for p in xreport.problems}
    assert rows["mass_initial_g"] == xlsx_row(wb, "B01-R1")
    assert rows["bath_ph"] == xlsx_row(wb, "B02-R2")


def test_semicolons_and_decimal_commas_are_read(plan, blanks, tmp_path):
    readings = {"B01-R1": {"mass_initial_g": "25,125", "bath_ph": "6,5", "notes": "a; b"}}
    sheet = fill_csv(blanks[0], tmp_path / "semi.csv", readings, delimiter=";")
    assert b";" in sheet.read_bytes().splitlines()[2]
    report = ingest_sheet(sheet, plan)
    assert report.status == "accepted", repr(report)
    cur = RecordLog.for_folder(plan.trial.folder).current_values(plan).set_index("coupon")
    assert cur.loc["B01-R1", "mass_initial_g"] == 25.125
    assert cur.loc["B01-R1", "bath_ph"] == 6.5
    assert cur.loc["B01-R1", "notes"] == "a; b"


def test_moved_columns_are_found_by_machine_name(plan, blanks, tmp_path):
    sheet = fill_csv(blanks[0], tmp_path / "f.csv", good_readings())
    grid = _csv_grid(sheet)
    order = list(reversed(range(len(grid[2]))))  # below the stamp and the caution line
    moved = grid[:2] + [[r[i] for i in order] for r in grid[2:]]
    _write_grid(tmp_path / "moved.csv", moved)
    report = ingest_sheet(tmp_path / "moved.csv", plan)
    assert report.status == "accepted", repr(report)
    assert len(report.accepted) == sum(len(v) for v in good_readings().values())


def test_formula_read_as_saved_value(plan, blanks, tmp_path):
    def formula(wb):
        ws = wb["Coupon readings"]
        ws.cell(xlsx_row(wb, "B01-W1"), xlsx_col(wb, "mass_final_g")).value = "=20+9.5"

    sheet = fill_xlsx(blanks[1], tmp_path / "f.xlsx", {"B01-W1": {"mass_initial_g": 30.0}},
                      edit=formula)
    from openpyxl import load_workbook

    wb = load_workbook(sheet)
    ref = wb["Coupon readings"].cell(xlsx_row(wb, "B01-W1"), xlsx_col(wb, "mass_final_g"))
    set_saved_formula(sheet, ref.coordinate, "20+9.5", "29.5")
    report = ingest_sheet(sheet, plan)
    assert report.status == "accepted", repr(report)
    acc = report.accepted.set_index("field")
    assert acc.loc["mass_final_g", "value"] == 29.5


def test_mass_gain_allowed_with_flag(plan, blanks, tmp_path):
    sheet = fill_csv(blanks[0], tmp_path / "gain.csv",
                     {"B01-R1": {"mass_initial_g": 25.0, "mass_final_g": 25.4}})
    assert ingest_sheet(sheet, plan).problems.checks() == ["mass_gain"]
    report = ingest_sheet(sheet, plan, allow_mass_gain=True)
    assert report.status == "accepted"
    assert set(report.accepted["field"]) == {"mass_initial_g", "mass_final_g"}


def test_corrections_add_revisions_same_file_changes_nothing(plan, blanks, tmp_path):
    first = fill_csv(blanks[0], tmp_path / "day1.csv", good_readings())
    assert ingest_sheet(first, plan).status == "accepted"
    again = ingest_sheet(first, plan)
    assert again.status == "already_ingested" and "already read in" in again.message
    corrected = good_readings()
    corrected["B01-R1"]["mass_final_g"] = 24.5
    corrected["B01-W1"]["operator"] = "CD"
    second = fill_csv(blanks[0], tmp_path / "day1-corrected.csv", corrected)
    report = ingest_sheet(second, plan)
    assert report.status == "accepted"
    assert sorted(report.accepted[["coupon", "field", "revision"]].values.tolist()) == [
        ["B01-R1", "mass_final_g", 2], ["B01-W1", "operator", 2]]
    assert report.unchanged == sum(len(v) for v in good_readings().values()) - 2
    log = RecordLog.for_folder(plan.trial.folder)
    hist = log.history("B01-R1")
    rows = hist[hist["field"] == "mass_final_g"]
    assert rows[["value", "revision", "source"]].values.tolist() == [
        [24.75, 1, "day1.csv"], [24.5, 2, "day1-corrected.csv"]]
    assert log.current_values(plan).set_index("coupon").loc["B01-R1", "mass_final_g"] == 24.5


def test_blank_sheet_stores_nothing(plan, blanks):
    report = ingest_sheet(blanks[0], plan)
    assert report.status == "no_change" and "no readings" in report.message
    assert RecordLog.for_folder(plan.trial.folder).count() == 0


def test_inspection_sheet_round_trip(plan, tmp_path):
    blank = export_csv(plan, tmp_path / "insp.csv", layout="inspections")
    grid = _csv_grid(blank)
    names = grid[3]  # below the stamp, the caution line and the headings
    for row in grid[4:]:
        if row[names.index("coupon")] == "B01-R1":
            i = int(row[names.index("inspection")])
            row[names.index("elapsed_h")] = ["2.1", "23.5"][i - 1]
            row[names.index("coverage_pct")] = ["40", "5"][i - 1]
    _write_grid(tmp_path / "insp-filled.csv", grid)
    report = ingest_sheet(tmp_path / "insp-filled.csv", plan)
    assert report.status == "accepted", repr(report)
    tc = RecordLog.for_folder(plan.trial.folder).current_timecourse()
    got = sorted(tc[["inspection", "field", "value"]].values.tolist())
    assert got == [[1, "coverage_pct", 40.0], [1, "elapsed_h", 2.1],
                   [2, "coverage_pct", 5.0], [2, "elapsed_h", 23.5]]


def test_report_faces(plan, blanks, tmp_path):
    bad = fill_csv(blanks[0], tmp_path / "bad.csv",
                   {"B01-R1": {"mass_initial_g": "x", "notes": "<b>bold</b>"}})
    report = ingest_sheet(bad, plan)
    assert "wrong_type" in report._repr_html_() and "Refused" in report._repr_html_()
    assert "refused" in repr(report)
    data = json.loads(json.dumps(report.to_dict()))
    assert data["status"] == "refused"
    assert data["problems"][0]["check"] == "wrong_type"
    with pytest.raises(SheetError, match="not a number"):
        report.raise_if_refused()
    good = fill_csv(blanks[0], tmp_path / "good.csv",
                    {"B01-R1": {"mass_initial_g": 20.0, "notes": "<b>x</b>"}})
    html = ingest_sheet(good, plan)._repr_html_()
    assert "&lt;b&gt;x&lt;/b&gt;" in html and "<b>x</b>" not in html


def test_xlsx_with_both_tabs_filled(plan, blanks, tmp_path):
    from trialkit.records.sheets.export_xlsx import FIRST_DATA_ROW

    def inspections(wb):
        ws = wb["Inspections"]
        col = {name: xlsx_col(wb, name, "Inspections")
               for name in ("coupon", "inspection", "elapsed_h", "coverage_pct", "notes")}
        for r in range(FIRST_DATA_ROW, ws.max_row + 1):
            if ws.cell(r, col["coupon"]).value == "B02-R1":
                i = ws.cell(r, col["inspection"]).value
                ws.cell(r, col["elapsed_h"]).value = [2.0, 24.25][i - 1]
                ws.cell(r, col["coverage_pct"]).value = [55.0, 10.0][i - 1]
                ws.cell(r, col["notes"]).value = "@ edge"

    sheet = fill_xlsx(blanks[1], tmp_path / "both.xlsx", good_readings(), edit=inspections)
    report = ingest_sheet(sheet, plan)
    assert report.status == "accepted", repr(report)
    log = RecordLog.for_folder(plan.trial.folder)
    tc = log.current_timecourse()
    assert sorted(tc[["coupon", "inspection", "field", "value"]].values.tolist()) == [
        ["B02-R1", 1, "coverage_pct", 55.0], ["B02-R1", 1, "elapsed_h", 2.0],
        ["B02-R1", 1, "notes", "@ edge"], ["B02-R1", 2, "coverage_pct", 10.0],
        ["B02-R1", 2, "elapsed_h", 24.25], ["B02-R1", 2, "notes", "@ edge"]]
    assert log.current_values(plan).set_index("coupon").loc["B01-R1", "mass_initial_g"] == 25.125
