"""Limits on what a trial may ask for, and the checks that run on the whole trial file first.

The limits are set well above any real trial (a bench trial has tens of baths and a few
hundred coupons) so that a typing slip (``replicates = 1000000``) is refused at once, before
anything is allocated, instead of running out of memory.  Every message states the limit.

:func:`check_document` walks the whole TOML document before the section checks: every
number must be finite (TOML allows ``nan`` and ``inf``), nesting stays shallow, and text
holds no control characters (other than tab and line breaks) and no hidden direction
marks.  :func:`text` reads a key that must be text.

=====================  =================================================================
check                  meaning
=====================  =================================================================
not_finite             a number is ``nan``, ``inf`` or ``-inf``
too_deep               arrays or tables nested deeper than :data:`MAX_DEPTH`
control_character      text holds a control character (``\\x00`` ...)
hidden_character       text holds a direction override or other invisible format mark
text_too_long          text longer than :data:`MAX_TEXT`
not_text               a key that takes text got a number, list or table
over_limit             a count above its limit (the limit is in the message)
out_of_range           a physical quantity outside its plausible range
=====================  =================================================================

Examples
--------
>>> from trialkit.problems import ProblemReport
>>> p = ProblemReport("trial.toml")
>>> check_document({"layout": {"replicates": float("nan")}}, p)
>>> p.checks(), [x.where for x in p]
(['not_finite'], ['layout.replicates'])
"""

from __future__ import annotations

import math
import unicodedata
from typing import Any

from trialkit.problems import ProblemReport

#: Largest counts a trial may ask for (per key, then for the whole plan).
MAX_REPLICATES = 100
MAX_BLOCKS = 100
MAX_CENTER_POINTS = 100
MAX_COUPONS_PER_BATH = 100
MAX_WITNESS_COUPONS = 100
MAX_FACTORS = 50
MAX_LEVELS = 100
MAX_INSPECTIONS = 200
MAX_CLEANING_CYCLES = 20
MAX_DESIGN_POINTS = 5_000
MAX_BATHS = 5_000
MAX_COUPONS = 20_000
#: Search effort of the design builders (Latin hypercube, optimal designs).
MAX_SEARCH = 1_000
MAX_GRID = 101

#: Plausible coupon sizes (mm) and areas (cm²): from a strip of foil to a large panel.
COUPON_MM = (0.01, 2_000.0)
COUPON_AREA_CM2 = (0.01, 50_000.0)

MAX_DEPTH = 6
MAX_TEXT = 20_000
_ALLOWED_CONTROLS = "\t\n\r"


def check_document(doc: Any, p: ProblemReport) -> None:
    """Add a problem for every non-finite number, deep nesting and bad character."""
    _walk(doc, "", 0, p)


def _walk(value: Any, where: str, depth: int, p: ProblemReport) -> None:
    if isinstance(value, dict):
        if depth > MAX_DEPTH:
            p.add(where, f"tables and arrays are nested more than {MAX_DEPTH} deep",
                  check="too_deep", fix="write the value the key expects (see 'trialkit new')")
            return
        for key, item in value.items():
            _check_text(key, f"{where}.{key}" if where else str(key), p, is_key=True)
            _walk(item, f"{where}.{key}" if where else str(key), depth + 1, p)
    elif isinstance(value, list):
        if depth > MAX_DEPTH:
            p.add(where, f"tables and arrays are nested more than {MAX_DEPTH} deep",
                  check="too_deep", fix="write the value the key expects (see 'trialkit new')")
            return
        for i, item in enumerate(value, start=1):
            _walk(item, f"{where}[{i}]", depth + 1, p)
    elif isinstance(value, float) and not math.isfinite(value):
        p.add(where, "every number must be finite", value=value, check="not_finite",
              fix="write a plain number; nan and inf are not values a trial can use")
    elif isinstance(value, str):
        _check_text(value, where, p)


def _check_text(value: str, where: str, p: ProblemReport, is_key: bool = False) -> None:
    what = "a key" if is_key else "text"
    if len(value) > MAX_TEXT:
        p.add(where, f"{what} longer than {MAX_TEXT} characters", value=short(value),
              check="text_too_long", fix="shorten it")
        return
    bad = [c for c in value if unicodedata.category(c) == "Cc" and c not in _ALLOWED_CONTROLS]
    if bad:
        p.add(where, f"{what} holds a control character ({ascii(bad[0])})", value=short(value),
              check="control_character", fix="retype it without the invisible character")
        return
    hidden = [c for c in value if unicodedata.category(c) == "Cf"]
    if hidden:
        p.add(where, f"{what} holds an invisible format character ({ascii(hidden[0])}) that "
              "can make text read differently from what it says", value=short(value),
              check="hidden_character", fix="retype it without the invisible character")


def short(value: Any, n: int = 60) -> str:
    """``value`` as text, cut to ``n`` characters with the length said (for messages)."""
    text = value if isinstance(value, str) else repr(value)
    if len(text) <= n:
        return text
    return f"{text[:n]}... ({len(text)} characters)"


def text(table: dict, key: str, where: str, p: ProblemReport, default: str = "") -> str:
    """The text at ``table[key]`` (``default`` if absent); a problem if it is not text."""
    value = table.get(key, default)
    if isinstance(value, str):
        return value
    p.add(f"{where}.{key}" if where else key, f"{key} must be text (in quotes)",
          value=short(value), check="not_text", fix=f'write {key} = "..."')
    return default


def at_most(value: int, limit: int, where: str, what: str, p: ProblemReport) -> bool:
    """False (and a problem) when ``value`` is above ``limit``."""
    if value > limit:
        p.add(where, f"{what} is limited to {limit:,} (set well above any real trial)",
              value=value, check="over_limit",
              fix=f"use {limit:,} or fewer; split a larger programme into several trials")
        return False
    return True
