"""``trialkit plan TRIAL.toml``: lay out the plan and write ``plan.csv`` beside it."""

from __future__ import annotations

import argparse
from pathlib import Path


def configure(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("trial", nargs="?", default=".",
                        help="trial file (.toml) or trial folder (default: the current folder)")
    parser.add_argument("--out", metavar="DIR",
                        help="folder for plan.csv and plan.json (default: beside the trial file)")
    parser.add_argument("--json", action="store_true", help="print the plan summary as JSON")


def _refuse_relabelling(plan, out: Path) -> None:
    """A plan written beside readings of another plan would re-label them: refuse."""
    from trialkit.records import log as store

    path = Path(out) / store.LOG_FILE
    if path.exists():
        store.RecordLog(path).check_plan(plan)


def run(args: argparse.Namespace) -> int:
    from trialkit.commands._output import load_checked_plan, print_json

    plan = load_checked_plan(args.trial)
    out = Path(args.out) if args.out else plan.trial.folder
    _refuse_relabelling(plan, out)
    path = plan.write(out)
    if args.json:
        data = plan.to_dict()
        data["plan_csv"] = str(path)
        print_json(data)
    else:
        print(plan.summary())
        print(f"  wrote       {path}")
    return 0
