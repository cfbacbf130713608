"""One rule for the numbers people read (report tables, command-line text).

Significant digits, never exponent notation for everyday quantities, no trailing ``.0``
on whole numbers, p-values as ``< 0.001`` below a thousandth.  The JSON outputs keep the
full values.

Examples
--------
>>> [readable(v) for v in (0.0516349, 12345.67, 40.0, 1.007e-08, -1.35e-19, float("nan"))]
['0.05163', '12346', '40', '0.00000001007', '≈ 0', '']
>>> readable_p(1.443e-15), readable_p(0.01372)
('< 0.001', '0.014')
>>> readable_interval(62.4817, 55.0266, 69.9368)
('62', '55', '70')
>>> settings_text({"chelator": 3.9312, "ph": 6.2, "surfactant": "added"},
...               {"chelator": "% w/v", "ph": "pH"})
'chelator 3.93 % w/v, pH 6.2, surfactant = added'
>>> spoken("time_to_clean"), spoken("ph"), spoken("salt:temperature")
('time to clean', 'pH', 'salt × temperature')
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any

#: Columns of an estimate that may stand beside an interval, in order of preference.
VALUE_COLUMNS = ("estimate", "effect", "predicted", "difference", "median", "value")
#: Interval columns written to their width's digits with the estimate beside them.
INTERVAL_COLUMNS = (("ci_low", "ci_high"), ("low", "high"), ("pi_low", "pi_high"),
                    ("pi3_low", "pi3_high"))
#: Standard-error columns: written to two significant digits; beside ``std_error`` (an
#: estimate's own standard error) the estimate, when it has no interval, to the same
#: decimal place.
SE_COLUMNS = ("std_error", "effect_se", "se_fit")
#: Column names that hold p-values.
P_COLUMNS = frozenset({"p", "p_adjusted", "p_value", "p-value", "PR(>F)", "p adj",
                       "p_lack_of_fit"})


def readable(value, digits: int = 4) -> str:
    """A number as a person reads it: ``digits`` significant digits, plain notation for
    magnitudes from 1e-9 to 1e9 (below 1e-9 it is ``≈ 0``: rounding noise of a zero),
    whole numbers without a decimal point."""
    if value is None:
        return ""
    try:
        v = float(value)
    except (TypeError, ValueError):
        return str(value)
    if math.isnan(v):
        return ""
    if math.isinf(v):
        return "∞" if v > 0 else "-∞"
    if v == 0:
        return "0"
    mag = abs(v)
    if mag < 1e-9:
        return "≈ 0"  # below what any reading here resolves: rounding noise of a zero
    if mag >= 1e9:
        return f"{v:.{digits}g}"
    decimals = max(0, digits - 1 - math.floor(math.log10(mag)))
    text = f"{round(v, decimals):.{decimals}f}"
    if "." in text:
        text = text.rstrip("0").rstrip(".")
    return "0" if text in ("-0", "") else text


def readable_unit(unit: str | None) -> str:
    """A unit as a reader writes it: ``g/m**2`` -> ``g/m²``, ``degC`` -> ``°C``."""
    return (str(unit or "").replace("**2", "²").replace("**3", "³").replace("^2", "²")
            .replace("degC", "°C"))


def readable_p(value) -> str:
    """A p-value: ``< 0.001`` below a thousandth, else two significant digits."""
    if value is None:
        return ""
    v = float(value)
    if math.isnan(v):
        return ""
    return "< 0.001" if v < 0.001 else readable(v, 2)


def p_phrase(value) -> str:
    """A p-value in a sentence: ``p < 0.001``, ``p = 0.36``, or ``p not available``.

    >>> p_phrase(2e-9), p_phrase(0.3587), p_phrase(float("nan"))
    ('p < 0.001', 'p = 0.36', 'p not available')
    """
    text = readable_p(value)
    if not text:
        return "p not available"
    return f"p {text}" if text.startswith("<") else f"p = {text}"


def readable_interval(value, low, high, digits: int = 2) -> tuple[str, str, str]:
    """An estimate and its interval written to one decimal place, the one that gives the
    interval's width ``digits`` significant digits (so no digit is quoted that the interval
    does not support).  Falls back to :func:`readable` when the width is zero, not finite,
    or outside plain notation's range.

    >>> readable_interval(0.051634, 0.04012, 0.06318)
    ('0.052', '0.040', '0.063')
    """
    try:
        v, lo, hi = float(value), float(low), float(high)
    except (TypeError, ValueError):
        return readable(value), readable(low), readable(high)
    out = _to_spread([v, lo, hi], abs(hi - lo), digits)
    return out[0], out[1], out[2]


def readable_to_interval(values, low, high, digits: int = 2) -> list[str]:
    """Several numbers written to the decimal place that gives the interval ``low``–``high``
    ``digits`` significant digits (e.g. a prediction, its one-bath and its mean-of-three
    intervals, all to the narrower interval's digits).

    >>> readable_to_interval([80.8213, 67.455, 94.19], 74.93, 86.71)
    ['81', '67', '94']
    """
    try:
        floats = [float(v) for v in values]
        spread = abs(float(high) - float(low))
    except (TypeError, ValueError):
        return [readable(v) for v in values]
    return _to_spread(floats, spread, digits)


def _to_spread(values: list[float], spread: float, digits: int) -> list[str]:
    """``values`` written to the decimal place that gives ``spread`` (an interval's width or
    a standard error) ``digits`` significant digits; :func:`readable` when that is not
    defined."""
    if (not all(math.isfinite(x) for x in values) or not 1e-9 <= spread < 1e9
            or max(abs(x) for x in values) >= 1e9):
        return [readable(x) for x in values]
    decimals = max(0, digits - 1 - math.floor(math.log10(spread)))
    out = []
    for x in values:
        text = f"{round(x, decimals):.{decimals}f}"
        out.append("0" if text.lstrip("-").strip("0.") == "" else text)
    return out


def readable_cell(value, is_p: bool = False, digits: int = 4) -> str:
    """One table cell: numbers by :func:`readable` (or :func:`readable_p` in a p-value
    column), ``None`` empty, booleans and text as they are.

    >>> readable_cell(1.2345e-05), readable_cell(3.2e-07, is_p=True), readable_cell("B01")
    ('0.00001234', '< 0.001', 'B01')
    """
    if value is None:
        return ""
    if isinstance(value, bool) or isinstance(value, str):
        return str(value)
    if hasattr(value, "__float__"):
        return readable_p(value) if is_p else readable(value, digits)
    return str(value)


def readable_frame(table, digits: int = 4):
    """A copy of a pandas DataFrame with every cell as text by :func:`readable_cell`
    (p-value columns, :data:`P_COLUMNS`, as ``< 0.001``), ready for ``to_string`` or
    ``to_html``.  An estimate beside its interval (:data:`VALUE_COLUMNS`,
    :data:`INTERVAL_COLUMNS`) is written to the interval's digits
    (:func:`readable_interval`).

    >>> import pandas as pd
    >>> t = pd.DataFrame({"estimate": [0.0516349], "ci_low": [0.04012], "ci_high": [0.06318]})
    >>> readable_frame(t).iloc[0].tolist()
    ['0.052', '0.040', '0.063']
    >>> readable_frame(pd.DataFrame({"effect": [10.8642], "std_error": [1.23456]})
    ...                ).iloc[0].tolist()
    ['10.9', '1.2']
    """
    out = table.copy()
    for col in out.columns:
        is_p = str(col) in P_COLUMNS
        out[col] = [readable_cell(v, is_p, digits) for v in out[col]]
    cols = [str(c) for c in table.columns]
    value = next((c for c in VALUE_COLUMNS + ("coef",) if c in cols), None)
    has_interval = any(lo in cols and hi in cols for lo, hi in INTERVAL_COLUMNS[:2])
    for se in (c for c in SE_COLUMNS if c in cols):
        # a standard error to two significant digits; an estimate with no interval beside
        # it to the same decimal place
        for i, (v, e) in enumerate(zip(table[value] if value else table[se], table[se],
                                       strict=True)):
            if _is_number(v) and _is_number(e) and float(e) > 0:
                v_text, e_text = _to_spread([float(v), float(e)], float(e), 2)
                out.iloc[i, cols.index(se)] = e_text
                if value and se == "std_error" and not has_interval:
                    out.iloc[i, cols.index(value)] = v_text
    for low, high in INTERVAL_COLUMNS:
        if value is None or low not in cols or high not in cols:
            continue
        # an estimate beside its interval: written to the interval's digits
        for i, (v, lo, hi) in enumerate(zip(table[value], table[low], table[high],
                                            strict=True)):
            if all(_is_number(x) for x in (v, lo, hi)):
                texts = readable_interval(v, lo, hi)
                if low.startswith("ci") or (low, high) == ("low", "high"):
                    out.iloc[i, cols.index(value)] = texts[0]
                out.iloc[i, cols.index(low)], out.iloc[i, cols.index(high)] = texts[1:]
    return out


def _is_number(x) -> bool:
    return hasattr(x, "__float__") and not isinstance(x, (bool, str))


def readable_table(table, digits: int = 4) -> str:
    """A pandas DataFrame as console text, cells by :func:`readable_frame`.

    >>> import pandas as pd
    >>> print(readable_table(pd.DataFrame({"term": ["ph"], "F": [1.23456e6],
    ...                                    "PR(>F)": [2e-9]})))
    term       F  PR(>F)
      ph 1234560 < 0.001
    """
    return readable_frame(table, digits).to_string(index=False)


def settings_text(settings: Mapping[str, Any] | None,
                  units: Mapping[str, str | None] | None = None, digits: int = 3) -> str:
    """Factor settings as a person reads them: ``chelator 3.93 % w/v, pH 6.2, surfactant =
    added``.  ``units`` maps factor names to units; a factor in pH is written ``pH 6.2``."""
    if not settings:
        return ""
    units = units or {}
    parts = []
    for name, value in settings.items():
        unit = readable_unit(units.get(name))
        if isinstance(value, (bool, str)) or not hasattr(value, "__float__"):
            parts.append(f"{name} = {value}")
        elif unit == "pH" or (not unit and str(name).lower() == "ph"):
            parts.append(f"pH {readable(value, digits)}")
        else:
            parts.append(f"{name} {readable(value, digits)}{' ' + unit if unit else ''}")
    return ", ".join(parts)


def spoken(name: str, unit: str | None = None) -> str:
    """A factor's, response's or model term's name as a sentence says it: underscores as
    spaces, a factor named ``ph`` (or measured in pH) as ``pH``, an interaction ``a:b`` as
    ``a × b`` (in an alias chain ``a = b:c`` every part so).  Tables and JSON keep the name
    as the trial file spells it.

    >>> spoken("rust_removed"), spoken("acidity", "pH"), spoken("ph = chelator:temperature")
    ('rust removed', 'pH', 'pH = chelator × temperature')
    >>> spoken("ph^2"), spoken("chelator:ph")
    ('pH²', 'chelator × pH')
    """
    text = str(name)
    if " = " in text:  # an alias chain of a fraction: ``a = b:c``
        return " = ".join(spoken(part) for part in text.split(" = "))
    if ":" in text:
        return " × ".join(spoken(part) for part in text.split(":"))
    if text.endswith("^2"):  # a quadratic term
        return spoken(text[:-2], unit) + "²"
    if unit == "pH" or text.lower() == "ph":
        return "pH"
    return text.replace("_", " ")


def spoken_capitalised(name: str, unit: str | None = None) -> str:
    """:func:`spoken` at the start of a sentence (``pH`` stays ``pH``).

    >>> spoken_capitalised("time_to_clean"), spoken_capitalised("ph")
    ('Time to clean', 'pH')
    """
    text = spoken(name, unit)
    return text if text == "pH" else text[:1].upper() + text[1:]
