"""The ingredient catalogue: what each bath chemical is, weighs, does and costs.

The catalogue ships as ``trialkit/data/ingredients.toml``; a trial file may add entries
(``[[ingredient]]`` tables of the same form).  Molar masses are computed with molmass from
the formula (IUPAC standard atomic weights), never typed in.

Examples
--------
>>> cat = default_catalogue()
>>> edta = cat.get("Tetrasodium EDTA tetrahydrate")
>>> round(edta.molar_mass_anhydrous, 2), round(edta.molar_mass_supplied, 2)
(380.17, 452.23)
>>> cat.get("caustic soda").name
'sodium hydroxide'
"""

from __future__ import annotations

import tomllib
from dataclasses import dataclass, field
from functools import lru_cache
from importlib import resources
from typing import Any

from trialkit.exceptions import ChemistryError
from trialkit.problems import ProblemReport, did_you_mean

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
            return _molar_mass(f"{self.formula}.{self.hydrate}H2O")
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
                "pack": f"{self.price.pack_size:g} {self.price.pack_unit}",
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


def parse_ingredient(raw: Any, problems: ProblemReport, where: str) -> Ingredient | None:
    """Read one ``[[ingredient]]`` table; problems are added to ``problems``."""
    if not isinstance(raw, dict):
        problems.add(where, "an ingredient must be a table", value=raw, check="not_a_table",
                     fix="write it as [[ingredient]] with name = ..., formula = ...")
        return None
    before = len(problems)
    allowed = {"name", "aliases", "formula", "hydrate", "assay", "form", "role", "species",
               "density_g_ml", "strength_w_w", "fe_per_mol", "hazards", "price", "notes"}
    for key in raw:
        if key not in allowed:
            problems.add(f"{where}.{key}", "unknown key in an ingredient", value=key,
                         check="unknown_key", fix=did_you_mean(key, sorted(allowed)))
    name = raw.get("name")
    if not isinstance(name, str) or not name.strip():
        problems.add(f"{where}.name", "every ingredient needs a name", value=name,
                     check="missing_name", fix='add name = "..."')
        name = "?"
    formula = raw.get("formula", "")
    if not isinstance(formula, str):
        problems.add(f"{where}.formula", "formula must be text", value=formula,
                     check="bad_formula")
        formula = ""
    if formula:
        try:
            _molar_mass(formula)
        except Exception:
            problems.add(f"{where}.formula", "molmass cannot read this formula",
                         value=formula, check="bad_formula",
                         fix="write it like 'C6H8O7' (hydrate water goes in 'hydrate')")
    hydrate = raw.get("hydrate", 0)
    if not isinstance(hydrate, int) or isinstance(hydrate, bool) or hydrate < 0:
        problems.add(f"{where}.hydrate", "hydrate must be a whole number >= 0",
                     value=hydrate, check="bad_hydrate")
        hydrate = 0
    assay = _fraction(raw.get("assay", 1.0), f"{where}.assay", problems, "assay")
    strength = raw.get("strength_w_w")
    if strength is not None:
        strength = _fraction(strength, f"{where}.strength_w_w", problems, "strength_w_w")
    form = raw.get("form", "solid")
    if form not in FORMS:
        problems.add(f"{where}.form", "unknown physical form", value=form,
                     check="bad_form", fix=did_you_mean(str(form), FORMS))
    role = raw.get("role", "salt")
    if role not in ROLES:
        problems.add(f"{where}.role", "unknown role", value=role, check="bad_role",
                     fix=did_you_mean(str(role), ROLES))
    density = raw.get("density_g_ml")
    if density is not None and (not _is_number(density) or not 0.5 < density < 3.0):
        problems.add(f"{where}.density_g_ml", "density must be a number between 0.5 and 3 "
                     "g/mL", value=density, check="bad_density")
        density = None
    if form == "liquid" and density is None:
        problems.add(f"{where}.density_g_ml", "a liquid needs its density", value="",
                     check="missing_density", fix="add density_g_ml = 1.0 (or the real value)")
    species = raw.get("species", {})
    if not isinstance(species, dict):
        problems.add(f"{where}.species", "species must be a table such as { Na = 4, Edta = 1 }",
                     value=species, check="bad_species")
        species = {}
    for sp, n in species.items():
        if sp not in SPECIES:
            problems.add(f"{where}.species.{sp}", "unknown PHREEQC master species", value=sp,
                         check="unknown_species", fix=did_you_mean(sp, SPECIES))
        if not _is_number(n) or n <= 0:
            problems.add(f"{where}.species.{sp}", "moles per mole must be a positive number",
                         value=n, check="bad_species")
    if species and not formula:
        problems.add(f"{where}.formula", "an ingredient with species needs a formula",
                     value="", check="missing_formula")
    fe = raw.get("fe_per_mol", 0)
    if not _is_number(fe) or fe < 0:
        problems.add(f"{where}.fe_per_mol", "fe_per_mol must be a number >= 0", value=fe,
                     check="bad_fe_per_mol")
        fe = 0
    hazards = raw.get("hazards", [])
    if not isinstance(hazards, list):
        hazards = [hazards]
    for h in hazards:
        if h not in HAZARDS:
            problems.add(f"{where}.hazards", "unknown caution key", value=h,
                         check="unknown_hazard", fix=did_you_mean(str(h), HAZARDS))
    price = _parse_price(raw.get("price"), f"{where}.price", problems)
    aliases = raw.get("aliases", [])
    if not isinstance(aliases, list) or not all(isinstance(a, str) for a in aliases):
        problems.add(f"{where}.aliases", "aliases must be a list of names", value=aliases,
                     check="bad_aliases")
        aliases = []
    if len(problems) > before:
        return None
    return Ingredient(
        name=name.strip(), formula=formula, hydrate=hydrate, assay=assay, form=form,
        role=role, species={k: float(v) for k, v in species.items()},
        density_g_ml=None if density is None else float(density),
        strength_w_w=strength, fe_per_mol=float(fe), hazards=tuple(hazards), price=price,
        aliases=tuple(aliases),
    )


def _parse_price(raw: Any, where: str, problems: ProblemReport) -> Price | None:
    if raw is None:
        return None
    if not isinstance(raw, dict):
        problems.add(where, "price must be a table { pack = \"1 kg\", amount = 10, "
                     "currency = \"EUR\" }", value=raw, check="bad_price")
        return None
    from trialkit.units import registry

    ok = True
    pack = raw.get("pack")
    size, unit = None, None
    try:
        q = registry().Quantity(str(pack))
        if not (q.check("[mass]") or q.check("[volume]")):
            raise ValueError
        size, unit = float(q.magnitude), f"{q.units}"
        if size <= 0:
            raise ValueError
    except Exception:
        problems.add(f"{where}.pack", "pack size must be a positive mass or volume with its "
                     "unit", value=pack, check="bad_pack_unit",
                     fix="write it like '1 kg', '500 g', '1 L', '1 gal' or '1 lb'")
        ok = False
    amount = raw.get("amount")
    if not _is_number(amount) or amount < 0:
        problems.add(f"{where}.amount", "price amount must be a number >= 0", value=amount,
                     check="bad_price")
        ok = False
    currency = raw.get("currency")
    if currency not in CURRENCIES:
        problems.add(f"{where}.currency", "unknown currency", value=currency,
                     check="unknown_currency",
                     fix="use an ISO 4217 code: " + ", ".join(CURRENCIES))
        ok = False
    if not ok:
        return None
    return Price(size, unit, float(amount), currency)


def _is_number(x: Any) -> bool:
    return isinstance(x, (int, float)) and not isinstance(x, bool)


def _fraction(x: Any, where: str, problems: ProblemReport, what: str) -> float:
    if not _is_number(x) or not 0 < x <= 1:
        problems.add(where, f"{what} is a mass fraction: a number above 0 and at most 1",
                     value=x, check="bad_fraction",
                     fix=f"write 99.5 % as {what} = 0.995")
        return 1.0
    return float(x)


def read_catalogue_text(text: str, source: str) -> Catalogue:
    """Build a catalogue from TOML text (``[[ingredient]]`` tables)."""
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise ChemistryError(f"{source}: not valid TOML: {exc}") from None
    problems = ProblemReport(source)
    items = []
    for i, raw in enumerate(data.get("ingredient", []), start=1):
        ing = parse_ingredient(raw, problems, f"ingredient[{i}]")
        if ing is not None:
            items.append(ing)
    problems.raise_if_any(ChemistryError, "the ingredient catalogue has problems")
    return Catalogue(items)


@lru_cache(maxsize=1)
def default_catalogue() -> Catalogue:
    """The catalogue shipped with trialkit (``trialkit/data/ingredients.toml``)."""
    text = resources.files("trialkit").joinpath("data/ingredients.toml").read_text("utf-8")
    return read_catalogue_text(text, "trialkit/data/ingredients.toml")
