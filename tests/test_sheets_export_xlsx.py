"""XLSX recording workbooks: tabs, hidden stamp, locks, validation, escaping."""

from __future__ import annotations

import pytest
from malformed_sheets.make_corpus import make_test_plan
from openpyxl import load_workbook

from trialkit.records.sheets.export_xlsx import FIRST_DATA_ROW, HEADING_ROW, NAME_ROW, export_xlsx
from trialkit.records.sheets.layout import META_TAB, coupon_layout


@pytest.fixture
def book(tmp_path):
    plan = make_test_plan(tmp_path / "trial", title="=HYPERLINK(\"http://x\") invented trial")
    path = export_xlsx(plan, tmp_path / "s.xlsx")
    return plan, load_workbook(path)


def test_tabs_and_hidden_stamp(book):
    plan, wb = book
    assert wb.sheetnames == ["Coupon readings", "Inspections", "How to fill in", META_TAB]
    meta_ws = wb[META_TAB]
    assert meta_ws.sheet_state == "hidden"
    meta = {r[0]: r[1] for r in meta_ws.iter_rows(values_only=True)}
    assert meta["fingerprint"] == plan.fingerprint
    assert meta["seed"] == str(plan.seed)
    assert meta["layout"] == "coupons,inspections"
    assert plan.fingerprint in wb.properties.keywords


def test_visible_title_stamp_and_headings(book):
    plan, wb = book
    ws = wb["Coupon readings"]
    assert ws["A1"].value == plan.trial.title  # same plain text, not a formula
    assert ws["A1"].data_type == "s"
    assert plan.fingerprint in ws["A2"].value and "Seed 4242" in ws["A2"].value
    lay = coupon_layout(plan)
    assert [c.value for c in ws[HEADING_ROW]] == [c.heading for c in lay.columns]
    assert [c.value for c in ws[NAME_ROW]] == [c.name for c in lay.columns]
    assert ws.max_row == FIRST_DATA_ROW + len(plan.table) - 1


def test_plan_columns_locked_entry_columns_open(book):
    plan, wb = book
    ws = wb["Coupon readings"]
    assert ws.protection.sheet
    names = [c.value for c in ws[NAME_ROW]]
    bath = ws.cell(FIRST_DATA_ROW, names.index("bath") + 1)
    mass = ws.cell(FIRST_DATA_ROW, names.index("mass_initial_g") + 1)
    assert bath.protection.locked and bath.value.startswith("B")
    assert not mass.protection.locked and mass.value is None


def test_data_validation_ranges_and_lists(book):
    plan, wb = book
    ws = wb["Coupon readings"]
    names = [c.value for c in ws[NAME_ROW]]
    by_col = {}
    for dv in ws.data_validations.dataValidation:
        for rng in sorted(dv.sqref.ranges, key=str):
            by_col[names[rng.min_col - 1]] = dv
    assert by_col["bath_ph"].type == "decimal"
    assert (float(by_col["bath_ph"].formula1), float(by_col["bath_ph"].formula2)) == (0, 14)
    assert float(by_col["coverage_after_pct"].formula2) == 100.0
    assert by_col["surface_finish"].type == "list"
    assert by_col["surface_finish"].formula1 == '"bright,grey,dark,pitted"'
    (rng,) = by_col["bath_ph"].sqref.ranges
    assert (rng.min_row, rng.max_row) == (FIRST_DATA_ROW, FIRST_DATA_ROW + 14)


def test_instructions_list_every_entry_field(book):
    plan, wb = book
    text = [c for row in wb["How to fill in"].iter_rows(values_only=True) for c in row if c]
    for f in coupon_layout(plan).entry_columns:
        assert f.name in text
    assert any("hydrogen" in str(t) for t in text)
