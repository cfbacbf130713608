"""``trialkit sheet``: the real command on a trial folder in tmp_path."""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from malformed_sheets.make_corpus import write_trial
from openpyxl import load_workbook

from trialkit.planning.plan import load_plan


@pytest.mark.parametrize("fmt", ["xlsx", "csv", "html"])
def test_sheet_each_format(cli, tmp_path, fmt):
    folder = write_trial(tmp_path / "trial")
    res = cli("sheet", str(folder), "--format", fmt, "--json")
    assert res.returncode == 0, res.stderr
    out = json.loads(res.stdout)
    plan = load_plan(folder)
    assert out["fingerprint"] == plan.fingerprint
    files = [p for p in out["files"]]
    # issue 17: the same names and place as the demo's sheets (trialkit.demo.run)
    sheets = folder / "sheets"
    expected = [str(sheets / f"recording_sheet.{fmt}")]
    if fmt == "csv":  # the test trial plans inspections: a second CSV
        expected = [str(sheets / "recording_sheet_coupons.csv"),
                    str(sheets / "recording_sheet_inspections.csv")]
    assert files == expected
    text_or_book = Path(expected[0])
    if fmt == "xlsx":
        assert "Coupon readings" in load_workbook(text_or_book).sheetnames
    else:
        assert plan.fingerprint in text_or_book.read_text(encoding="utf-8-sig")


def test_starter_trial_whole_loop(cli, tmp_path):
    """new -> sheet --out -> fill -> ingest -> corrected copy -> history (invented values)."""
    from malformed_sheets.make_corpus import fill_csv

    folder = tmp_path / "starter"
    assert cli("new", str(folder)).returncode == 0
    blank = tmp_path / "bench.csv"
    res = cli("sheet", str(folder), "--format", "csv", "--out", str(blank))
    assert res.returncode == 0, res.stderr
    plan = load_plan(folder)
    assert plan.fingerprint in res.stdout
    coupon = plan.table.loc[plan.table["point"] != "control", "coupon"].iloc[0]
    first = fill_csv(blank, tmp_path / "day1.csv",
                     {coupon: {"mass_initial_g": 25.0, "mass_final_g": 24.6}})
    fixed = fill_csv(blank, tmp_path / "day1-fixed.csv",
                     {coupon: {"mass_initial_g": 25.0, "mass_final_g": 24.4}})
    for sheet in (first, fixed):
        res = cli("ingest", str(sheet), "--trial", str(folder))
        assert res.returncode == 0, res.stdout + res.stderr
    res = cli("history", str(folder), "--json")
    rows = [(r["field"], r["value"], r["revision"]) for r in json.loads(res.stdout)]
    assert rows == [("mass_final_g", 24.6, 1), ("mass_final_g", 24.4, 2),
                    ("mass_initial_g", 25.0, 1)]


def test_sheet_bad_folder(cli, tmp_path):
    res = cli("sheet", str(tmp_path / "nothing-here"))
    assert res.returncode == 2
    assert "trial" in res.stderr and "Traceback" not in res.stderr


def test_sheet_out_folder_writes_inside_and_links_are_refused(tmp_path, capsys):
    """--out naming a folder puts the sheet inside it; a symbolic link is never written
    through (its target keeps its bytes)."""
    from trialkit.cli import main

    assert main(["new", str(tmp_path / "t")]) == 0
    out = tmp_path / "sheets"
    out.mkdir()
    assert main(["sheet", str(tmp_path / "t"), "--format", "csv", "--out", str(out)]) == 0
    assert (out / "recording_sheet.csv").exists()
    target = tmp_path / "precious.txt"
    target.write_text("keep me")
    link = tmp_path / "link.csv"
    link.symlink_to(target)
    capsys.readouterr()
    assert main(["sheet", str(tmp_path / "t"), "--format", "csv", "--out", str(link)]) == 2
    assert "is a symbolic link" in capsys.readouterr().err
    assert target.read_text() == "keep me"


def test_every_command_that_works_from_a_plan_checks_the_metal(cli, tmp_path):
    # issue 14: a coupon metal with no density (ASTM G1 Table X1.1 lists the densities) is
    # refused before bench work by every command that reads the plan, not only by 'plan'
    extra = ('\n[coupons]\nshape = "plate"\nlength = 50\nwidth = 25\nthickness = 2\n'
             'metal = "unobtainium"\n\n[[response]]\nname = "attack"\n'
             'measure = "corrosion_rate_mm_per_y"\naim = "lower"\n')
    folder = write_trial(tmp_path / "trial", extra=extra)
    for args in (["plan", str(folder)], ["sheet", str(folder)], ["evaluate", str(folder)]):
        res = cli(*args)
        assert res.returncode == 1, (args, res.stdout, res.stderr)
        assert "coupons.metal" in res.stderr and "unobtainium" in res.stderr, args
        assert "Traceback" not in res.stderr
    assert not (folder / "sheets").exists() and not (folder / "plan.csv").exists()
