"""CSV recording sheets."""

from __future__ import annotations

import csv
import io

import pytest
from malformed_sheets.make_corpus import make_test_plan

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
    lay = coupon_layout(plan)
    assert g[1] == [c.heading for c in lay.columns]
    assert g[2] == [c.name for c in lay.columns]
    assert len(g) == 3 + len(plan.table)
    names = g[2]
    rows = [dict(zip(names, r, strict=True)) for r in g[3:]]
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
    names = g[2]
    control = [dict(zip(names, r, strict=True)) for r in g[3:]
               if r[names.index("point")] == "control"]
    assert len(control) == 3
    assert all(r["chelator"] == "" and r["surfactant"] == "" for r in control)


def test_inspection_sheet(plan, tmp_path):
    g = grid(export_csv(plan, tmp_path / "i.csv", layout="inspections"))
    assert "layout=inspections" in g[0]
    assert g[2][:6] == ["run", "bath", "coupon", "block", "inspection", "planned_h"]
    assert len(g) == 3 + 2 * len(plan.table)


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
