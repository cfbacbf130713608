"""``trialkit ingest``: exit codes, text and JSON output (real command, tmp_path files)."""

from __future__ import annotations

import json

from malformed_sheets.make_corpus import fill_csv, good_readings, make_test_plan

from trialkit.records.log import RecordLog
from trialkit.records.sheets import export_csv


def prepare(tmp_path):
    plan = make_test_plan(tmp_path / "trial")
    blank = export_csv(plan, tmp_path / "blank.csv")
    return plan, blank


def test_accepted_then_already_ingested(cli, tmp_path):
    plan, blank = prepare(tmp_path)
    sheet = fill_csv(blank, tmp_path / "day1.csv", good_readings())
    res = cli("ingest", str(sheet), "--trial", str(plan.trial.folder))
    assert res.returncode == 0, res.stderr
    n = sum(len(v) for v in good_readings().values())
    assert f"stored {n} values" in res.stdout
    res = cli("ingest", str(sheet), "--trial", str(plan.trial.folder), "--json")
    assert res.returncode == 0
    data = json.loads(res.stdout)
    assert data["status"] == "already_ingested" and data["accepted"] == []
    assert RecordLog.for_folder(plan.trial.folder).count() == n


def test_refused_exit_code_and_all_problems(cli, tmp_path):
    plan, blank = prepare(tmp_path)
    bad = {"B01-R1": {"mass_initial_g": 25.0, "mass_final_g": 25.5, "bath_ph": 16.0}}
    sheet = fill_csv(blank, tmp_path / "bad.csv", bad)
    res = cli("ingest", str(sheet), "--trial", str(plan.trial.folder), "--json")
    assert res.returncode == 1
    data = json.loads(res.stdout)
    assert data["status"] == "refused"
    assert sorted(p["check"] for p in data["problems"]) == ["mass_gain", "out_of_range"]
    text = cli("ingest", str(sheet), "--trial", str(plan.trial.folder))
    assert text.returncode == 1
    assert "bad.csv" in text.stdout and "--allow-mass-gain" in text.stdout
    # a refused first sheet leaves no record log behind (an empty log would read as
    # "recorded, but every value missing")
    assert not list(plan.trial.folder.glob("record-log.sqlite*"))
    fixed = fill_csv(blank, tmp_path / "fixed.csv",
                     {"B01-R1": {"mass_initial_g": 25.0, "mass_final_g": 25.5}})
    res = cli("ingest", str(fixed), "--trial", str(plan.trial.folder), "--allow-mass-gain")
    assert res.returncode == 0, res.stdout + res.stderr


def test_missing_sheet_file(cli, tmp_path):
    plan, _ = prepare(tmp_path)
    res = cli("ingest", str(tmp_path / "nope.csv"), "--trial", str(plan.trial.folder))
    assert res.returncode == 2
    assert "nope.csv" in res.stderr and "Traceback" not in res.stderr


def test_trial_found_from_the_sheet_or_the_current_folder(cli, tmp_path):
    # issue 17 (where files go): a sheet filled in TRIAL/sheets/ belongs to TRIAL, and a
    # command run inside the trial folder needs no --trial
    plan, blank = prepare(tmp_path)
    folder = plan.trial.folder
    (folder / "sheets").mkdir(exist_ok=True)
    sheet = fill_csv(blank, folder / "sheets" / "day1.csv", good_readings())
    res = cli("ingest", str(sheet), cwd=tmp_path)
    assert res.returncode == 0, res.stderr
    n = sum(len(v) for v in good_readings().values())
    assert RecordLog.for_folder(folder).count() == n
    res = cli("ingest", "sheets/day1.csv", "--json", cwd=folder)
    assert res.returncode == 0 and json.loads(res.stdout)["status"] == "already_ingested"
    res = cli("verify", cwd=folder)
    assert res.returncode == 0 and "intact" in res.stdout, res.stdout + res.stderr


def test_no_trial_anywhere_is_a_usage_error_naming_the_option(cli, tmp_path):
    plan, blank = prepare(tmp_path)
    stray = tmp_path / "elsewhere"
    stray.mkdir()
    sheet = fill_csv(blank, stray / "day1.csv", good_readings())
    res = cli("ingest", str(sheet), cwd=stray)
    assert res.returncode == 2 and "--trial DIR" in res.stderr and "Traceback" not in res.stderr
    assert not (stray / "record-log.sqlite").exists()
