"""``trialkit new DIR``: write a commented starter trial file into a folder."""

from __future__ import annotations

import argparse
from importlib.resources import files
from pathlib import Path

from trialkit.exceptions import TrialkitError
from trialkit.trial.file import TRIAL_FILE_NAME


def starter_text() -> str:
    """The commented starter trial file shipped with trialkit."""
    return files("trialkit").joinpath("data/starter_trial.toml").read_text(encoding="utf-8")


def configure(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("folder", nargs="?",
                        help="folder to create (or an empty existing one)")
    parser.add_argument("--force", action="store_true",
                        help=f"overwrite an existing {TRIAL_FILE_NAME}")
    parser.add_argument("--measures", action="store_true",
                        help="list the measures a [[response]] may name, and exit")
    parser.add_argument("--explain", action="store_true",
                        help="print the reference of the trial file (every section and "
                        "key), and exit")



def run(args: argparse.Namespace) -> int:
    if args.explain:
        from trialkit.commands.trial_reference import reference_markdown

        print(reference_markdown())
        return 0
    if args.measures:
        from trialkit.responses.measures import measures_text

        print("measures a [[response]] may name (measure = \"...\"):")
        print(measures_text())
        return 0
    if args.folder is None:
        raise TrialkitError("name the folder to create: trialkit new FOLDER "
                            "(or trialkit new --measures for the list of measures)")
    folder = Path(args.folder)
    target = folder / TRIAL_FILE_NAME
    if target.exists() and not args.force:
        raise TrialkitError(f"{target} already exists; nothing was written. "
                            "Use --force to overwrite it, or choose another folder.")
    folder.mkdir(parents=True, exist_ok=True)
    target.write_text(starter_text(), encoding="utf-8")
    print(f"wrote {target}\nnext: edit it, then run  trialkit plan {target}\n"
          "measures a [[response]] may name: trialkit new --measures")
    return 0
