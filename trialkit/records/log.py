"""The record log: every value ever read from a sheet, with its source and revision.

An SQLite database (standard-library :mod:`sqlite3`, WAL journal) in the trial folder,
``record-log.sqlite``.  It is append-only: triggers refuse every UPDATE and DELETE.
Each ingest is one transaction (``BEGIN IMMEDIATE``, so a second ingest at the same time
waits for the first).  A value that differs from the current value of the same coupon,
inspection and field is stored as the next revision; a value equal to the current one is
not stored again; a file whose SHA-256 is already in the log changes nothing.

Every ingest is also a link of a hash chain (table ``chain``; the newest link is kept a
second time in ``record-log.sqlite.head``), which :func:`trialkit.records.chain.verify_log`
and ``trialkit verify`` check.  Opening an existing log writes nothing, except that a log
written before the hash chain existed gets its chain the first time it is opened where it
may be written (its ingests adopted in order; ``trialkit verify`` says so from then on);
SQLite's quick integrity check runs when a log is opened and before every ingest.

Schema (version 1)::

    log_info(key TEXT PRIMARY KEY, value TEXT)       -- schema_version, plan_fingerprint
    ingests(id INTEGER PRIMARY KEY, source TEXT, sha256 TEXT UNIQUE, ingested_at TEXT,
            fingerprint TEXT, n_values INTEGER)
    readings(id INTEGER PRIMARY KEY, ingest_id INTEGER REFERENCES ingests(id),
             coupon TEXT, inspection INTEGER,  -- 0 for the coupon sheet
             field TEXT, value_num REAL, value_text TEXT, revision INTEGER,
             UNIQUE(coupon, inspection, field, revision))
    chain(ingest_id INTEGER PRIMARY KEY REFERENCES ingests(id), prev TEXT, hash TEXT)

Examples
--------
>>> import tempfile, pathlib
>>> folder = pathlib.Path(tempfile.mkdtemp())
>>> log = RecordLog(folder / "log.sqlite")
>>> log.add_readings([("B01-R1", 0, "mass_initial_g", 25.0)], source="a.csv",
...                  sha256="0" * 64, fingerprint="abc").status
'accepted'
>>> log.history()[["coupon", "field", "value", "revision"]].values.tolist()
[['B01-R1', 'mass_initial_g', 25.0, 1]]
"""

from __future__ import annotations

import contextlib
import datetime as dt
import os
import sqlite3
import time
from collections.abc import Iterable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import pandas as pd

from trialkit.exceptions import RecordLogError
from trialkit.records import chain
from trialkit.records.fields import COUPON_FIELDS
from trialkit.records.read_only import read_only_uri, utf8_text

LOG_FILE = "record-log.sqlite"
SCHEMA_VERSION = "1"
HISTORY_COLUMNS = ("coupon", "inspection", "field", "value", "revision", "source", "sha256",
                   "ingested_at")
#: Test hook: seconds to sleep inside the ingest transaction, half-way through writing.
SLEEP_HOOK = "TRIALKIT_TEST_SLEEP_IN_TRANSACTION"
#: Test hook: a file touched when the sleep starts.
READY_HOOK = "TRIALKIT_TEST_READY_FILE"

_SCHEMA = """
CREATE TABLE IF NOT EXISTS log_info (key TEXT PRIMARY KEY, value TEXT NOT NULL);
CREATE TABLE IF NOT EXISTS ingests (
    id INTEGER PRIMARY KEY, source TEXT NOT NULL, sha256 TEXT NOT NULL UNIQUE,
    ingested_at TEXT NOT NULL, fingerprint TEXT NOT NULL, n_values INTEGER NOT NULL);
CREATE TABLE IF NOT EXISTS readings (
    id INTEGER PRIMARY KEY, ingest_id INTEGER NOT NULL REFERENCES ingests(id),
    coupon TEXT NOT NULL, inspection INTEGER NOT NULL, field TEXT NOT NULL,
    value_num REAL, value_text TEXT, revision INTEGER NOT NULL,
    UNIQUE (coupon, inspection, field, revision));
CREATE TRIGGER IF NOT EXISTS readings_no_update BEFORE UPDATE ON readings
    BEGIN SELECT RAISE(ABORT, 'the record log is append-only'); END;
CREATE TRIGGER IF NOT EXISTS readings_no_delete BEFORE DELETE ON readings
    BEGIN SELECT RAISE(ABORT, 'the record log is append-only'); END;
CREATE TRIGGER IF NOT EXISTS ingests_no_update BEFORE UPDATE ON ingests
    BEGIN SELECT RAISE(ABORT, 'the record log is append-only'); END;
CREATE TRIGGER IF NOT EXISTS ingests_no_delete BEFORE DELETE ON ingests
    BEGIN SELECT RAISE(ABORT, 'the record log is append-only'); END;
"""


@dataclass
class AddResult:
    """What one call of :meth:`RecordLog.add_readings` did.

    Attributes
    ----------
    status : str
        ``"accepted"`` (new revisions written), ``"no_change"`` (the file is new but every
        value equals the current one) or ``"already_ingested"`` (same SHA-256 seen before).
    added : DataFrame
        Values written: coupon, inspection, field, value, revision.
    unchanged : int
        Values equal to their current value, not stored again.
    ingest_id : int or None
        Row id in ``ingests`` (the earlier one for ``"already_ingested"``).
    first_ingested_at : str
        When the file was first read in.
    """

    status: str
    added: pd.DataFrame = field(default_factory=pd.DataFrame)
    unchanged: int = 0
    ingest_id: int | None = None
    first_ingested_at: str = ""


def _split(value: Any) -> tuple[float | None, str | None]:
    if isinstance(value, bool):
        raise RecordLogError(f"cannot store a boolean {value!r}; store a number or text")
    if isinstance(value, (int, float)):
        return float(value), None
    return None, str(value)


class RecordLog:
    """The append-only record log of one trial folder.

    Parameters
    ----------
    path : path-like
        The database file (created with its schema if missing).  Use
        :meth:`for_folder` to open the log of a trial folder.
    """

    def __init__(self, path: str | os.PathLike):
        self.path = Path(path)
        if self.path.exists() and self.path.stat().st_size == 0:
            raise RecordLogError(f"the record log {self.path} is empty (zero bytes): it is "
                                 "damaged or was never written. Nothing was overwritten; "
                                 "restore it from a backup or the trial's sheets.")
        try:
            if self.path.exists():
                self.check_integrity()
                if self._complete():
                    return  # nothing to create: opening never writes (read-only folders)
            try:
                self._create_or_migrate()
            except (OSError, sqlite3.OperationalError):
                if not self.path.exists():
                    raise
                # a log from before the hash chain in a folder that may not be written:
                # read it as it is (reading commands work; ingests say the folder is not
                # writable, and 'trialkit verify' says the log has no chain yet)
        except sqlite3.OperationalError as exc:
            raise RecordLogError(f"cannot open the record log {self.path}: {exc}. Is the "
                                 "trial folder writable? Nothing was changed.") from None
        except sqlite3.DatabaseError as exc:
            raise RecordLogError(f"cannot open the record log {self.path}: {exc}. It is "
                                 "damaged or not a trialkit record log; nothing was "
                                 "changed.") from None

    def _create_or_migrate(self) -> None:
        """Create the schema; a log from before the hash chain gets its chain (its ingests
        adopted in order, :func:`trialkit.records.chain.adopt_unchained`), in one
        transaction under the ingest lock."""
        with chain.ingest_lock(self.path):
            con = self._connect()
            try:
                con.execute("PRAGMA journal_mode=WAL")
                con.executescript(_SCHEMA + chain.CHAIN_SCHEMA)
                con.execute("BEGIN IMMEDIATE")
                con.execute("INSERT OR IGNORE INTO log_info VALUES ('schema_version', ?)",
                            (SCHEMA_VERSION,))
                adopted = chain.adopt_unchained(self.path, con)
                con.execute("COMMIT")
                if adopted:
                    chain.write_head(self.path, chain.last_hash(con), adopted)
            finally:
                if con.in_transaction:
                    con.execute("ROLLBACK")
                con.close()

    def _complete(self) -> bool:
        """True when the file needs nothing created: it holds every table and trigger of
        the log, or it has its hash chain (a chained log missing a trigger was altered
        outside trialkit: it is left as found, for 'trialkit verify' to report)."""
        con = sqlite3.connect(read_only_uri(self.path), uri=True, timeout=60.0)
        try:
            names = {r[0] for r in con.execute("SELECT name FROM sqlite_master")}
        finally:
            con.close()
        return "chain" in names or \
            {"log_info", "ingests", "readings", "chain", *chain.TRIGGERS} <= names

    def check_integrity(self) -> None:
        """SQLite's quick integrity check (read-only); :class:`RecordLogError` if it fails.

        Run when a log is opened and before every ingest.
        """
        try:
            con = sqlite3.connect(read_only_uri(self.path), uri=True, timeout=60.0)
            # the check's own report may quote damaged bytes: read it leniently
            con.text_factory = lambda b: b.decode("utf-8", "replace")
            try:
                con.execute("PRAGMA busy_timeout=60000")
                rows = [r[0] for r in con.execute("PRAGMA quick_check")]
            finally:
                con.close()
        except UnicodeDecodeError:   # SQLite's error message quoted the damaged bytes
            raise RecordLogError(f"cannot read the record log {self.path}: it is damaged "
                                 "(SQLite's check stopped on bytes that are not text). "
                                 "Nothing was changed; restore it from a backup.") from None
        except sqlite3.DatabaseError as exc:
            raise RecordLogError(f"cannot read the record log {self.path} ({exc}): it is "
                                 "damaged or not a trialkit record log. Nothing was changed; "
                                 "restore it from a backup.") from None
        if rows != ["ok"]:
            raise RecordLogError(f"the record log {self.path} is damaged (SQLite's integrity "
                                 f"check: {'; '.join(rows[:3])}). Nothing was changed; "
                                 "restore it from a backup.")

    @classmethod
    def for_folder(cls, folder: str | os.PathLike) -> RecordLog:
        """The log ``record-log.sqlite`` in trial folder ``folder``."""
        return cls(Path(folder) / LOG_FILE)

    def _connect(self, read_only: bool = False) -> sqlite3.Connection:
        if read_only:  # reading never needs to write (works in a read-only folder)
            con = sqlite3.connect(read_only_uri(self.path), uri=True, timeout=60.0,
                                  isolation_level=None)
            con.text_factory = utf8_text
            con.execute("PRAGMA busy_timeout=60000")
            return con
        con = sqlite3.connect(self.path, timeout=60.0, isolation_level=None)
        con.text_factory = utf8_text
        con.execute("PRAGMA busy_timeout=60000")
        con.execute("PRAGMA foreign_keys=ON")
        return con

    def __repr__(self) -> str:
        return f"RecordLog({str(self.path)!r}, {self.count()} values)"

    # -- reading ----------------------------------------------------------------------
    def count(self) -> int:
        """Number of stored values (all revisions)."""
        con = self._connect(read_only=True)
        try:
            return con.execute("SELECT COUNT(*) FROM readings").fetchone()[0]
        finally:
            con.close()

    def plan_fingerprint(self) -> str | None:
        """Fingerprint of the plan the stored readings were recorded against (None when
        nothing is stored yet)."""
        con = self._connect(read_only=True)
        try:
            row = con.execute("SELECT value FROM log_info WHERE key='plan_fingerprint'"
                              ).fetchone()
        finally:
            con.close()
        return row[0] if row else None

    def check_plan(self, plan: Any) -> None:
        """Refuse a plan other than the one the readings were recorded against, so that no
        reading is ever re-labelled (a 40 degC bath reported as 45 degC)."""
        fp = self.plan_fingerprint()
        if fp and fp != plan.fingerprint:
            raise RecordLogError(
                f"the readings in {self.path.name} were recorded against plan {fp}, but the "
                f"trial file now gives plan {plan.fingerprint}: it was edited after readings "
                "were recorded. Nothing was changed and nothing is re-labelled. Undo the "
                "edit to trial.toml (the readings and their plan are listed by 'trialkit "
                "history'), or copy trial.toml into a new trial folder for the changed trial.")

    def ingest_of(self, sha256: str) -> tuple[int, str, str] | None:
        """``(id, source, ingested_at)`` of an earlier ingest of this file, or None."""
        con = self._connect(read_only=True)
        try:
            return con.execute("SELECT id, source, ingested_at FROM ingests WHERE sha256 = ?",
                               (sha256,)).fetchone()
        finally:
            con.close()

    def _frame(self, where: str = "", params: tuple = ()) -> pd.DataFrame:
        con = self._connect(read_only=True)
        try:
            rows = con.execute(
                "SELECT r.coupon, r.inspection, r.field, r.value_num, r.value_text, "
                "r.revision, i.source, i.sha256, i.ingested_at FROM readings r "
                f"JOIN ingests i ON i.id = r.ingest_id {where} "
                "ORDER BY r.coupon, r.inspection, r.field, r.revision", params).fetchall()
        finally:
            con.close()
        data = [(c, n, f, num if num is not None else text, rev, s, h, t)
                for c, n, f, num, text, rev, s, h, t in rows]
        return pd.DataFrame(data, columns=list(HISTORY_COLUMNS))

    def history(self, coupon: str | None = None) -> pd.DataFrame:
        """Every stored value and revision (optionally of one coupon).

        Returns
        -------
        DataFrame
            Columns ``coupon, inspection, field, value, revision, source, sha256,
            ingested_at``; sorted by coupon, inspection, field, revision.
        """
        if coupon is None:
            return self._frame()
        return self._frame("WHERE r.coupon = ?", (coupon,))

    def _current_long(self, inspections: bool) -> pd.DataFrame:
        hist = self._frame("WHERE r.inspection > 0" if inspections else "WHERE r.inspection = 0")
        if hist.empty:
            return hist
        return hist.groupby(["coupon", "inspection", "field"], sort=True).tail(1)

    def current_values(self, plan: Any = None, fields: Iterable[str] | None = None
                       ) -> pd.DataFrame:
        """Current (latest revision) coupon readings, one row per coupon.

        Parameters
        ----------
        plan : Plan, optional
            With a plan: every coupon of ``plan.table`` in plan order, plan columns first.
        fields : iterable of str, optional
            Field columns, in this order, present even when nothing was recorded;
            default: the sheet fields of ``plan``'s trial (or :data:`COUPON_FIELDS`),
            then any other field that has values.

        Returns
        -------
        DataFrame
            ``coupon`` (plus plan columns) and one column per field; numbers as float,
            ``immersion_start``/``immersion_end`` as datetimes, text as object.
        """
        if plan is not None:
            self.check_plan(plan)
        cur = self._current_long(inspections=False)
        wide = (cur.pivot(index="coupon", columns="field", values="value")
                if not cur.empty else pd.DataFrame(index=pd.Index([], name="coupon")))
        wide.columns.name = None
        if fields is None:
            order = [f.name for f in COUPON_FIELDS]
            if plan is not None:
                from trialkit.records.config import sheet_config

                order = [f.name for f in sheet_config(plan.trial).coupon_fields]
            fields = order + sorted(set(wide.columns) - set(order))
        names = list(fields)
        wide = wide.reindex(columns=names)
        for name in names:
            wide[name] = _typed(name, wide[name])
        wide = wide.reset_index()
        if plan is not None:
            table = plan.table.reset_index(drop=True)
            wide = table.merge(wide, on="coupon", how="left", validate="one_to_one")
        return wide

    def current_timecourse(self) -> pd.DataFrame:
        """Current inspection readings, long: coupon, inspection, field, value."""
        cur = self._current_long(inspections=True)
        cols = ["coupon", "inspection", "field", "value"]
        return cur[cols].reset_index(drop=True) if not cur.empty else pd.DataFrame(columns=cols)

    # -- writing ----------------------------------------------------------------------
    def add_readings(self, readings: Iterable[tuple[str, int, str, Any]], *, source: str,
                     sha256: str, fingerprint: str) -> AddResult:
        """Store one sheet's readings in one transaction (see the module notes).

        Raises
        ------
        RecordLogError
            The log holds readings of another plan (fingerprint differs).
        """
        readings = list(readings)
        self.check_integrity()
        try:
            with chain.ingest_lock(self.path):
                return self._add(readings, source, sha256, fingerprint)
        except OSError as exc:
            raise RecordLogError(f"could not write beside the record log {self.path} "
                                 f"({exc.strerror or exc}): is the trial folder writable? "
                                 "Nothing of this sheet was stored.") from None

    def _add(self, readings: list, source: str, sha256: str, fingerprint: str) -> AddResult:
        now = dt.datetime.now(dt.UTC).isoformat(timespec="seconds")
        con = self._connect()
        try:
            con.execute("BEGIN IMMEDIATE")
            seen = con.execute("SELECT id, ingested_at FROM ingests WHERE sha256 = ?",
                               (sha256,)).fetchone()
            if seen:
                con.execute("ROLLBACK")
                return AddResult("already_ingested", _added([]), 0, seen[0], seen[1])
            fp = con.execute("SELECT value FROM log_info WHERE key='plan_fingerprint'"
                             ).fetchone()
            if fp and fp[0] != fingerprint:
                con.execute("ROLLBACK")
                raise RecordLogError(
                    f"the record log {self.path} holds readings of plan {fp[0]}, this sheet "
                    f"is for plan {fingerprint}. The trial's plan changed after readings "
                    "were recorded: keep the old plan, or start a new trial folder.")
            if not fp:
                con.execute("INSERT INTO log_info VALUES ('plan_fingerprint', ?)",
                            (fingerprint,))
            current = {}
            for c, n, f, num, text, rev in con.execute(
                    "SELECT coupon, inspection, field, value_num, value_text, revision "
                    "FROM readings ORDER BY revision"):
                current[(c, n, f)] = (num, text, rev)
            new, stored, unchanged = [], [], 0
            for coupon, inspection, name, value in readings:
                num, text = (value, None) if type(value) is float else _split(value)
                key = (coupon, inspection, name)
                old = current.get(key)
                if old and old[0] == num and old[1] == text:
                    unchanged += 1
                    continue
                rev = old[2] + 1 if old else 1
                current[key] = (num, text, rev)
                new.append((coupon, int(inspection), name, value, rev))
                stored.append((coupon, int(inspection), name, num, text, rev))
            cur = con.execute("INSERT INTO ingests (source, sha256, ingested_at, fingerprint, "
                              "n_values) VALUES (?, ?, ?, ?, ?)",
                              (source, sha256, now, fingerprint, len(new)))
            ingest_id = cur.lastrowid
            rows = [(ingest_id, *row) for row in stored]
            half = len(rows) // 2
            insert = ("INSERT INTO readings (ingest_id, coupon, inspection, field, "
                      "value_num, value_text, revision) VALUES (?, ?, ?, ?, ?, ?, ?)")
            con.executemany(insert, rows[:half])  # in order: the same row ids as one by one
            if rows:
                _test_pause()
            con.executemany(insert, rows[half:])
            # The hash chain: this ingest's link, and the head file written in the same
            # step (pending before the commit, confirmed after it; see records.chain).
            prev = chain.last_hash(con)
            link = chain.link_hash(con, ingest_id, prev)
            con.execute("INSERT INTO chain (ingest_id, prev, hash) VALUES (?, ?, ?)",
                        (ingest_id, prev, link))
            n_ingests = con.execute("SELECT COUNT(*) FROM ingests").fetchone()[0]
            chain.write_head(self.path, prev, n_ingests - 1, pending=link)
            con.execute("COMMIT")
            with contextlib.suppress(OSError):  # stored; verify accepts the pending head
                chain.write_head(self.path, link, n_ingests)
        except sqlite3.DatabaseError as exc:
            if con.in_transaction:
                con.execute("ROLLBACK")
            raise RecordLogError(f"could not write to the record log {self.path}: {exc}. "
                                 "Nothing of this sheet was stored; try again.") from None
        finally:
            con.close()
        return AddResult("accepted" if new else "no_change", _added(new), unchanged,
                         ingest_id, now)


_FIELD_KINDS = {f.name: f.kind for f in COUPON_FIELDS}


def _added(rows: list) -> pd.DataFrame:
    return pd.DataFrame(rows, columns=["coupon", "inspection", "field", "value", "revision"])


def _typed(name: str, column: pd.Series) -> pd.Series:
    if name in ("immersion_start", "immersion_end"):
        return pd.to_datetime(column, format="ISO8601")
    values = column.dropna()
    if len(values) and all(isinstance(v, float) for v in values):
        return column.astype(float)
    if not len(values):
        f = _FIELD_KINDS.get(name)
        if f == "number" or name.startswith("mass_cycle_"):
            return column.astype(float)
    return column.astype(object)


def _test_pause() -> None:
    seconds = os.environ.get(SLEEP_HOOK)
    if not seconds:
        return
    ready = os.environ.get(READY_HOOK)
    if ready:
        Path(ready).write_text("in transaction\n")
    time.sleep(float(seconds))
