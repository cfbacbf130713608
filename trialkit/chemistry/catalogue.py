"""The ingredient catalogue: what each bath chemical is, weighs, does and costs.

The catalogue ships as ``trialkit/data/ingredients.toml`` (read by
:func:`trialkit.chemistry.ingredient_table.default_catalogue`); a trial file may add entries
(``[[ingredient]]`` tables of the same form).  Molar masses are computed with molmass from
the formula (IUPAC standard atomic weights), never typed in.

Examples
--------
>>> from trialkit.chemistry.ingredient_table import default_catalogue
>>> cat = default_catalogue()
>>> edta = cat.get("Tetrasodium EDTA tetrahydrate")
>>> round(edta.molar_mass_anhydrous, 2), round(edta.molar_mass_supplied, 2)
(380.17, 452.23)
>>> cat.get("caustic soda").name
'sodium hydroxide'
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import lru_cache
from typing import Any

from trialkit.exceptions import ChemistryError
from trialkit.problems import did_you_mean

__all__ = ["CURRENCIES", "FORMS", "HAZARDS", "ROLES", "SPECIES", "Catalogue", "Ingredient",
           "Price"]

#: Roles an ingredient may play in a bath.
ROLES = ("chelator", "acid", "base", "salt", "surfactant", "solvent")
#: Physical forms.
FORMS = ("solid", "liquid")
#: Caution keys an ingredient may carry (see :mod:`trialkit.chemistry.cautions`).
HAZARDS = ("alkaline", "corrosive_base", "acidic", "oxidiser", "irritant", "toxic")
#: Currencies accepted for prices (ISO 4217 codes).
CURRENCIES = ("EUR", "USD", "GBP", "CHF", "CAD", "AUD", "NZD", "JPY", "CNY", "INR",
              "SEK", "NOK", "DKK", "PLN", "CZK", "HUF", "ZAR", "BRL", "MXN")
#: PHREEQC master species (minteq.v4 names) the catalogue may refer to.
SPECIES = ("Na", "K", "Edta", "Citrate", "Acetate", "Oxalate", "P", "C(4)", "Cl", "S(6)")


@dataclass(frozen=True)
class Price:
    """Price of one pack: ``amount`` ``currency`` for ``pack_size`` ``pack_unit``."""

    pack_size: float
    pack_unit: str
    amount: float
    currency: str
    pack_text: str = ""

    @property
    def pack(self) -> str:
        """The pack size as written (``"1 kg"``)."""
        return self.pack_text or f"{self.pack_size:g} {self.pack_unit}"

    def per_gram(self, density_g_ml: float | None) -> float | None:
        """Price of one gram of the product as supplied (``None`` if it cannot be known)."""
        from trialkit.units import registry

        ureg = registry()
        q = ureg.Quantity(self.pack_size, self.pack_unit)
        if q.check("[mass]"):
            grams = q.to("g").magnitude
        elif q.check("[volume]"):
            if density_g_ml is None:
                return None
            grams = q.to("mL").magnitude * density_g_ml
        else:  # pragma: no cover - refused when parsed
            return None
        return self.amount / grams


@dataclass(frozen=True)
class Ingredient:
    """One product of the catalogue.

    Attributes
    ----------
    name : str
        Catalogue name.
    formula : str
        Formula of the anhydrous compound (``""`` for mixtures such as a surfactant).
    hydrate : int
        Molecules of water of crystallisation in the product as supplied.
    assay : float
        Mass fraction of the compound (as ``formula`` plus hydrate water) in the product.
    form : str
        ``"solid"`` or ``"liquid"``.
    role : str
        One of :data:`ROLES`.
    species : dict
        Moles of each PHREEQC master species (minteq.v4 names) per mole of compound.
    density_g_ml, strength_w_w : float or None
        For liquids: density, and mass fraction of the compound in the liquid.
    fe_per_mol : float
        Moles of iron one mole of compound holds (1:1 complexation -> 1).
    hazards : tuple of str
        Caution keys.
    price : Price or None
        Price of a pack.
    """

    name: str
    formula: str = ""
    hydrate: int = 0
    assay: float = 1.0
    form: str = "solid"
    role: str = "salt"
    species: dict[str, float] = field(default_factory=dict)
    density_g_ml: float | None = None
    strength_w_w: float | None = None
    fe_per_mol: float = 0.0
    hazards: tuple[str, ...] = ()
    price: Price | None = None
    aliases: tuple[str, ...] = ()

    @property
    def molar_mass_anhydrous(self) -> float | None:
        """Molar mass of the anhydrous compound, g/mol (molmass, IUPAC weights)."""
        return _molar_mass(self.formula) if self.formula else None

    @property
    def molar_mass_supplied(self) -> float | None:
        """Molar mass including water of crystallisation, g/mol."""
        if not self.formula:
            return None
        if self.hydrate:
            # "(H2O)n", not ".nH2O": molmass misreads e.g. "C2H2O4.2H2O"
            return _molar_mass(f"{self.formula}(H2O){self.hydrate}")
        return self.molar_mass_anhydrous

    @property
    def active_fraction(self) -> float:
        """Grams of anhydrous pure compound in one gram of product as supplied."""
        if not self.formula:
            return 1.0
        hydrate_factor = self.molar_mass_anhydrous / self.molar_mass_supplied
        strength = self.strength_w_w if self.strength_w_w is not None else 1.0
        return self.assay * hydrate_factor * strength

    @property
    def mol_per_gram_supplied(self) -> float:
        """Moles of compound in one gram of product as supplied (0 without a formula)."""
        if not self.formula:
            return 0.0
        return self.active_fraction / self.molar_mass_anhydrous

    @property
    def is_hydrate(self) -> bool:
        return self.hydrate > 0

    def price_per_gram(self) -> float | None:
        """Price of one gram as supplied, in the price's currency."""
        return None if self.price is None else self.price.per_gram(self.density_g_ml)

    def to_dict(self) -> dict[str, Any]:
        return {
            "name": self.name, "formula": self.formula, "hydrate": self.hydrate,
            "assay": self.assay, "form": self.form, "role": self.role,
            "species": dict(self.species), "density_g_ml": self.density_g_ml,
            "strength_w_w": self.strength_w_w, "fe_per_mol": self.fe_per_mol,
            "hazards": list(self.hazards),
            "molar_mass_anhydrous": self.molar_mass_anhydrous,
            "molar_mass_supplied": self.molar_mass_supplied,
            "price": None if self.price is None else {
                "pack": self.price.pack,
                "amount": self.price.amount, "currency": self.price.currency},
        }


@lru_cache(maxsize=256)
def _molar_mass(formula: str) -> float:
    import molmass

    return float(molmass.Formula(formula).mass)


class Catalogue:
    """A set of :class:`Ingredient`, looked up by name or alias, case-insensitively."""

    def __init__(self, ingredients: list[Ingredient] | tuple[Ingredient, ...]):
        self._items: dict[str, Ingredient] = {}
        for ing in ingredients:
            self._items[ing.name] = ing
        self._index: dict[str, str] = {}
        for ing in self._items.values():
            for key in (ing.name, *ing.aliases):
                self._index[_key(key)] = ing.name
        for ing in self._items.values():  # names win over aliases
            self._index[_key(ing.name)] = ing.name

    @property
    def names(self) -> list[str]:
        return list(self._items)

    def __contains__(self, name: str) -> bool:
        return _key(name) in self._index

    def __len__(self) -> int:
        return len(self._items)

    def __iter__(self):
        return iter(self._items.values())

    def get(self, name: str) -> Ingredient:
        """The ingredient called ``name``; unknown names raise with the nearest suggested."""
        hit = self._index.get(_key(name))
        if hit is None:
            raise ChemistryError(
                f"unknown ingredient {name!r}: {did_you_mean(name, self._all_names())} "
                "Add it to the trial file as an [[ingredient]] table if it is new."
            )
        return self._items[hit]

    def suggest(self, name: str) -> str:
        """Fix text for an unknown name."""
        return did_you_mean(name, self._all_names())

    def _all_names(self) -> list[str]:
        out = list(self._items)
        for ing in self._items.values():
            out.extend(ing.aliases)
        return out

    def with_extra(self, extra: list[Ingredient] | tuple[Ingredient, ...]) -> Catalogue:
        """A new catalogue with ``extra`` entries added (same name replaces)."""
        return Catalogue([*self._items.values(), *extra])

    def __repr__(self) -> str:
        return f"Catalogue({len(self)} ingredients)"

    def table(self):
        """The catalogue as a DataFrame (one row per ingredient)."""
        import pandas as pd

        rows = []
        for ing in self:
            d = ing.to_dict()
            d["price_per_kg"] = None if ing.price_per_gram() is None else (
                1000 * ing.price_per_gram())
            d["currency"] = None if ing.price is None else ing.price.currency
            d.pop("price")
            d["species"] = ", ".join(f"{k}={v:g}" for k, v in ing.species.items())
            d["hazards"] = ", ".join(ing.hazards)
            rows.append(d)
        return pd.DataFrame(rows)

    def _repr_html_(self) -> str:
        return self.table().to_html(index=False, escape=True)


def _key(name: str) -> str:
    return " ".join(str(name).lower().split())
