"""Tamper evidence for the record log: a hash chain over its ingests, and its check.

Every ingest is one link: the SHA-256 of the previous link's hash and of the ingest's whole
content (its row in ``ingests``, every reading it stored with its row id, and the plan
fingerprint).  The links are kept in the log's ``chain`` table, and the newest link (the
*head*) is kept a second time in a small file beside the log (``<log>.head``, JSON),
written in the same step as the ingest: before the commit as ``pending``, after it as the
head, under a lock that serialises ingests.

:func:`verify_log` recomputes the chain from the stored values and compares it with the
stored links and with the head file.  It detects a change made to the log outside trialkit:
a forged or edited reading or ingest (once the triggers are dropped), a deleted one, an
edited plan fingerprint, a dropped trigger, a head file that does not match.  It cannot
detect someone who rewrites the whole chain and the head file consistently (the algorithm
is public and there is no secret key); keep a copy of the head (it is printed by ``trialkit
verify`` and ``trialkit ingest``) elsewhere to catch that too.

Examples
--------
>>> import tempfile, pathlib
>>> from trialkit.records.log import RecordLog
>>> folder = pathlib.Path(tempfile.mkdtemp())
>>> log = RecordLog(folder / "log.sqlite")
>>> _ = log.add_readings([("B01-R1", 0, "mass_initial_g", 25.0)], source="a.csv",
...                      sha256="0" * 64, fingerprint="abc")
>>> result = verify_log(folder / "log.sqlite")
>>> result.ok, result.ingests, result.readings
(True, 1, 1)
"""

from __future__ import annotations

import contextlib
import hashlib
import json
import os
import sqlite3
from dataclasses import dataclass, field
from pathlib import Path

from trialkit.records.read_only import read_only_uri

GENESIS = "0" * 64
CHAIN_SCHEMA = """
CREATE TABLE IF NOT EXISTS chain (
    ingest_id INTEGER PRIMARY KEY REFERENCES ingests(id), prev TEXT NOT NULL,
    hash TEXT NOT NULL);
CREATE TRIGGER IF NOT EXISTS chain_no_update BEFORE UPDATE ON chain
    BEGIN SELECT RAISE(ABORT, 'the record log is append-only'); END;
CREATE TRIGGER IF NOT EXISTS chain_no_delete BEFORE DELETE ON chain
    BEGIN SELECT RAISE(ABORT, 'the record log is append-only'); END;
CREATE TRIGGER IF NOT EXISTS log_info_no_update BEFORE UPDATE ON log_info
    BEGIN SELECT RAISE(ABORT, 'the record log is append-only'); END;
CREATE TRIGGER IF NOT EXISTS log_info_no_delete BEFORE DELETE ON log_info
    BEGIN SELECT RAISE(ABORT, 'the record log is append-only'); END;
"""
#: The triggers a trialkit record log has; a missing one was dropped outside trialkit.
TRIGGERS = ("readings_no_update", "readings_no_delete", "ingests_no_update",
            "ingests_no_delete", "chain_no_update", "chain_no_delete", "log_info_no_update",
            "log_info_no_delete")


def head_path(log_path: str | os.PathLike) -> Path:
    """The head file beside the log: ``record-log.sqlite`` -> ``record-log.sqlite.head``."""
    p = Path(log_path)
    return p.with_name(p.name + ".head")


def link_hash(con: sqlite3.Connection, ingest_id: int, prev: str) -> str:
    """The hash of ingest ``ingest_id`` chained to ``prev``, from what the log holds."""
    row = con.execute("SELECT id, source, sha256, ingested_at, fingerprint, n_values "
                      "FROM ingests WHERE id = ?", (ingest_id,)).fetchone()
    readings = con.execute(
        "SELECT id, coupon, inspection, field, value_num, value_text, revision "
        "FROM readings WHERE ingest_id = ? ORDER BY id", (ingest_id,)).fetchall()
    plan = con.execute("SELECT value FROM log_info WHERE key = 'plan_fingerprint'").fetchone()
    content = {"ingest": list(row) if row else None,
               "readings": [[i, c, n, f, None if v is None else repr(float(v)), t, r]
                            for i, c, n, f, v, t, r in readings],
               "plan_fingerprint": plan[0] if plan else None}
    text = json.dumps(content, ensure_ascii=False, separators=(",", ":"), sort_keys=True)
    return hashlib.sha256(f"{prev}\n{text}".encode()).hexdigest()


def last_hash(con: sqlite3.Connection) -> str:
    """The newest link's hash (:data:`GENESIS` for an empty log)."""
    row = con.execute("SELECT hash FROM chain ORDER BY ingest_id DESC LIMIT 1").fetchone()
    return row[0] if row else GENESIS


def write_head(log_path: str | os.PathLike, head: str, ingests: int,
               pending: str | None = None) -> None:
    """Write the head file atomically (a new file renamed over the old one)."""
    target = head_path(log_path)
    data = {"head": head, "ingests": ingests}
    if pending is not None:
        data["pending"] = pending
    tmp = target.with_name(target.name + f".{os.getpid()}.tmp")
    with open(tmp, "w", encoding="utf-8") as out:
        out.write(json.dumps(data, sort_keys=True) + "\n")
        out.flush()
        os.fsync(out.fileno())
    os.replace(tmp, target)


def adopt_unchained(log_path: str | os.PathLike, con: sqlite3.Connection) -> int:
    """Chain the ingests of a log written before the hash chain existed (a migration).

    Runs on a connection inside a write transaction, after the ``chain`` table was created,
    and only when the log has ingests, no links and no head file (a log that once had a
    chain always has a head file beside it: its links missing is tampering, reported by
    :func:`verify_log`, not adopted).  The adopted ingests are linked in order and the
    adoption is recorded in ``log_info`` (``chain_adopted``: how many ingests, when), so
    :func:`verify_log` always says that changes made to them *before* the adoption cannot
    be detected.  Returns the number of ingests adopted (0 when nothing was to do).
    """
    if head_path(log_path).exists():
        return 0
    if con.execute("SELECT COUNT(*) FROM chain").fetchone()[0]:
        return 0
    ids = [r[0] for r in con.execute("SELECT id FROM ingests ORDER BY id")]
    if not ids:
        return 0
    prev = GENESIS
    for ingest_id in ids:
        link = link_hash(con, ingest_id, prev)
        con.execute("INSERT INTO chain (ingest_id, prev, hash) VALUES (?, ?, ?)",
                    (ingest_id, prev, link))
        prev = link
    import datetime as dt

    when = dt.datetime.now(dt.UTC).isoformat(timespec="seconds")
    con.execute("INSERT OR IGNORE INTO log_info VALUES ('chain_adopted', ?)",
                (json.dumps({"ingests": len(ids), "at": when}, sort_keys=True),))
    write_head(log_path, GENESIS, 0, pending=prev)
    return len(ids)


def adoption_note(con: sqlite3.Connection) -> str:
    """The sentence :func:`verify_log` adds for a log whose first ingests were adopted by
    :func:`adopt_unchained` (``""`` when they were not)."""
    row = con.execute("SELECT value FROM log_info WHERE key = 'chain_adopted'").fetchone()
    if not row:
        return ""
    try:
        info = json.loads(row[0])
        n, when = int(info["ingests"]), str(info["at"])
    except (ValueError, KeyError, TypeError):
        return "the log records a chain adoption it cannot read: it was edited"
    return (f"ingests 1 to {n} were stored before the log had a hash chain and were chained "
            f"when this version of trialkit first opened it ({when}); a change made to them "
            "before then cannot be detected")


@contextlib.contextmanager
def ingest_lock(log_path: str | os.PathLike):
    """Serialise ingests across processes (with the head-file writes) where flock exists."""
    try:
        import fcntl
    except ImportError:  # pragma: no cover - not POSIX: SQLite's own lock still holds
        yield
        return
    lock = Path(log_path).with_name(Path(log_path).name + ".lock")
    with open(lock, "a") as handle:
        fcntl.flock(handle, fcntl.LOCK_EX)
        try:
            yield
        finally:
            fcntl.flock(handle, fcntl.LOCK_UN)


@dataclass
class LogVerification:
    """What :func:`verify_log` found.

    Attributes
    ----------
    ok : bool
        True when every link, trigger and the head file agree.
    ingests, readings : int
        Rows in the log.
    head : str
        The newest link's hash as recomputed (:data:`GENESIS` for an empty log).
    broken : list of str
        What is wrong, the first broken link first.
    notes : list of str
        Things to know that are not faults.
    """

    path: Path
    ok: bool
    ingests: int
    readings: int
    head: str
    broken: list[str] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)

    def summary(self) -> str:
        if self.ok:
            return (f"{self.path}: intact: {self.ingests} ingest(s), {self.readings} "
                    f"value(s), head {self.head[:16]}")
        return f"{self.path}: BROKEN: {self.broken[0]}"

    def to_dict(self) -> dict:
        return {"path": str(self.path), "ok": self.ok, "ingests": self.ingests,
                "readings": self.readings, "head": self.head, "broken": list(self.broken),
                "notes": list(self.notes)}


def verify_log(log_path: str | os.PathLike) -> LogVerification:
    """Recompute the hash chain of the log at ``log_path`` and compare it with its copies.

    Opens the log read-only (works in a read-only folder) and changes nothing.

    Raises
    ------
    sqlite3.DatabaseError
        The file is not an SQLite database (the caller says so).
    """
    path = Path(log_path)
    con = sqlite3.connect(read_only_uri(path), uri=True)
    con.text_factory = lambda b: b.decode("utf-8", "replace")  # damage shows as a changed hash
    broken: list[str] = []
    notes: list[str] = []
    try:
        integrity = con.execute("PRAGMA integrity_check").fetchone()[0]
        if integrity != "ok":
            broken.append(f"SQLite's integrity check failed: {integrity}")
        tables = {r[0] for r in con.execute("SELECT name FROM sqlite_master")}
        for name in TRIGGERS:
            if name not in tables:
                broken.append(f"trigger {name} is missing: the log was altered outside "
                              "trialkit")
        if "chain" not in tables:
            broken.insert(0, "the log has no hash chain (made by an older trialkit, or the "
                          "chain table was dropped)")
            n_ing = con.execute("SELECT COUNT(*) FROM ingests").fetchone()[0]
            n_read = con.execute("SELECT COUNT(*) FROM readings").fetchone()[0]
            return LogVerification(path, False, n_ing, n_read, GENESIS, broken, notes)
        ingests = [r[0] for r in con.execute("SELECT id FROM ingests ORDER BY id")]
        links = {i: (p, h) for i, p, h in con.execute("SELECT ingest_id, prev, hash FROM chain")}
        n_read = con.execute("SELECT COUNT(*) FROM readings").fetchone()[0]
        prev = GENESIS
        chain_broken: list[str] = []
        for ingest_id in ingests:
            link = links.pop(ingest_id, None)
            if link is None:
                chain_broken.append(f"ingest {ingest_id} has no link in the chain: it was "
                                    "inserted outside trialkit")
                continue
            if link[0] != prev:
                chain_broken.append(f"the link of ingest {ingest_id} does not follow the one "
                                    "before it: an ingest before it was removed or replaced")
            expect = link_hash(con, ingest_id, link[0])
            if expect != link[1]:
                chain_broken.append(f"ingest {ingest_id} differs from its link: its readings, "
                                    "its record or the plan fingerprint were changed")
            prev = link[1]
        for ingest_id in sorted(links):
            chain_broken.append(f"the chain has a link for ingest {ingest_id}, which is not "
                                "in the log: the ingest was deleted")
        orphans = con.execute("SELECT COUNT(*) FROM readings WHERE ingest_id NOT IN "
                              "(SELECT id FROM ingests)").fetchone()[0]
        if orphans:
            chain_broken.append(f"{orphans} reading(s) belong to no ingest: inserted outside "
                                "trialkit")
        fingerprints = {r[0] for r in con.execute("SELECT DISTINCT fingerprint FROM ingests")}
        plan = con.execute("SELECT value FROM log_info WHERE key = 'plan_fingerprint'"
                           ).fetchone()
        if ingests and (plan is None or fingerprints != {plan[0]}):
            chain_broken.append("the plan fingerprint of the log does not match its ingests: "
                                "it was edited")
        head = prev
        broken = chain_broken + broken
        adopted = adoption_note(con)
        if adopted:
            (broken if "edited" in adopted else notes).append(adopted)
        _check_head_file(path, head, len(ingests), broken, notes)
        return LogVerification(path, not broken, len(ingests), n_read, head, broken, notes)
    finally:
        con.close()


def _check_head_file(path: Path, head: str, n_ingests: int, broken: list[str],
                     notes: list[str]) -> None:
    hp = head_path(path)
    if not hp.exists():
        if n_ingests:
            broken.append(f"the head file {hp.name} is missing, so the chain cannot be "
                          "checked against its second copy")
        return
    try:
        data = json.loads(hp.read_text(encoding="utf-8"))
        stored, pending = data["head"], data.get("pending")
    except (OSError, ValueError, KeyError, TypeError):
        broken.append(f"the head file {hp.name} cannot be read")
        return
    if head == stored:
        return
    if pending is not None and head == pending:
        notes.append("the last ingest was committed but its head file was not confirmed "
                     "(the ingest was interrupted); the next ingest confirms it")
        return
    broken.append(f"the log's newest link {head[:16]} differs from the head file's "
                  f"{str(stored)[:16]}: ingests were removed or added outside trialkit")
