"""Exact decimal handling of responses before any floating-point arithmetic.

Sums of squares lose digits when responses share many leading digits (values near
10^12 that differ in the 13th digit).  Shifting *after* converting text to float keeps
the representation error of every value (about 10^-4 at 10^12), so the shift is done on
the numbers' exact decimal text: each value becomes a :class:`decimal.Decimal`, a common
shift (the median, rounded to the data's own decimals) is subtracted exactly, and only
the small remainders are converted to float.  Floats given as numbers are read through
their shortest round-trip text (``repr``), which is the decimal a person typed.

Examples
--------
>>> shifted, shift = shift_decimal(["1000000000000.4", "1000000000000.3",
...                                 "1000000000000.5"])
>>> shifted.tolist(), str(shift)
([0.0, -0.1, 0.1], '1000000000000.4')
>>> exact_sum_of_squares(["1000000000000.4", "1000000000000.3", "1000000000000.5"])
Fraction(1, 50)
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from decimal import Decimal, InvalidOperation
from fractions import Fraction

import numpy as np

from trialkit.exceptions import AnalysisError


def to_decimals(values: Iterable[object], *, name: str = "response") -> list[Decimal]:
    """Exact decimals from text or numbers; text that is not a number raises.

    Raises
    ------
    AnalysisError
        Naming the first bad values and their 1-based positions.
    """
    out: list[Decimal] = []
    bad: list[str] = []
    for i, v in enumerate(values, start=1):
        if isinstance(v, (float, np.floating)):
            text = repr(float(v))
        elif isinstance(v, (int, np.integer)) and not isinstance(v, bool):
            text = str(int(v))
        else:
            text = str(v).strip()
        try:
            d = Decimal(text)
        except InvalidOperation:
            bad.append(f"row {i}: {text!r}")
            continue
        if not d.is_finite():
            bad.append(f"row {i}: {text!r}")
            continue
        out.append(d)
    if bad:
        raise AnalysisError(
            f"column {name!r} must hold numbers; found {len(bad)} value(s) that are not: "
            + "; ".join(bad[:5]) + ("; ..." if len(bad) > 5 else "")
            + ". Fix those cells (or leave them empty to drop the row).")
    return out


def shift_decimal(values: Sequence[object], *, name: str = "response"
                  ) -> tuple[np.ndarray, Decimal]:
    """Subtract a common decimal shift exactly, then convert to float.

    Returns
    -------
    shifted : ndarray of float
        ``value - shift`` for each value, correctly rounded once.
    shift : Decimal
        The median value (exact), to add back to location estimates.
    """
    decs = to_decimals(values, name=name)
    if not decs:
        return np.zeros(0), Decimal(0)
    shift = sorted(decs)[len(decs) // 2]
    return np.array([float(d - shift) for d in decs]), shift


def exact_sum_of_squares(values: Sequence[object]) -> Fraction:
    """Sum of squared deviations from the mean, in exact rational arithmetic."""
    fr = [Fraction(d) for d in to_decimals(values)]
    if not fr:
        return Fraction(0)
    mean = sum(fr, Fraction(0)) / len(fr)
    return sum(((v - mean) ** 2 for v in fr), Fraction(0))


def exact_oneway(groups: Sequence[object], values: Sequence[object]) -> dict[str, Fraction]:
    """One-way ANOVA sums of squares in exact rational arithmetic (a cross-check).

    Returns ``{"ss_between", "ss_within", "ss_total"}`` as Fractions.
    """
    fr = [Fraction(d) for d in to_decimals(values)]
    keys = list(groups)
    if len(keys) != len(fr):
        raise AnalysisError(f"{len(keys)} group labels for {len(fr)} values")
    by: dict[object, list[Fraction]] = {}
    for k, v in zip(keys, fr, strict=True):
        by.setdefault(k, []).append(v)
    grand = sum(fr, Fraction(0)) / len(fr)
    between = sum((len(g) * (sum(g, Fraction(0)) / len(g) - grand) ** 2 for g in by.values()),
                  Fraction(0))
    within = Fraction(0)
    for g in by.values():
        m = sum(g, Fraction(0)) / len(g)
        within += sum(((v - m) ** 2 for v in g), Fraction(0))
    return {"ss_between": between, "ss_within": within, "ss_total": between + within}


def significant_digits(value: float, certified: float | Decimal | str) -> float:
    """Log relative error: ``-log10(|value - c| / |c|)`` (capped at 16 for exact hits)."""
    c = float(Decimal(str(certified)))
    if c == 0.0:
        return 16.0 if value == 0.0 else float(-np.log10(abs(value)))
    err = abs(float(Decimal(repr(float(value))) - Decimal(str(certified)))) / abs(c)
    return 16.0 if err == 0.0 else float(min(16.0, -np.log10(err)))
