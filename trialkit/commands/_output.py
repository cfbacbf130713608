"""Small helpers shared by the command modules: JSON printing, finding the trial folder,
loading a checked plan."""

from __future__ import annotations

import json
import math
import sys
from pathlib import Path
from typing import Any


def _clean(value: Any) -> Any:
    """Turn numpy scalars, NaN and tuples into JSON-ready plain values."""
    try:
        import numpy as np

        if isinstance(value, np.generic):
            value = value.item()
    except ImportError:  # pragma: no cover
        pass
    if isinstance(value, float) and not math.isfinite(value):
        return None
    if isinstance(value, dict):
        return {str(k): _clean(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_clean(v) for v in value]
    return value


def print_json(data: Any) -> None:
    """Print ``data`` as indented JSON (NaN becomes null) to standard output."""
    json.dump(_clean(data), sys.stdout, indent=2, allow_nan=False)
    sys.stdout.write("\n")


def check_record_log(folder: str) -> None:
    """A damaged record log refuses the report and the analysis of the whole trial (rather
    than results that leave the readings out)."""
    from trialkit.records.log import LOG_FILE, RecordLog

    path = Path(folder) / LOG_FILE
    if Path(folder).is_dir() and path.exists():
        RecordLog(path)  # runs SQLite's integrity check; RecordLogError if damaged


def trial_folder_for(explicit: str | None, near: str | Path | None = None) -> str:
    """The trial folder a command works on.

    ``explicit`` when given; else the current folder when it holds a trial file; else the
    nearest folder holding one among ``near`` and its parents (a sheet filled in
    ``TRIAL/sheets/`` belongs to ``TRIAL``).

    Raises
    ------
    SheetError
        When no trial file is found: names where it looked and how to say which trial.
    """
    from trialkit.exceptions import SheetError
    from trialkit.trial.file import TRIAL_FILE_NAME

    if explicit is not None:
        return explicit
    if (Path.cwd() / TRIAL_FILE_NAME).is_file():
        return "."
    if near is not None:
        start = Path(near).resolve()
        for folder in [start, *start.parents] if start.is_dir() else start.parents:
            if (folder / TRIAL_FILE_NAME).is_file():
                return str(folder)
    where = f" nor beside {near} or above it" if near is not None else ""
    raise SheetError(f"no {TRIAL_FILE_NAME} in the current folder{where}; say which trial "
                     "with --trial DIR (the folder holding its trial file)")


def load_checked_plan(folder):
    """The plan of the trial in ``folder`` (:func:`trialkit.planning.plan.load_plan`), with
    the checks that need the response layer: every response names a known measure and the
    coupon metal has a density when a response needs one (a :class:`TrialFileError`
    listing the problems otherwise).  Every command that works from a plan uses it, so a
    trial file edited after planning is checked again before bench work."""
    from trialkit.planning.plan import load_plan
    from trialkit.responses.materials import check_coupon_metal
    from trialkit.responses.measures import check_measures

    plan = load_plan(folder)
    check_measures(plan.trial)
    check_coupon_metal(plan.trial)
    return plan
