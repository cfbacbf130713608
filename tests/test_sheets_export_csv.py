"""CSV recording sheets."""

from __future__ import annotations

import csv
import io

import pytest
from malformed_sheets.make_corpus import make_test_plan

from trialkit.chemistry.cautions import CSV_CAUTION
from trialkit.problems import ProblemReport
from trialkit.records.sheets.export_csv import CSV_STAMP, export_csv
from trialkit.records.sheets.layout import coupon_layout
from trialkit.records.sheets.readers import read_sheet_file


@pytest.fixture
def plan(tmp_path):
    return make_test_plan(tmp_path / "trial")


def grid(path):
    return list(csv.reader(io.StringIO(path.read_text(encoding="utf-8-sig"), newline="")))


def test_layout_of_the_file(plan, tmp_path):
    path = export_csv(plan, tmp_path / "s.csv")
    assert path.read_bytes().startswith(b"\xef\xbb\xbf")  # BOM: spreadsheets read UTF-8
    g = grid(path)
    assert g[0][0] == CSV_STAMP
    stamp = dict(c.split("=", 1) for c in g[0][1:])
    assert stamp == {"version": "1", "layout": "coupons", "fingerprint": plan.fingerprint,
                     "seed": "4242", "title": plan.trial.title}
    # issue 17: the caution line, one cell, below the stamp
    assert g[1] == [CSV_CAUTION] and "safety data sheets" in g[1][0]
    assert "," not in CSV_CAUTION and ";" not in CSV_CAUTION
    lay = coupon_layout(plan)
    assert g[2] == [c.heading for c in lay.columns]
    assert g[3] == [c.name for c in lay.columns]
    assert len(g) == 4 + len(plan.table)
    names = g[3]
    rows = [dict(zip(names, r, strict=True)) for r in g[4:]]
    ordered = plan.table.sort_values(["run", "coupon"])
    assert [r["coupon"] for r in rows] == ordered["coupon"].tolist()
    assert rows[0]["run"] == "1"
    factorial = next(i for i, r in enumerate(rows) if r["point"] == "factorial")
    want = ordered.iloc[factorial]
    assert float(rows[factorial]["chelator"]) == want["chelator"]
    assert rows[factorial]["surfactant"] == want["surfactant"]
    assert all(r["mass_initial_g"] == "" for r in rows)


def test_control_bath_has_empty_factor_cells(plan, tmp_path):
    g = grid(export_csv(plan, tmp_path / "s.csv"))
    names = g[3]
    control = [dict(zip(names, r, strict=True)) for r in g[4:]
               if r[names.index("point")] == "control"]
    assert len(control) == 3
    assert all(r["chelator"] == "" and r["surfactant"] == "" for r in control)


def test_inspection_sheet(plan, tmp_path):
    g = grid(export_csv(plan, tmp_path / "i.csv", layout="inspections"))
    assert "layout=inspections" in g[0]
    assert g[1] == [CSV_CAUTION]
    assert g[3][:6] == ["run", "bath", "coupon", "block", "inspection", "planned_h"]
    assert len(g) == 4 + 2 * len(plan.table)


def test_user_title_with_formula_start_is_escaped(tmp_path):
    plan = make_test_plan(tmp_path / "t", title="=cmd|' /C calc'!A0")
    path = export_csv(plan, tmp_path / "s.csv")
    g = grid(path)
    assert "title='=cmd|' /C calc'!A0" in g[0]
    assert all(not c.startswith("=") for row in g for c in row)
    problems = ProblemReport(path.name)
    (raw,) = read_sheet_file(path, path.read_bytes(), problems)
    assert not problems
    assert raw.meta["title"] == "=cmd|' /C calc'!A0"  # the same plain text comes back


def test_the_caution_line_is_read_past(plan, tmp_path):
    # issue 17: ingest passes over the caution line; the coupons start on line 5
    path = export_csv(plan, tmp_path / "s.csv")
    problems = ProblemReport(path.name)
    (raw,) = read_sheet_file(path, path.read_bytes(), problems)
    assert not problems
    assert raw.headings == [c.heading for c in coupon_layout(plan).columns]
    assert len(raw.rows) == len(plan.table) and raw.rows[0][0] == 5
    assert not any("CAUTION" in str(v) for _, values in raw.rows for v in values)
