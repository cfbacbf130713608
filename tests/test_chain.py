"""Tamper evidence of the record log (trialkit/records/chain.py, ``trialkit verify``).

Each tamper case edits the log with plain sqlite3, as someone working outside trialkit
would, and checks that the verify command names the first broken link.  The readings are
invented for testing.
"""

from __future__ import annotations

import json
import shutil
import sqlite3
from pathlib import Path

import pytest

from trialkit.cli import main
from trialkit.records.chain import GENESIS, head_path, verify_log
from trialkit.records.log import RecordLog


def add(log, readings, name):
    return log.add_readings(readings, source=name, sha256=name * 16, fingerprint="fp1")


@pytest.fixture
def log(tmp_path):
    log = RecordLog(tmp_path / "record-log.sqlite")
    add(log, [("B01-R1", 0, "mass_initial_g", 25.0), ("B01-R1", 0, "operator", "MT")], "a")
    add(log, [("B01-R1", 0, "mass_initial_g", 25.5), ("B02-R1", 0, "mass_initial_g", 24.0)],
        "b")
    add(log, [("B02-R1", 0, "mass_final_g", 23.9)], "c")
    return log


def verify(folder, capsys):
    code = main(["verify", str(folder)])
    return code, capsys.readouterr().out


def test_intact_log_verifies_with_one_line(log, capsys):
    code, out = verify(log.path.parent, capsys)
    assert code == 0
    assert out.count("\n") == 1 and "intact: 3 ingest(s), 5 value(s)" in out
    head = json.loads(head_path(log.path).read_text())
    assert head["head"] == verify_log(log.path).head and head["ingests"] == 3
    assert "pending" not in head


def test_empty_log_verifies(tmp_path, capsys):
    RecordLog(tmp_path / "record-log.sqlite")
    result = verify_log(tmp_path / "record-log.sqlite")
    assert result.ok and result.head == GENESIS and result.ingests == 0


def test_forged_insert_is_detected(log, capsys):
    con = sqlite3.connect(log.path)
    con.execute("INSERT INTO readings (ingest_id, coupon, inspection, field, value_num, "
                "value_text, revision) VALUES (2, 'B03-R1', 0, 'mass_initial_g', 20.0, NULL, "
                "1)")
    con.commit()
    con.close()
    code, out = verify(log.path.parent, capsys)
    assert code == 1
    assert "BROKEN: ingest 2 differs from its link" in out


def test_forged_ingest_is_detected(log, capsys):
    con = sqlite3.connect(log.path)
    con.execute("INSERT INTO ingests (source, sha256, ingested_at, fingerprint, n_values) "
                "VALUES ('forged.csv', 'f', '2026-01-01T00:00:00+00:00', 'fp1', 0)")
    con.commit()
    con.close()
    code, out = verify(log.path.parent, capsys)
    assert code == 1 and "BROKEN: ingest 4 has no link in the chain" in out


def test_edited_fingerprint_is_detected(log, capsys):
    con = sqlite3.connect(log.path)
    with pytest.raises(sqlite3.IntegrityError, match="append-only"):
        con.execute("UPDATE log_info SET value = 'other' WHERE key = 'plan_fingerprint'")
    con.execute("DROP TRIGGER log_info_no_update")
    con.execute("UPDATE log_info SET value = 'other' WHERE key = 'plan_fingerprint'")
    con.commit()
    con.close()
    code, out = verify(log.path.parent, capsys)
    assert code == 1
    assert "BROKEN: ingest 1 differs from its link" in out
    result = verify_log(log.path)
    assert any("plan fingerprint" in b for b in result.broken)
    assert any("trigger log_info_no_update is missing" in b for b in result.broken)


def test_dropped_trigger_and_delete_is_detected(log, capsys):
    con = sqlite3.connect(log.path)
    con.execute("DROP TRIGGER readings_no_delete")
    con.execute("DELETE FROM readings WHERE coupon = 'B02-R1' AND field = 'mass_initial_g'")
    con.commit()
    con.close()
    code, out = verify(log.path.parent, capsys)
    assert code == 1 and "BROKEN: ingest 2 differs from its link" in out
    assert "trigger readings_no_delete is missing" in out


def test_last_ingest_deleted_with_its_link_is_caught_by_the_head_file(log, capsys):
    con = sqlite3.connect(log.path)
    for t in ("readings_no_delete", "ingests_no_delete", "chain_no_delete"):
        con.execute(f"DROP TRIGGER {t}")
    con.execute("DELETE FROM readings WHERE ingest_id = 3")
    con.execute("DELETE FROM chain WHERE ingest_id = 3")
    con.execute("DELETE FROM ingests WHERE id = 3")
    for sql in ("CREATE TRIGGER readings_no_delete BEFORE DELETE ON readings BEGIN SELECT "
                "RAISE(ABORT, 'x'); END", "CREATE TRIGGER ingests_no_delete BEFORE DELETE ON "
                "ingests BEGIN SELECT RAISE(ABORT, 'x'); END", "CREATE TRIGGER "
                "chain_no_delete BEFORE DELETE ON chain BEGIN SELECT RAISE(ABORT, 'x'); END"):
        con.execute(sql)
    con.commit()
    con.close()
    code, out = verify(log.path.parent, capsys)
    assert code == 1 and "differs from the head file" in out


def test_missing_head_file_is_reported(log, capsys):
    head_path(log.path).unlink()
    code, out = verify(log.path.parent, capsys)
    assert code == 1 and "head file record-log.sqlite.head is missing" in out


def test_interrupted_confirmation_is_not_a_fault(log, capsys):
    """Killed after the commit but before the head file was confirmed: still intact."""
    data = json.loads(head_path(log.path).read_text())
    con = sqlite3.connect(log.path)
    prev = con.execute("SELECT prev FROM chain WHERE ingest_id = 3").fetchone()[0]
    con.close()
    head_path(log.path).write_text(json.dumps({"head": prev, "ingests": 2,
                                               "pending": data["head"]}))
    result = verify_log(log.path)
    assert result.ok and "not confirmed" in result.notes[0]


def test_verify_changes_nothing_and_works_read_only(log, tmp_path, capsys):
    copy = tmp_path / "ro"
    copy.mkdir()
    for p in log.path.parent.glob("record-log.sqlite*"):
        if p.is_file():
            shutil.copy(p, copy / p.name)
    kept = ("record-log.sqlite", "record-log.sqlite.head")
    before = {name: (copy / name).read_bytes() for name in kept}
    copy.chmod(0o555)  # (the suite may run as root, which can write anyway)
    try:
        code, out = verify(copy, capsys)
    finally:
        copy.chmod(0o755)
    assert code == 0, out
    assert {name: (copy / name).read_bytes() for name in kept} == before


def test_no_log_and_empty_log_are_clear(tmp_path, capsys):
    assert main(["verify", str(tmp_path)]) == 2
    assert "no record log here" in capsys.readouterr().err
    (tmp_path / "record-log.sqlite").write_bytes(b"")
    assert main(["verify", str(tmp_path)]) == 2
    assert "empty (zero bytes)" in capsys.readouterr().err
    (tmp_path / "record-log.sqlite").write_bytes(b"not a database at all" * 50)
    assert main(["verify", str(tmp_path)]) == 2
    assert "cannot be read as a record log" in capsys.readouterr().err


def test_json_output(log, capsys):
    assert main(["verify", str(log.path), "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["ok"] and data["ingests"] == 3 and len(data["head"]) == 64


def test_chain_hash_depends_on_every_value(tmp_path):
    """Two logs differing in one stored digit have different heads."""
    heads = []
    for i, v in enumerate((25.0, 25.000000000000004)):
        lg = RecordLog(tmp_path / f"l{i}.sqlite")
        add(lg, [("B01-R1", 0, "mass_initial_g", v)], "a")
        heads.append(verify_log(lg.path).head)
    assert heads[0] != heads[1]


def test_head_file_lives_beside_the_log():
    assert head_path(Path("/x/record-log.sqlite")) == Path("/x/record-log.sqlite.head")


LOOP_SCRIPT = """
import sys
from pathlib import Path
from trialkit.records.log import RecordLog
log = RecordLog(Path(sys.argv[1]))
start = int(sys.argv[2])
Path(sys.argv[3]).write_text("looping")
for i in range(start, start + 100000):
    rows = [(f"B{j:02d}-R1", 0, "mass_initial_g", 20.0 + i + j / 100) for j in range(40)]
    log.add_readings(rows, source=f"s{i}.csv", sha256=f"{i:064d}", fingerprint="fp1")
"""


@pytest.mark.slow
def test_kill_at_random_moments_keeps_every_ingest_whole_and_the_chain_intact(tmp_path):
    """kill -9 at ten seeded random moments of a loop of ingests: after each kill the log
    verifies (a pending head is accepted) and every ingest holds all its values."""
    import os
    import random
    import signal
    import subprocess
    import sys
    import time

    repo = Path(__file__).resolve().parents[1]
    env = dict(os.environ, PYTHONPATH=str(repo))
    path = tmp_path / "record-log.sqlite"
    rng = random.Random(20261202)
    start = 0
    for attempt in range(10):
        ready = tmp_path / f"ready{attempt}"
        proc = subprocess.Popen([sys.executable, "-c", LOOP_SCRIPT, str(path), str(start),
                                 str(ready)], env=env, stderr=subprocess.PIPE)
        deadline = time.monotonic() + 60
        while not ready.exists():
            assert proc.poll() is None, proc.stderr.read()
            assert time.monotonic() < deadline
            time.sleep(0.01)
        time.sleep(rng.uniform(0.0, 0.4))
        proc.send_signal(signal.SIGKILL)
        proc.wait(timeout=30)
        proc.stderr.close()
        result = verify_log(path)
        assert result.ok, (attempt, result.broken)
        con = sqlite3.connect(path)
        counts = con.execute("SELECT i.n_values, COUNT(r.id) FROM ingests i LEFT JOIN "
                             "readings r ON r.ingest_id = i.id GROUP BY i.id").fetchall()
        con.close()
        assert all(n == 40 == c for n, c in counts)
        start = result.ingests + 1000 * (attempt + 1)
    assert verify_log(path).ingests > 0


# -- a log written before the hash chain existed (issue 14: migration) -------------------
#: The schema trialkit wrote before the chain: the three tables and their four triggers,
#: written out here as such a file holds them (not imported, so a change to today's
#: schema cannot hide a broken migration).
PRE_CHAIN_SCHEMA = """
CREATE TABLE log_info (key TEXT PRIMARY KEY, value TEXT NOT NULL);
CREATE TABLE ingests (
    id INTEGER PRIMARY KEY, source TEXT NOT NULL, sha256 TEXT NOT NULL UNIQUE,
    ingested_at TEXT NOT NULL, fingerprint TEXT NOT NULL, n_values INTEGER NOT NULL);
CREATE TABLE readings (
    id INTEGER PRIMARY KEY, ingest_id INTEGER NOT NULL REFERENCES ingests(id),
    coupon TEXT NOT NULL, inspection INTEGER NOT NULL, field TEXT NOT NULL,
    value_num REAL, value_text TEXT, revision INTEGER NOT NULL,
    UNIQUE (coupon, inspection, field, revision));
CREATE TRIGGER readings_no_update BEFORE UPDATE ON readings
    BEGIN SELECT RAISE(ABORT, 'the record log is append-only'); END;
CREATE TRIGGER readings_no_delete BEFORE DELETE ON readings
    BEGIN SELECT RAISE(ABORT, 'the record log is append-only'); END;
CREATE TRIGGER ingests_no_update BEFORE UPDATE ON ingests
    BEGIN SELECT RAISE(ABORT, 'the record log is append-only'); END;
CREATE TRIGGER ingests_no_delete BEFORE DELETE ON ingests
    BEGIN SELECT RAISE(ABORT, 'the record log is append-only'); END;
INSERT INTO log_info VALUES ('schema_version', '1'), ('plan_fingerprint', 'fp1');
INSERT INTO ingests VALUES (1, 'a.csv', 'aaaa', '2026-10-01T09:00:00+00:00', 'fp1', 2),
                           (2, 'b.csv', 'bbbb', '2026-10-02T09:00:00+00:00', 'fp1', 1);
INSERT INTO readings VALUES (1, 1, 'B01-R1', 0, 'mass_initial_g', 25.0, NULL, 1),
                            (2, 1, 'B01-R1', 0, 'operator', NULL, 'MT', 1),
                            (3, 2, 'B01-R1', 0, 'mass_initial_g', 25.5, NULL, 2);
"""


def _pre_chain_log(folder: Path) -> Path:
    folder.mkdir(parents=True, exist_ok=True)
    path = folder / "record-log.sqlite"
    con = sqlite3.connect(path)
    con.executescript(PRE_CHAIN_SCHEMA)
    con.commit()
    con.close()
    return path


def test_a_log_from_before_the_chain_is_adopted_and_says_so(tmp_path, capsys):
    path = _pre_chain_log(tmp_path / "old")
    code, out = verify(path.parent, capsys)
    assert code == 1 and "no hash chain" in out        # not yet migrated: said plainly
    log = RecordLog(path)                                # first open where it may write
    assert head_path(path).exists()
    result = verify_log(path)
    assert result.ok, result.broken
    assert result.ingests == 2 and result.readings == 3
    assert any("ingests 1 to 2 were stored before the log had a hash chain" in n
               for n in result.notes)
    # nothing recorded changed, and the next ingest chains on
    con = sqlite3.connect(path)
    assert con.execute("SELECT id, coupon, field, value_num, value_text, revision FROM "
                       "readings ORDER BY id").fetchall() == [
        (1, "B01-R1", "mass_initial_g", 25.0, None, 1), (2, "B01-R1", "operator", None, "MT", 1),
        (3, "B01-R1", "mass_initial_g", 25.5, None, 2)]
    con.close()
    add(log, [("B01-R1", 0, "mass_final_g", 24.9)], "c")
    code, out = verify(path.parent, capsys)
    assert code == 0 and "intact: 3 ingest(s)" in out
    # an edit made after the adoption is caught like any other
    con = sqlite3.connect(path)
    con.execute("DROP TRIGGER readings_no_update")
    con.execute("UPDATE readings SET value_num = 26.0 WHERE id = 1")
    con.commit()
    con.close()
    assert verify(path.parent, capsys)[0] == 1


def test_a_dropped_chain_is_not_adopted(log, capsys):
    # the chain table dropped by hand (its triggers first): the head file beside the log
    # shows it once had a chain, so opening it again must not re-chain it silently
    con = sqlite3.connect(log.path)
    con.executescript("DROP TRIGGER chain_no_delete; DROP TRIGGER chain_no_update; "
                      "DROP TABLE chain;")
    con.commit()
    con.close()
    RecordLog(log.path)
    code, out = verify(log.path.parent, capsys)
    assert code == 1 and "has no link in the chain" in out
