"""``trialkit sheet``: the real command on a trial folder in tmp_path."""

from __future__ import annotations

import json

import pytest
from malformed_sheets.make_corpus import write_trial
from openpyxl import load_workbook

from trialkit.plan import load_plan


@pytest.mark.parametrize("fmt", ["xlsx", "csv", "html"])
def test_sheet_each_format(cli, tmp_path, fmt):
    folder = write_trial(tmp_path / "trial")
    res = cli("sheet", str(folder), "--format", fmt, "--json")
    assert res.returncode == 0, res.stderr
    out = json.loads(res.stdout)
    plan = load_plan(folder)
    assert out["fingerprint"] == plan.fingerprint
    files = [p for p in out["files"]]
    expected = [str(folder / f"recording-sheet.{fmt}")]
    if fmt == "csv":  # the test trial plans inspections: a second CSV
        expected.append(str(folder / "recording-sheet-inspections.csv"))
    assert files == expected
    text_or_book = folder / f"recording-sheet.{fmt}"
    if fmt == "xlsx":
        assert "Coupon readings" in load_workbook(text_or_book).sheetnames
    else:
        assert plan.fingerprint in text_or_book.read_text(encoding="utf-8-sig")


def test_sheet_out_option_and_starter_trial(cli, tmp_path):
    assert cli("new", str(tmp_path / "starter")).returncode == 0
    out = tmp_path / "bench.html"
    res = cli("sheet", str(tmp_path / "starter"), "--format", "html", "--out", str(out),
              "--paper", "Letter")
    assert res.returncode == 0, res.stderr
    page = out.read_text(encoding="utf-8")
    assert "letter landscape" in page
    assert load_plan(tmp_path / "starter").fingerprint in res.stdout


def test_sheet_bad_folder(cli, tmp_path):
    res = cli("sheet", str(tmp_path / "nothing-here"))
    assert res.returncode == 2
    assert "trial" in res.stderr and "Traceback" not in res.stderr
