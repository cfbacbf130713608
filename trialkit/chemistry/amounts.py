"""Amounts of bath ingredients: concentration bases and grams to weigh.

An amount is a number with a basis: ``% w/v`` (g per 100 mL of bath), ``% w/w`` (g per
100 g of bath), ``g/L``, ``mol/L``, and for liquids ``mL/L`` or ``% v/v``.  Mass and mole
bases refer to the pure anhydrous compound unless the text ends in ``as supplied``, in
which case they refer to the product as it comes from the pack (hydrate water, assay and,
for solutions, strength included).

Examples
--------
>>> a = parse_amount("5 % w/v")
>>> a.value, a.basis, a.as_supplied
(5.0, '% w/v', False)
>>> parse_amount("5 g/100 mL as supplied").basis
'g/L'
"""

from __future__ import annotations

import re
from dataclasses import dataclass

from trialkit.chemistry.catalogue import Ingredient
from trialkit.exceptions import ChemistryError

#: Bases an amount may be written in.
BASES = ("% w/v", "% w/w", "g/L", "mol/L", "mL/L", "% v/v")
#: Bath density assumed for % w/w when none is given, g/mL.
DEFAULT_BATH_DENSITY = 1.0

_SUPPLIED = re.compile(r"\s+as\s+supplied\s*$", re.IGNORECASE)
_ANHYDROUS = re.compile(r"\s+as\s+(anhydrous|active|pure)\s*$", re.IGNORECASE)


@dataclass(frozen=True)
class Amount:
    """A concentration of one ingredient in a bath."""

    value: float
    basis: str
    as_supplied: bool = False

    def __str__(self) -> str:
        tail = " as supplied" if self.as_supplied else ""
        return f"{self.value:g} {self.basis}{tail}"


def parse_amount(text: str | float, *, default_basis: str | None = None) -> Amount:
    """Read ``"5 % w/v"``, ``"50 g/L"``, ``"0.1 mol/L"``, ``"2 mL/L"``, ``"1 % v/v"``.

    Raises :class:`ChemistryError` for an unknown basis, a zero or negative amount, or a
    percentage over 100.
    """
    if isinstance(text, (int, float)) and not isinstance(text, bool):
        if default_basis is None:
            raise ChemistryError(f"the amount {text} needs a basis, e.g. '{text} % w/v'; "
                                 f"allowed bases: {', '.join(BASES)}")
        text = f"{text} {default_basis}"
    raw = str(text).strip()
    as_supplied = bool(_SUPPLIED.search(raw))
    body = _ANHYDROUS.sub("", _SUPPLIED.sub("", raw)).strip()
    m = re.match(r"^([-+]?\d*\.?\d+(?:[eE][-+]?\d+)?)\s*(.*)$", body)
    if not m:
        raise ChemistryError(f"cannot read the amount {raw!r}: write a number and a basis, "
                             f"e.g. '5 % w/v' or '50 g/L' (bases: {', '.join(BASES)})")
    value = float(m.group(1))
    unit = m.group(2).strip()
    basis, factor = _basis(unit, raw)
    value *= factor
    if value <= 0:
        raise ChemistryError(f"the amount {raw!r} is zero or negative: amounts must be above "
                             "0 (leave an ingredient out instead of giving it 0)")
    if basis.startswith("%") and value > 100:
        raise ChemistryError(f"the amount {raw!r} is a percentage over 100: a {basis} "
                             "concentration is at most 100 (did you mean g/L?)")
    if basis in ("mL/L",) and value > 1000:
        raise ChemistryError(f"the amount {raw!r} is more than 1000 mL per litre of bath")
    return Amount(value, basis, as_supplied)


def _basis(unit: str, raw: str) -> tuple[str, float]:
    squeezed = "".join(unit.split()).lower()
    for b in BASES:
        if squeezed == "".join(b.split()).lower():
            return b, 1.0
    from trialkit.units import registry

    ureg = registry()
    grouped = re.sub(r"/\s*(\d+(?:\.\d+)?)\s*([A-Za-z]+)", r"/(\1 \2)", unit)
    try:
        q = ureg.Quantity("1 " + grouped)
    except Exception:
        q = None
    if q is not None:
        if q.check("[mass]/[length]**3"):
            return "g/L", float(q.to("g/L").magnitude)
        if q.check("[substance]/[length]**3"):
            return "mol/L", float(q.to("mol/L").magnitude)
    raise ChemistryError(
        f"unknown concentration basis in {raw!r} (got {unit!r}); allowed: "
        f"{', '.join(BASES)} or any mass or mole per volume such as 'mg/mL' or 'mmol/L'"
    )


@dataclass(frozen=True)
class Weighed:
    """How much of one product goes into a bath."""

    grams: float          # product as supplied
    millilitres: float | None  # for liquids
    moles: float          # of the compound (0 without a formula)
    active_grams: float   # pure anhydrous compound


def weigh(ingredient: Ingredient, amount: Amount, volume_l: float,
          bath_density_g_ml: float = DEFAULT_BATH_DENSITY) -> Weighed:
    """Grams of ``ingredient`` as supplied for ``amount`` in ``volume_l`` litres of bath."""
    ing, b = ingredient, amount.basis
    if b in ("mL/L", "% v/v"):
        if ing.form != "liquid" or ing.density_g_ml is None:
            raise ChemistryError(f"{ing.name} is a solid: {b} applies to liquids only; give "
                                 "it as % w/v or g/L")
        ml = amount.value * volume_l * (10.0 if b == "% v/v" else 1.0)
        grams = ml * ing.density_g_ml
        active = grams * ing.active_fraction
    elif b == "mol/L":
        if not ing.formula:
            raise ChemistryError(f"{ing.name} has no formula, so mol/L cannot be used; give "
                                 "it as g/L or mL/L")
        if amount.as_supplied:
            raise ChemistryError("mol/L always refers to the compound; drop 'as supplied'")
        active = amount.value * volume_l * ing.molar_mass_anhydrous
        grams = active / ing.active_fraction
    else:
        if b == "% w/v":
            mass = amount.value * 10.0 * volume_l
        elif b == "g/L":
            mass = amount.value * volume_l
        else:  # % w/w of the bath
            mass = amount.value / 100.0 * volume_l * 1000.0 * bath_density_g_ml
        if amount.as_supplied or not ing.formula:
            grams, active = mass, mass * ing.active_fraction
        else:
            active, grams = mass, mass / ing.active_fraction
    moles = active / ing.molar_mass_anhydrous if ing.formula else 0.0
    ml = grams / ing.density_g_ml if ing.form == "liquid" and ing.density_g_ml else None
    return Weighed(grams, ml, moles, active)


def basis_note(ingredient: Ingredient, amount: Amount) -> str:
    """Plain words on what the amount refers to (hydrate, assay, strength)."""
    ing = ingredient
    if amount.basis in ("mL/L", "% v/v"):
        return f"{amount} of the liquid as supplied"
    if amount.as_supplied or not ing.formula:
        return f"{amount} of the product as supplied"
    bits = []
    if ing.is_hydrate:
        bits.append(f"{ing.hydrate} H2O of crystallisation")
    if ing.assay < 1:
        bits.append(f"assay {ing.assay:.1%}")
    if ing.strength_w_w is not None and ing.strength_w_w < 1:
        bits.append(f"strength {ing.strength_w_w:.0%} w/w")
    text = f"{amount} as anhydrous {ing.formula}"
    if bits:
        text += "; the weight given includes " + ", ".join(bits) + ", so it weighs more"
    return text
