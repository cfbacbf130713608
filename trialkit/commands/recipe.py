"""``trialkit recipe TRIAL``: the mixing sheet (CSV and printable HTML) of a plan."""

from __future__ import annotations

import argparse
from pathlib import Path

from trialkit.commands._output import print_json


def configure(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("trial", nargs="?", default=".",
                        help="trial file (trial.toml) or its folder (default: the current folder)")
    parser.add_argument("--out", default=None,
                        help="folder for mixing_sheet.csv and mixing_sheet.html "
                             "(default: beside the trial file)")
    parser.add_argument("--json", action="store_true", help="print the sheet as JSON")


def run(args: argparse.Namespace) -> int:
    from trialkit.chemistry.mixing_sheet import recipes_for_plan
    from trialkit.commands._output import load_checked_plan

    plan = load_checked_plan(args.trial)
    sheet = recipes_for_plan(plan)
    folder = Path(args.out) if args.out else Path(plan.trial.folder)
    folder.mkdir(parents=True, exist_ok=True)
    csv = sheet.write_csv(folder / "mixing_sheet.csv")
    page = sheet.write_html(folder / "mixing_sheet.html")
    if args.json:
        print_json(sheet.to_dict())
        return 0
    print(sheet.summary())
    print(f"wrote {csv}\nwrote {page}")
    print("cautions:")
    for c in sheet.cautions:
        print(f"  - {c}")
    return 0
