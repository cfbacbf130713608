"""``trialkit verify DIR``: check the record log's hash chain against its head file.

Exit code 0 and a one-line summary when the log is intact; 1 naming the first broken link
otherwise; 2 when there is no log or it cannot be read.  Changes nothing (works on a
read-only folder).
"""

from __future__ import annotations

import argparse


def configure(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("folder", metavar="DIR", nargs="?", default=".",
                        help="trial folder (or the record-log.sqlite file itself; default: "
                        "the current folder)")
    parser.add_argument("--json", action="store_true", help="print the result as JSON")


def run(args: argparse.Namespace) -> int:
    import sqlite3
    from pathlib import Path

    from trialkit.commands._output import print_json
    from trialkit.exceptions import RecordLogError
    from trialkit.records.chain import verify_log
    from trialkit.records.log import LOG_FILE

    path = Path(args.folder)
    if path.is_dir():
        path = path / LOG_FILE
    if not path.exists():
        raise RecordLogError(f"{path}: no record log here; ingest a sheet first "
                             "('trialkit ingest SHEET --trial DIR')")
    if path.stat().st_size == 0:
        raise RecordLogError(f"{path}: the record log is empty (zero bytes): it is damaged "
                             "or was never written; nothing was changed")
    try:
        result = verify_log(path)
    except UnicodeDecodeError:
        raise RecordLogError(f"{path}: cannot be read as a record log (SQLite stopped on "
                             "bytes that are not text): it is damaged; nothing was "
                             "changed") from None
    except sqlite3.DatabaseError as exc:
        raise RecordLogError(f"{path}: cannot be read as a record log ({exc}); it is damaged "
                             "or not a trialkit record log; nothing was changed") from None
    if args.json:
        print_json(result.to_dict())
    else:
        print(result.summary())
        for line in result.broken[1:]:
            print(f"  also: {line}")
        for note in result.notes:
            print(f"  note: {note}")
    return 0 if result.ok else 1
