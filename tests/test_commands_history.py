"""``trialkit history``: revisions after a corrected sheet (real command)."""

from __future__ import annotations

import hashlib
import json

from malformed_sheets.make_corpus import fill_csv, good_readings, make_test_plan

from trialkit.records.sheets import export_csv, ingest_sheet


def test_history_shows_corrections(cli, tmp_path):
    plan = make_test_plan(tmp_path / "trial")
    blank = export_csv(plan, tmp_path / "blank.csv")
    first = fill_csv(blank, tmp_path / "day1.csv", good_readings())
    corrected = good_readings()
    corrected["B01-R1"]["mass_final_g"] = 24.5
    second = fill_csv(blank, tmp_path / "day1-fixed.csv", corrected)
    for sheet in (first, second):
        assert ingest_sheet(sheet, plan).ok
    res = cli("history", str(plan.trial.folder), "--coupon", "B01-R1", "--json")
    assert res.returncode == 0, res.stderr
    rows = json.loads(res.stdout)
    keys = {"coupon", "inspection", "field", "value", "revision", "source", "sha256",
            "ingested_at"}
    assert all(set(r) == keys for r in rows)
    assert {r["coupon"] for r in rows} == {"B01-R1"}
    mass = [r for r in rows if r["field"] == "mass_final_g"]
    assert [(r["value"], r["revision"], r["source"]) for r in mass] == [
        (24.75, 1, "day1.csv"), (24.5, 2, "day1-fixed.csv")]
    assert mass[1]["sha256"] == hashlib.sha256(second.read_bytes()).hexdigest()
    assert len(rows) == len(good_readings()["B01-R1"]) + 1
    text = cli("history", str(plan.trial.folder))
    assert text.returncode == 0
    assert "day1-fixed.csv" in text.stdout and "B02-R2" in text.stdout


def test_history_without_log(cli, tmp_path):
    plan = make_test_plan(tmp_path / "trial")
    res = cli("history", str(plan.trial.folder))
    assert res.returncode == 2
    assert "no record log" in res.stderr
    assert not (plan.trial.folder / "record-log.sqlite").exists()
