"""``trialkit history DIR [--coupon ID] [--json]``: every recorded value and revision."""

from __future__ import annotations

import argparse


def configure(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("folder", metavar="DIR", nargs="?", default=".",
                        help="trial folder (holds the record log) (default: the current folder)")
    parser.add_argument("--coupon", metavar="ID", default=None, help="only this coupon")
    parser.add_argument("--json", action="store_true",
                        help="print a JSON list of {coupon, inspection, field, value, "
                             "revision, source, sha256, ingested_at}")


def run(args: argparse.Namespace) -> int:
    from pathlib import Path

    from trialkit.commands._output import print_json
    from trialkit.exceptions import RecordLogError
    from trialkit.records.log import LOG_FILE, RecordLog
    from trialkit.trial.file import find_trial_file

    folder = find_trial_file(args.folder).parent
    if not (Path(folder) / LOG_FILE).exists():
        raise RecordLogError(f"{folder}: no record log ({LOG_FILE}) yet; read a filled sheet "
                             "in first with 'trialkit ingest SHEET --trial DIR'")
    hist = RecordLog.for_folder(folder).history(args.coupon)
    if args.json:
        print_json(hist.to_dict("records"))
    elif hist.empty:
        print("no values recorded" + (f" for coupon {args.coupon}" if args.coupon else ""))
    else:
        print(hist.to_string(index=False))
    return 0
