"""Read a filled recording sheet into the record log, after checking every cell.

A sheet is accepted or refused as a whole: if any problem is found nothing of it is
stored, and the report lists every problem at once (file, sheet, row as the spreadsheet
shows it, column, value, what to do).  The file itself is only read, never written.

Examples
--------
See :func:`ingest_sheet`; the result is an :class:`IngestReport`.
"""

from __future__ import annotations

import hashlib
import html
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import pandas as pd

from trialkit.exceptions import SheetError
from trialkit.problems import ProblemReport
from trialkit.records.config import SheetConfig, sheet_config
from trialkit.records.sheets.readers import read_sheet_file
from trialkit.records.sheets.validate import Reading, validate_table

#: Status values of an :class:`IngestReport`.
STATUSES = ("accepted", "no_change", "already_ingested", "refused")


@dataclass
class SheetReading:
    """The checked readings of one sheet file, before anything is stored."""

    source: str
    sha256: str
    readings: list[Reading]
    problems: ProblemReport
    layouts: list[str] = field(default_factory=list)


@dataclass
class IngestReport:
    """What an ingest did: accepted values or the problems that refused the sheet.

    Attributes
    ----------
    source : str
        File name of the sheet.
    sha256 : str
        SHA-256 of the file's bytes.
    status : str
        One of :data:`STATUSES`.
    accepted : DataFrame
        Values stored by this ingest: coupon, inspection, field, value, revision.
    unchanged : int
        Values already current in the log (not stored again).
    problems : ProblemReport
        Why the sheet was refused (empty when accepted).
    message : str
        One sentence saying what happened.
    """

    source: str
    sha256: str
    status: str
    accepted: pd.DataFrame
    unchanged: int
    problems: ProblemReport
    message: str

    @property
    def ok(self) -> bool:
        """True unless the sheet was refused."""
        return self.status != "refused"

    @property
    def refused(self) -> pd.DataFrame:
        """The problem table (columns of :attr:`ProblemReport.COLUMNS`)."""
        return self.problems.table()

    def raise_if_refused(self) -> IngestReport:
        """Raise :class:`SheetError` with every problem when refused; else return self."""
        self.problems.raise_if_any(SheetError, f"sheet {self.source} refused")
        return self

    def to_dict(self) -> dict:
        """Plain-data form for JSON."""
        return {
            "source": self.source, "sha256": self.sha256, "status": self.status,
            "message": self.message, "unchanged": self.unchanged,
            "accepted": self.accepted.to_dict("records"),
            "problems": self.problems.to_dict()["problems"],
        }

    def __repr__(self) -> str:
        lines = [f"IngestReport({self.source!r}: {self.status}) - {self.message}"]
        lines += [f"  - {p}" for p in self.problems]
        return "\n".join(lines)

    def _repr_html_(self) -> str:
        head = (f"<p><b>{html.escape(self.source)}</b>: {html.escape(self.status)} &mdash; "
                f"{html.escape(self.message)}</p>")
        if not self.ok:
            return head + "<p>Refused because:</p>" + self.problems._repr_html_()
        if len(self.accepted):
            return head + "<p>Stored:</p>" + self.accepted.to_html(index=False, escape=True)
        return head


def check_sheet(path: str | Path, plan: Any, *, config: SheetConfig | None = None,
                allow_mass_gain: bool = False, data: bytes | None = None) -> SheetReading:
    """Read and check a sheet file against ``plan`` without touching any record log.

    ``data`` are the file's bytes when already read (the file is then not read again).
    """
    path = Path(path)
    data = path.read_bytes() if data is None else data
    sha = hashlib.sha256(data).hexdigest()
    config = config or sheet_config(plan.trial)
    problems = ProblemReport(path.name)
    tables = read_sheet_file(path, data, problems)
    readings: list[Reading] = []
    for raw in tables:
        readings += validate_table(raw, plan, config, problems,
                                   allow_mass_gain=allow_mass_gain)
        for name in config.required if raw.layout == "coupons" else ():
            if name not in raw.names:
                problems.add(raw.tab, f"required column {name!r} is missing", column=name,
                             check="missing_column", fix="export a fresh sheet")
    return SheetReading(path.name, sha, readings, problems, [t.layout for t in tables])


def ingest_sheet(path: str | Path, plan: Any, *, log: Any = None,
                 config: SheetConfig | None = None,
                 allow_mass_gain: bool = False) -> IngestReport:
    """Check a filled sheet and, if it has no problem, store its readings.

    Parameters
    ----------
    path : path-like
        The filled XLSX or CSV sheet (only read).
    plan : Plan
        The trial's plan (the sheet's fingerprint must match ``plan.fingerprint``).
    log : RecordLog, optional
        Where readings go; default: the log in the plan's trial folder.
    config : SheetConfig, optional
        Entry fields; default: the trial's ``[sheet]`` section.
    allow_mass_gain : bool
        Accept masses after cleaning above the initial mass (deposits).

    Returns
    -------
    IngestReport
    """
    from trialkit.records.log import LOG_FILE, RecordLog

    path = Path(path)
    data = path.read_bytes()  # read once: the hash and the checks see the same bytes
    sha = hashlib.sha256(data).hexdigest()
    if log is None and (Path(plan.trial.folder) / LOG_FILE).exists():
        log = RecordLog.for_folder(plan.trial.folder)
    seen = log.ingest_of(sha) if log is not None else None
    empty = pd.DataFrame(columns=["coupon", "inspection", "field", "value", "revision"])
    if seen:
        return IngestReport(path.name, sha, "already_ingested", empty, 0,
                            ProblemReport(path.name),
                            f"this file was already read in on {seen[2]} (as {seen[1]}); "
                            "nothing changed")
    checked = check_sheet(path, plan, config=config, allow_mass_gain=allow_mass_gain,
                          data=data)
    if checked.problems:
        n = len(checked.problems)
        return IngestReport(path.name, checked.sha256, "refused", empty, 0, checked.problems,
                            f"refused: {n} problem{'s' if n != 1 else ''}; nothing was stored")
    if log is None:  # the first accepted sheet creates the log (a refused one leaves none)
        log = RecordLog.for_folder(plan.trial.folder)
    result = log.add_readings(checked.readings, source=path.name, sha256=checked.sha256,
                              fingerprint=str(plan.fingerprint))
    if result.status == "already_ingested":
        msg = f"this file was already read in on {result.first_ingested_at}; nothing changed"
    elif result.status == "no_change":
        msg = (f"every value ({result.unchanged}) equals the recorded one; no new revision"
               if result.unchanged else "the sheet holds no readings yet; nothing to store")
    else:
        revised = int((result.added["revision"] > 1).sum())
        msg = (f"stored {len(result.added)} values ({revised} corrections as new revisions, "
               f"{result.unchanged} unchanged)")
    return IngestReport(path.name, checked.sha256, result.status, result.added,
                        result.unchanged, checked.problems, msg)
