"""Record-log faults (trialkit/records/log.py): a damaged, empty or unwritable log gives
a clear message on every command and is never changed.  The readings are invented."""

from __future__ import annotations

import contextlib
import io
import random
import shutil
from pathlib import Path

import pytest
from malformed_sheets.make_corpus import fill_csv, good_readings, make_test_plan

from trialkit.cli import main
from trialkit.exceptions import RecordLogError
from trialkit.records.log import LOG_FILE, RecordLog
from trialkit.records.sheets import export_csv, ingest_sheet

READING_COMMANDS = [["history", "{d}"], ["responses", "{d}"], ["analyze", "{d}"],
                    ["report", "{d}", "--out", "{d}/r.html"], ["verify", "{d}"]]


@pytest.fixture(scope="module")
def recorded(tmp_path_factory):
    base = tmp_path_factory.mktemp("recorded")
    plan = make_test_plan(base / "trial")
    blank = export_csv(plan, base / "blank.csv")
    sheet = fill_csv(blank, base / "filled.csv", good_readings())
    assert ingest_sheet(sheet, plan).ok
    return plan.trial.folder, sheet


def copy_trial(src: Path, dst: Path) -> Path:
    shutil.copytree(src, dst)
    return dst


def run(args):
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        code = main(args)
    return code, out.getvalue(), err.getvalue()


def damage(path: Path, seed: int) -> None:
    """Overwrite two whole pages (after the header page) with seeded random bytes."""
    data = bytearray(path.read_bytes())
    rng = random.Random(seed)
    pages = len(data) // 4096
    for page in rng.sample(range(1, pages), min(2, pages - 1)):
        data[page * 4096:(page + 1) * 4096] = bytes(rng.getrandbits(8) for _ in range(4096))
    path.write_bytes(bytes(data))


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_damaged_log_is_a_clear_message_on_every_command(recorded, tmp_path, seed):
    folder = copy_trial(recorded[0], tmp_path / "t")
    log = folder / LOG_FILE
    damage(log, seed)
    before = log.read_bytes()
    for cmd in [*READING_COMMANDS, ["ingest", str(recorded[1]), "--trial", "{d}"]]:
        args = [a.format(d=folder) for a in cmd]
        code, out, err = run(args)
        assert code in (1, 2), (cmd, code, err)
        assert "Traceback" not in err and "internal error" not in err, (cmd, err)
        assert "damaged" in (err + out), (cmd, err, out)
        assert log.read_bytes() == before, cmd


def test_zero_byte_log_is_not_a_new_empty_log(recorded, tmp_path):
    folder = copy_trial(recorded[0], tmp_path / "t")
    log = folder / LOG_FILE
    for p in folder.glob(LOG_FILE + "*"):
        p.unlink()
    log.write_bytes(b"")
    for cmd in [*READING_COMMANDS[:3], ["ingest", str(recorded[1]), "--trial", "{d}"]]:
        code, out, err = run([a.format(d=folder) for a in cmd])
        assert code == 2, (cmd, err, out)
        assert "empty (zero bytes)" in err and "Nothing was overwritten" in err, (cmd, err)
        assert log.read_bytes() == b""


def test_not_a_database_is_refused_unchanged(tmp_path):
    bad = tmp_path / LOG_FILE
    bad.write_bytes(b"not a database" * 300)
    with pytest.raises(RecordLogError, match="damaged or not a trialkit record log"):
        RecordLog(bad)
    assert bad.read_bytes() == b"not a database" * 300


def test_opening_an_existing_log_writes_nothing(recorded, tmp_path):
    folder = copy_trial(recorded[0], tmp_path / "t")
    log = folder / LOG_FILE
    before = log.read_bytes()
    RecordLog(log).history()
    assert log.read_bytes() == before


def test_unwritable_folder_on_ingest_says_so(recorded, tmp_path, monkeypatch):
    """A folder where the head file cannot be written: refused, log unchanged, and the
    advice is about the folder (never to move the log away)."""
    from trialkit.records import chain

    folder = copy_trial(recorded[0], tmp_path / "t")
    log = folder / LOG_FILE
    before = log.read_bytes()

    def refuse(*a, **k):
        raise PermissionError(13, "Permission denied")

    monkeypatch.setattr(chain, "write_head", refuse)
    other = fill_csv(export_csv(make_test_plan(tmp_path / "p"), tmp_path / "b.csv"),
                     tmp_path / "other.csv", {"B01-R1": {"mass_initial_g": 30.0}})
    code, out, err = run(["ingest", str(other), "--trial", str(folder)])
    assert code == 2, (err, out)
    assert "is the trial folder writable?" in err and "Nothing of this sheet was stored" in err
    assert "move" not in err.lower()
    assert RecordLog(log).count() == len(RecordLog(log).history())
    con_before = before  # the failed transaction left the main file as it was
    assert log.read_bytes() == con_before


def test_reading_commands_never_open_the_log_for_writing(recorded, tmp_path, monkeypatch):
    """As in a read-only trial folder: any connection that could write is refused, and
    history, responses, analyze, report and verify still work."""
    import sqlite3

    from trialkit.records import log as log_module

    real = sqlite3.connect

    def read_only_connect(target, *args, **kwargs):
        if "mode=ro" not in str(target):
            raise sqlite3.OperationalError("attempt to write a readonly database")
        return real(target, *args, **kwargs)

    folder = copy_trial(recorded[0], tmp_path / "t")
    before = (folder / LOG_FILE).read_bytes()
    monkeypatch.setattr(log_module.sqlite3, "connect", read_only_connect)
    out = tmp_path / "elsewhere"
    out.mkdir()
    for cmd in (["history", str(folder)], ["responses", str(folder)],
                ["analyze", str(folder), "--all"], ["verify", str(folder)],
                ["report", str(folder), "--out", str(out / "r.html")]):
        code, stdout, err = run(cmd)
        assert code in (0, 1), (cmd, err)  # 1: responses lists readings still missing
        assert "readonly" not in err and "Traceback" not in err, (cmd, err)
    assert (folder / LOG_FILE).read_bytes() == before
    assert (out / "r.html").exists()


def test_text_that_is_not_utf8_is_damage_not_a_crash(recorded, tmp_path):
    # one byte of a stored operator name made invalid UTF-8 (found by the random-damage
    # test): reading commands say the log is damaged, verify names the changed ingest,
    # and nothing is decoded with replacement characters
    import sqlite3

    folder = copy_trial(recorded[0], tmp_path / "t")
    log = folder / LOG_FILE
    con = sqlite3.connect(log)
    con.execute("DROP TRIGGER readings_no_update")
    con.execute("UPDATE readings SET value_text = CAST(x'4d80' AS TEXT) "
                "WHERE value_text IS NOT NULL AND id = (SELECT MIN(id) FROM readings "
                "WHERE value_text IS NOT NULL)")
    con.commit()
    con.close()
    before = log.read_bytes()
    code, out, err = run(["history", str(folder)])
    assert code == 2 and "not valid UTF-8" in err and "Traceback" not in err, err
    code, out, err = run(["verify", str(folder)])
    assert code == 1 and "BROKEN" in out, out + err
    assert log.read_bytes() == before
