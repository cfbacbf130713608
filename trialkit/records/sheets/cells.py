"""Read the value of sheet cells: one cell at a time, or a whole column at once.

The one-cell rules (:func:`shown_text`, :func:`parse_number`, :func:`parse_datetime`) are
what :mod:`trialkit.records.sheets.validate` judges every cell by.  :func:`entry_column`
applies the same rules to a whole column of entry cells at once (numbers converted in one
numpy call) and flags every cell that it did not settle itself: a cell that breaks a rule,
or that is unusual enough (a decimal comma, a value of an unexpected type) to be judged
one by one.  The flagged cells go back to the one-cell rules, which give the problem; so
the column reading is only a faster way to the same values, never a second set of rules.

Examples
--------
>>> from trialkit.records.fields import FIELDS_BY_NAME
>>> values, flagged = entry_column(["12.5", "", "abc", "101"],
...                                FIELDS_BY_NAME["coverage_after_pct"], from_csv=True,
...                                decimal_comma=False)
>>> values[:2], flagged.tolist()
([12.5, None], [False, False, True, True])
"""

from __future__ import annotations

import datetime as dt
import math
import re
from typing import Any

import numpy as np

from trialkit.records.fields import Field
from trialkit.records.sheets.textsafe import unescape_text

_DECIMAL_COMMA = re.compile(r"^[+-]?\d+,\d+$")
#: Integers beyond this size are left to the one-cell rules (float() decides).
_SAFE_INT = 2**53


def shown_text(v: Any, from_csv: bool) -> str:
    """A cell as text, the way problems quote it and text fields store it."""
    if v is None:
        return ""
    if isinstance(v, float) and v.is_integer():
        v = int(v)
    s = v.isoformat(sep=" ") if isinstance(v, (dt.datetime, dt.date)) else str(v)
    return unescape_text(s) if from_csv else s


def parse_number(v: Any, decimal_comma: bool) -> float:
    """A cell as a finite number; ``ValueError`` (or ``TypeError``) when it is none."""
    if isinstance(v, bool):
        raise ValueError
    if isinstance(v, (int, float)):
        x = float(v)
    else:
        s = str(v).strip()
        if decimal_comma and _DECIMAL_COMMA.match(s):
            s = s.replace(",", ".")
        x = float(s)
    if not math.isfinite(x):
        raise ValueError
    return x


def parse_datetime(v: Any) -> str:
    """A cell as an ISO 8601 date and time to the second; ``ValueError`` when it is none."""
    if isinstance(v, dt.datetime):
        return v.replace(microsecond=0).isoformat()
    if isinstance(v, dt.date):
        return dt.datetime(v.year, v.month, v.day).isoformat()
    if isinstance(v, (int, float)):
        raise ValueError
    return dt.datetime.fromisoformat(str(v).strip()).replace(microsecond=0).isoformat()


def blank(v: Any) -> bool:
    """An empty cell: nothing, or only white space."""
    return v is None or (isinstance(v, str) and not v.strip())


def number_column(cells: list[Any], decimal_comma: bool) -> tuple[np.ndarray, np.ndarray,
                                                                    np.ndarray]:
    """Numbers of a column of cells, by the rules of :func:`parse_number`.

    Returns the values (NaN where there is none), a mask of blank cells and a mask of
    cells left to the one-cell rules: not a finite number, or not settled here.
    """
    n = len(cells)
    x = np.full(n, np.nan)
    empty = np.zeros(n, dtype=bool)
    flagged = np.zeros(n, dtype=bool)
    at: list[int] = []
    texts: list[str] = []
    for i, v in enumerate(cells):
        kind = type(v)
        if v is None:
            empty[i] = True
        elif kind is float or (kind is int and -_SAFE_INT < v < _SAFE_INT):
            x[i] = v
        elif kind is str:
            s = v.strip()
            if not s:
                empty[i] = True
            elif decimal_comma and "," in s:
                flagged[i] = True
            else:
                at.append(i)
                texts.append(s)
        else:  # bool, datetime, a huge integer ...: one by one
            flagged[i] = True
    if texts:
        try:
            x[at] = np.array(texts, dtype=object).astype(float)  # float() of each
        except (TypeError, ValueError, OverflowError):
            for i, s in zip(at, texts, strict=True):
                try:
                    x[i] = float(s)
                except (TypeError, ValueError, OverflowError):
                    flagged[i] = True
    with np.errstate(invalid="ignore"):
        flagged |= ~empty & ~np.isfinite(x)
    return x, empty, flagged


def entry_column(cells: list[Any], field: Field, *, from_csv: bool,
                 decimal_comma: bool) -> tuple[list[Any], np.ndarray]:
    """The values of a column of entry cells and the cells left to the one-cell rules.

    A value is None for a blank cell and for a flagged one.  Numbers must also keep the
    field's range (and 0-100 for a percentage) to go unflagged.
    """
    n = len(cells)
    if field.kind == "number":
        x, empty, flagged = number_column(cells, decimal_comma)
        with np.errstate(invalid="ignore"):
            if field.unit == "%":
                flagged |= ~empty & ~((x >= 0.0) & (x <= 100.0))
            if field.minimum is not None:
                flagged |= ~empty & (x < field.minimum)
            if field.maximum is not None:
                flagged |= ~empty & (x > field.maximum)
        values = [None if e or f else v
                  for v, e, f in zip(x.tolist(), empty.tolist(), flagged.tolist(),
                                     strict=True)]
        return values, flagged
    flagged = np.zeros(n, dtype=bool)
    values: list[Any] = [None] * n
    lowered = {c.lower(): c for c in field.choices}
    for i, v in enumerate(cells):
        if blank(v):
            continue
        if field.kind == "datetime":
            try:
                values[i] = parse_datetime(v)
            except (TypeError, ValueError):
                flagged[i] = True
        elif field.kind == "choice":
            hit = lowered.get(shown_text(v, from_csv).strip().lower())
            if hit is None:
                flagged[i] = True
            values[i] = hit
        else:
            values[i] = shown_text(v, from_csv)
    return values, flagged
