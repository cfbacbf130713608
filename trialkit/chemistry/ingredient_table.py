"""Reading ``[[ingredient]]`` tables (the shipped catalogue or a trial file's) with every
problem collected, and the shipped catalogue itself (:func:`default_catalogue`)."""

from __future__ import annotations

import tomllib
from functools import lru_cache
from importlib import resources
from typing import Any

from trialkit.chemistry.catalogue import (
    CURRENCIES,
    FORMS,
    HAZARDS,
    ROLES,
    SPECIES,
    Catalogue,
    Ingredient,
    Price,
    _molar_mass,
)
from trialkit.exceptions import ChemistryError
from trialkit.problems import ProblemReport, did_you_mean

#: Keys of an ``[[ingredient]]`` table.
INGREDIENT_KEYS = ("name", "aliases", "formula", "hydrate", "assay", "form", "role", "species",
                   "density_g_ml", "strength_w_w", "fe_per_mol", "hazards", "price", "notes")


def parse_ingredient(raw: Any, problems: ProblemReport, where: str) -> Ingredient | None:
    """Read one ``[[ingredient]]`` table; problems are added to ``problems``."""
    if not isinstance(raw, dict):
        problems.add(where, "an ingredient must be a table", value=raw, check="not_a_table",
                     fix="write it as [[ingredient]] with name = ..., formula = ...")
        return None
    before = len(problems)
    allowed = set(INGREDIENT_KEYS)
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
    return Price(size, unit, float(amount), currency, " ".join(str(pack).split()))


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

