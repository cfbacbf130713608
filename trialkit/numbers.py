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
>>> settings_text({"chelator": 3.9312, "ph": 6.2, "surfactant": "added"},
...               {"chelator": "% w/v", "ph": "pH"})
'chelator 3.93 % w/v, pH 6.2, surfactant = added'
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any

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
