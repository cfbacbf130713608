"""Where recording sheets go in a trial folder: one spelling for the command line, the
demo and the notebooks.

>>> from pathlib import Path
>>> [p.as_posix() for p in sheet_paths(Path("my-trial"), "csv", inspections=True)]
['my-trial/sheets/recording_sheet_coupons.csv', 'my-trial/sheets/recording_sheet_inspections.csv']
>>> sheet_paths(Path("my-trial"), "xlsx")[0].as_posix()
'my-trial/sheets/recording_sheet.xlsx'
"""

from __future__ import annotations

from pathlib import Path

#: The trial folder's subfolder for blank and filled sheets.
SHEETS_FOLDER = "sheets"
#: File stem of a blank recording sheet.
SHEET_STEM = "recording_sheet"


def sheet_paths(folder: Path, fmt: str, *, inspections: bool = False,
                out: Path | None = None) -> list[Path]:
    """The files a blank sheet of format ``fmt`` is written to: ``out`` when given (a CSV's
    inspection sheet beside it as ``<stem>_inspections.csv``), else the trial ``folder``'s
    ``sheets/recording_sheet.<fmt>`` (a CSV as ``recording_sheet_coupons.csv`` and, when
    the trial plans inspections, ``recording_sheet_inspections.csv``)."""
    if out is None:
        base = Path(folder) / SHEETS_FOLDER
        if fmt != "csv":
            return [base / f"{SHEET_STEM}.{fmt}"]
        first = base / f"{SHEET_STEM}_coupons.csv"
        second = base / f"{SHEET_STEM}_inspections.csv"
    else:
        first = Path(out)
        second = first.with_name(f"{first.stem}_inspections{first.suffix or '.csv'}")
    return [first, second] if fmt == "csv" and inspections else [first]
