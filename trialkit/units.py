"""Units at the boundaries: one pint registry for the whole package.

Inside trialkit quantities are plain floats in one unit system (SI-style lab units:
g, L, cm², h, °C, mol).  Units written by people (trial files, sheets, the command line)
are parsed here.  Besides everything pint knows, a few labels of the trade are accepted
as units: the concentration bases ``% w/v``, ``% w/w``, ``% v/v``, the pH scale and
plain ``%``.

pint is imported and its registry built on first need: the two together take about as
long as importing pandas.  Checking a unit of :data:`COMMON_UNITS` (each one pint knows,
checked against the registry in ``tests/test_units.py``), or reading a bare number in the
unit it is asked in, needs no registry, so laying out a plan usually loads no pint.

Examples
--------
>>> check_unit("% w/v")
'% w/v'
>>> round(to_unit("2 L", "mL"), 6)
2000.0
>>> round(to_unit("25 degC", "kelvin"), 2)
298.15
"""

from __future__ import annotations

from functools import lru_cache
from typing import Any

from trialkit.exceptions import TrialkitError

#: Labels of the trade accepted as units though pint does not know them.
TRADE_UNITS: tuple[str, ...] = ("% w/v", "% w/w", "% v/v", "pH", "%", "")

#: Concentration bases a bath ingredient may be given in.
CONCENTRATION_BASES: tuple[str, ...] = ("% w/v", "% w/w", "g/L", "mol/L")


#: Unit spellings common in trial files, all known to pint: :func:`check_unit` accepts
#: them without building the registry.
COMMON_UNITS: frozenset[str] = frozenset({
    "degC", "degF", "K", "kelvin",
    "s", "min", "minute", "h", "hour", "d", "day", "week",
    "mg", "g", "kg", "mL", "L", "um", "µm", "mm", "cm", "m", "mm**2", "cm**2", "m**2",
    "mg/L", "g/L", "g/mL", "mL/L", "mmol/L", "mol/L",
    "g/m**2", "mg/cm**2", "g/cm**2", "g/m**2/h", "mg/cm**2/h",
    "mm/yr", "mm/year", "um/yr", "µm/yr",
    "rpm", "V", "mV", "mS/cm", "uS/cm", "µS/cm",
})


class UnitError(TrialkitError):
    """A unit or quantity that cannot be read."""


@lru_cache(maxsize=1)
def registry() -> Any:
    """The package's single :class:`pint.UnitRegistry` (created on first use)."""
    import pint

    ureg = pint.UnitRegistry(autoconvert_offset_to_baseunit=True)
    ureg.define("US_gallon = 3.785411784 * liter = usgal")  # NIST SP 811, exact
    return ureg


def normalise_trade_unit(text: str) -> str | None:
    """Return the canonical trade label for ``text`` (spacing and case ignored) or ``None``."""
    squeezed = "".join(str(text).split()).lower()
    for label in TRADE_UNITS:
        if squeezed == "".join(label.split()).lower():
            return label
    return None


def check_unit(text: str) -> str:
    """Return ``text`` if pint or the trade labels know it, else raise :class:`UnitError`."""
    label = normalise_trade_unit(text)
    if label is not None:
        return label
    if str(text) in COMMON_UNITS:
        return str(text)
    try:
        registry().Unit(str(text))
    except Exception as exc:  # pint raises several types
        raise UnitError(
            f"unknown unit {text!r}: {exc}. Use a unit such as 'g/L', 'degC', 'min', 'h', "
            f"or one of {', '.join(repr(u) for u in TRADE_UNITS if u)}"
        ) from None
    return str(text)


def quantity(text: str | float, default_unit: str | None = None) -> Any:
    """Parse ``"2 L"`` (or a bare number with ``default_unit``) into a pint Quantity."""
    ureg = registry()
    if isinstance(text, (int, float)):
        if default_unit is None:
            raise UnitError(f"the number {text} needs a unit, e.g. '{text} L'")
        return ureg.Quantity(float(text), default_unit)
    try:
        q = ureg.Quantity(str(text).strip())
    except Exception as exc:
        raise UnitError(f"cannot read the quantity {text!r}: {exc}") from None
    if isinstance(q, (int, float)) or q.dimensionless and default_unit:
        if default_unit is None:
            raise UnitError(f"the quantity {text!r} has no unit; write it like '2 L'")
        return ureg.Quantity(float(q.magnitude if hasattr(q, "magnitude") else q), default_unit)
    return q


def to_unit(text: str | float, unit: str, default_unit: str | None = None) -> float:
    """Parse a quantity and return its magnitude in ``unit``.

    Raises :class:`UnitError` when the dimensions do not match (e.g. ``"2 kg"`` as a volume).
    A bare number whose ``default_unit`` is ``unit`` is returned as a float without pint.
    """
    if isinstance(text, (int, float)) and default_unit is not None and default_unit == unit:
        return float(text)
    q = quantity(text, default_unit)
    try:
        return float(q.to(unit).magnitude)
    except Exception:
        raise UnitError(
            f"{text!r} cannot be expressed in {unit!r}: its unit is {q.units:~}"
        ) from None
