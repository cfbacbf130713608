"""Small helpers shared by the command modules: JSON printing."""

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
