"""``trialkit sheet DIR --format xlsx|csv|html [--out FILE]``: export recording sheets."""

from __future__ import annotations

import argparse
from pathlib import Path

from trialkit.records.sheet_names import SHEET_STEM, SHEETS_FOLDER


def configure(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("folder", metavar="DIR", nargs="?", default=".",
                        help="trial folder (holds trial.toml) (default: the current folder)")
    parser.add_argument("--format", dest="fmt", choices=("xlsx", "csv", "html"),
                        default="xlsx", help="sheet format (default xlsx)")
    parser.add_argument("--out", metavar="FILE", default=None,
                        help=f"file to write (default DIR/{SHEETS_FOLDER}/{SHEET_STEM}.FORMAT,"
                             f" a CSV as {SHEET_STEM}_coupons.csv); a CSV inspection sheet "
                             "goes beside it as NAME_inspections.csv")
    parser.add_argument("--paper", choices=("A4", "Letter"), default=None,
                        help="paper size of the HTML bench sheet (default from [sheet])")
    parser.add_argument("--json", action="store_true", help="print the files written as JSON")


def run(args: argparse.Namespace) -> int:
    from trialkit.commands._output import load_checked_plan, print_json
    from trialkit.records.config import sheet_config
    from trialkit.records.sheet_names import sheet_paths

    plan = load_checked_plan(args.folder)
    config = sheet_config(plan.trial)
    folder = plan.trial.folder or Path(args.folder)
    out = Path(args.out) if args.out else None
    if out is not None and out.is_dir():  # --out names a folder: the sheet goes inside it
        out = out / f"{SHEET_STEM}.{args.fmt}"
    paths = sheet_paths(folder, args.fmt, inspections=config.has_timecourse, out=out)
    _refuse_links(*paths)
    paths[0].parent.mkdir(parents=True, exist_ok=True)
    written: list[Path] = []
    if args.fmt == "xlsx":
        from trialkit.records.sheets.export_xlsx import export_xlsx

        written.append(export_xlsx(plan, paths[0], config=config))
    elif args.fmt == "csv":
        from trialkit.records.sheets.export_csv import export_csv

        written.append(export_csv(plan, paths[0], layout="coupons", config=config))
        if len(paths) > 1:
            written.append(export_csv(plan, paths[1], layout="inspections", config=config))
    else:
        from trialkit.records.sheets.export_html import export_html

        written.append(export_html(plan, paths[0], config=config, paper=args.paper))
    if args.json:
        print_json({"fingerprint": plan.fingerprint, "files": [str(p) for p in written]})
    else:
        for p in written:
            print(f"wrote {p} (plan fingerprint {plan.fingerprint})")
    return 0


def _refuse_links(*paths: Path) -> None:
    """Never write a sheet through a symbolic link (it would overwrite the link's target)."""
    from trialkit.exceptions import TrialkitError

    for p in paths:
        if p.is_symlink():
            raise TrialkitError(f"{p} is a symbolic link; trialkit does not write through "
                                "links (that would overwrite the link's target). Remove the "
                                "link or choose another --out.")
        if p.is_dir():
            raise TrialkitError(f"{p} is a folder; choose another --out")
