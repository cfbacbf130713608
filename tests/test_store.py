"""The record log: append-only storage, revisions, crash safety and concurrent ingests."""

from __future__ import annotations

import hashlib
import os
import signal
import sqlite3
import subprocess
import sys
import time
from pathlib import Path

import pandas as pd
import pytest
from malformed_sheets.make_corpus import fill_csv, good_readings, make_test_plan

from trialkit.exceptions import RecordLogError
from trialkit.records.chain import verify_log
from trialkit.records.log import HISTORY_COLUMNS, READY_HOOK, SLEEP_HOOK, RecordLog
from trialkit.records.sheets import export_csv, ingest_sheet

REPO = Path(__file__).resolve().parents[1]
HELPERS = Path(__file__).resolve().parent / "malformed_sheets"


@pytest.fixture
def log(tmp_path):
    return RecordLog(tmp_path / "log.sqlite")


def add(log, readings, name="a.csv", sha=None, fp="fp1"):
    return log.add_readings(readings, source=name, sha256=sha or name * 8, fingerprint=fp)


def test_wal_mode_and_schema(log):
    con = sqlite3.connect(log.path)
    assert con.execute("PRAGMA journal_mode").fetchone()[0] == "wal"
    tables = {r[0] for r in con.execute("SELECT name FROM sqlite_master WHERE type='table'")}
    assert tables == {"log_info", "ingests", "readings", "chain"}  # chain: records.chain


def test_revisions_and_unchanged_values(log):
    r1 = add(log, [("C1", 0, "mass_initial_g", 25.0), ("C1", 0, "operator", "AB")])
    assert r1.status == "accepted" and r1.added["revision"].tolist() == [1, 1]
    r2 = add(log, [("C1", 0, "mass_initial_g", 25.5), ("C1", 0, "operator", "AB")], "b.csv")
    assert r2.status == "accepted" and r2.unchanged == 1
    assert r2.added[["field", "value", "revision"]].values.tolist() == [
        ["mass_initial_g", 25.5, 2]]
    r3 = add(log, [("C1", 0, "mass_initial_g", 25.5)], "c.csv")
    assert r3.status == "no_change" and r3.unchanged == 1
    hist = log.history()
    assert list(hist.columns) == list(HISTORY_COLUMNS)
    assert hist[["field", "value", "revision", "source"]].values.tolist() == [
        ["mass_initial_g", 25.0, 1, "a.csv"], ["mass_initial_g", 25.5, 2, "b.csv"],
        ["operator", "AB", 1, "a.csv"]]


def test_same_file_twice_changes_nothing(log):
    add(log, [("C1", 0, "mass_initial_g", 25.0)], sha="f" * 64)
    again = add(log, [("C1", 0, "mass_initial_g", 99.0)], "renamed.csv", sha="f" * 64)
    assert again.status == "already_ingested" and len(again.added) == 0
    assert log.history()["value"].tolist() == [25.0]


def test_log_is_append_only(log):
    add(log, [("C1", 0, "mass_initial_g", 25.0)])
    con = sqlite3.connect(log.path)
    with pytest.raises(sqlite3.IntegrityError, match="append-only"):
        con.execute("UPDATE readings SET value_num = 1")
    with pytest.raises(sqlite3.IntegrityError, match="append-only"):
        con.execute("DELETE FROM readings")
    with pytest.raises(sqlite3.IntegrityError, match="append-only"):
        con.execute("DELETE FROM ingests")
    assert log.count() == 1


def test_other_plan_refused(log):
    add(log, [("C1", 0, "mass_initial_g", 25.0)], fp="aaaa")
    with pytest.raises(RecordLogError, match="another plan|holds readings of plan aaaa"):
        add(log, [("C1", 0, "mass_initial_g", 26.0)], "b.csv", fp="bbbb")
    assert log.count() == 1


def test_not_a_database(tmp_path):
    bad = tmp_path / "log.sqlite"
    bad.write_bytes(b"this is not sqlite" * 100)
    with pytest.raises(RecordLogError, match="cannot read the record log .* damaged or not a "
                       "trialkit record log. Nothing was changed"):
        RecordLog(bad)


def test_current_values_wide_with_plan(tmp_path):
    plan = make_test_plan(tmp_path / "t")
    log = RecordLog.for_folder(plan.trial.folder)
    empty = log.current_values(plan)
    assert len(empty) == len(plan.table)
    assert list(empty.columns[:10]) == list(plan.table.columns)
    assert empty["mass_initial_g"].dtype == float
    add(log, [("B01-R1", 0, "mass_initial_g", 25.0), ("B01-R1", 0, "mass_final_g", 24.0),
              ("B01-R1", 0, "immersion_start", "2026-12-01T09:30:00")], fp=plan.fingerprint)
    add(log, [("B01-R1", 0, "mass_final_g", 24.2)], "b.csv", fp=plan.fingerprint)
    cur = log.current_values(plan).set_index("coupon")
    assert cur.loc["B01-R1", "mass_final_g"] == 24.2
    assert cur.loc["B01-R1", "immersion_start"] == pd.Timestamp("2026-12-01 09:30")
    assert cur["mass_final_g"].isna().sum() == len(plan.table) - 1
    only = log.current_values(fields=["mass_final_g"])
    assert only.values.tolist() == [["B01-R1", 24.2]]


def test_history_of_one_coupon(log):
    add(log, [("C1", 0, "mass_initial_g", 25.0), ("C2", 0, "mass_initial_g", 26.0)])
    assert log.history("C2")["value"].tolist() == [26.0]
    assert log.history("C9").empty


# -- fault and concurrency tests (real processes) ----------------------------------------
INGEST_SCRIPT = """
import sys
sys.path.insert(0, {helpers!r})
from pathlib import Path
from make_corpus import make_test_plan
from trialkit.records.sheets import ingest_sheet
plan = make_test_plan(Path({folder!r}))
report = ingest_sheet({sheet!r}, plan)
print(report.status)
sys.exit(0 if report.ok else 1)
"""


def start_ingest(folder, sheet, **env_extra):
    env = dict(os.environ)
    env["PYTHONPATH"] = str(REPO)
    env.update(env_extra)
    code = INGEST_SCRIPT.format(helpers=str(HELPERS), folder=str(folder), sheet=str(sheet))
    return subprocess.Popen([sys.executable, "-c", code], env=env, stdout=subprocess.PIPE,
                            stderr=subprocess.PIPE, text=True)


def wait_for(path, proc, timeout=60.0):
    deadline = time.monotonic() + timeout
    while not path.exists():
        if proc.poll() is not None:
            raise AssertionError(f"ingest ended early: {proc.communicate()}")
        if time.monotonic() > deadline:
            raise AssertionError("the ingest never reached the transaction")
        time.sleep(0.05)


@pytest.fixture
def filled(tmp_path):
    plan = make_test_plan(tmp_path / "trial")
    blank = export_csv(plan, tmp_path / "blank.csv")
    return plan, fill_csv(blank, tmp_path / "filled.csv", good_readings())


def test_kill_mid_transaction_leaves_all_or_none(filled, tmp_path):
    plan, sheet = filled
    folder = plan.trial.folder
    n_values = sum(len(v) for v in good_readings().values())
    log = RecordLog.for_folder(folder)
    for attempt in range(3):
        ready = tmp_path / f"ready{attempt}"
        proc = start_ingest(folder, sheet, **{SLEEP_HOOK: "60", READY_HOOK: str(ready)})
        wait_for(ready, proc)  # half of the values are written, not committed
        proc.send_signal(signal.SIGKILL)
        proc.wait(timeout=30)
        assert proc.returncode == -signal.SIGKILL
        con = sqlite3.connect(log.path)
        assert con.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
        con.close()
        assert log.count() == 0  # none of the sheet
        assert log.ingest_of(hashlib.sha256(sheet.read_bytes()).hexdigest()) is None
        assert verify_log(log.path).ok  # the hash chain and its head file agree
    report = ingest_sheet(sheet, plan)  # the same sheet again, not interrupted
    assert report.status == "accepted"
    assert log.count() == n_values  # all of the sheet
    assert verify_log(log.path).ok


def test_two_ingests_at_once_lose_nothing(filled, tmp_path):
    plan, _ = filled
    folder = plan.trial.folder
    blank = tmp_path / "blank.csv"
    a = fill_csv(blank, tmp_path / "a.csv", {"B01-R1": {"mass_initial_g": 25.0},
                                            "B02-R1": {"mass_initial_g": 22.0}})
    b = fill_csv(blank, tmp_path / "b.csv", {"B01-R1": {"mass_initial_g": 26.0},
                                            "B03-R1": {"mass_initial_g": 23.0}})
    ready = tmp_path / "ready"
    first = start_ingest(folder, a, **{SLEEP_HOOK: "5", READY_HOOK: str(ready)})
    wait_for(ready, first)  # first holds the write lock now
    second = start_ingest(folder, b)  # starts while the first is inside its transaction
    for proc in (first, second):
        out, err = proc.communicate(timeout=120)
        assert proc.returncode == 0, err
        assert out.strip() == "accepted"
    hist = RecordLog.for_folder(folder).history()
    rows = hist[["coupon", "value", "revision", "source"]].values.tolist()
    assert rows == [["B01-R1", 25.0, 1, "a.csv"], ["B01-R1", 26.0, 2, "b.csv"],
                    ["B02-R1", 22.0, 1, "a.csv"], ["B03-R1", 23.0, 1, "b.csv"]]
    result = verify_log(folder / "record-log.sqlite")
    assert result.ok and result.ingests == 2 and not result.notes
