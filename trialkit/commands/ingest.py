"""``trialkit ingest SHEET [--trial DIR]``: check a filled sheet and store its readings.

Exit code 0 when the sheet was accepted (or had nothing new), 1 when it was refused.
"""

from __future__ import annotations

import argparse


def configure(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("sheet", metavar="SHEET", help="filled sheet (.xlsx or .csv)")
    parser.add_argument("--trial", metavar="DIR", default=None,
                        help="trial folder whose plan and record log the sheet belongs to "
                        "(default: the current folder when it holds trial.toml, else the "
                        "nearest folder above the sheet that does)")
    parser.add_argument("--allow-mass-gain", action="store_true",
                        help="accept masses after cleaning above the initial mass (deposits)")
    parser.add_argument("--json", action="store_true", help="print the ingest report as JSON")


def run(args: argparse.Namespace) -> int:
    from pathlib import Path

    from trialkit.commands._output import load_checked_plan, print_json, trial_folder_for
    from trialkit.records.sheets.ingest import ingest_sheet

    if not Path(args.sheet).is_file():
        raise FileNotFoundError(2, "no such file", args.sheet)
    plan = load_checked_plan(trial_folder_for(args.trial, near=args.sheet))
    report = ingest_sheet(args.sheet, plan, allow_mass_gain=args.allow_mass_gain)
    if args.json:
        print_json(report.to_dict())
    else:
        print(f"{report.source}: {report.message}")
        for p in report.problems:
            print(f"  - {p}")
        head = _log_head(plan.trial.folder)
        if report.ok and head:
            print(f"  record log head {head} (check it with 'trialkit verify')")
    return 0 if report.ok else 1


def _log_head(folder) -> str:
    """The first 16 hex digits of the record log's head (``""`` when there is none)."""
    import json

    from trialkit.records.chain import head_path
    from trialkit.records.log import LOG_FILE

    try:
        return json.loads(head_path(folder / LOG_FILE).read_text(encoding="utf-8"))["head"][:16]
    except (OSError, ValueError, KeyError, TypeError):
        return ""
