"""The trial file's ``[[ingredient]]`` and ``[bath]`` sections.

``[bath]`` describes the base recipe and which factor sets which quantity::

    [bath]
    adjust_with = "citric acid"     # pH adjuster (catalogue name), or an acid and a base:
                                    # ["citric acid", "sodium hydroxide"], each bath taking
                                    # the one its starting pH needs
    target_ph = 6.5                 # or set by a factor (set_by below)
    temperature = "25 degC"
    volume_per_area = "20 mL/cm2"   # ASTM G31 minimum ratio; or volume = "2 L"
    containers = ["0.5 L", "1 L", "2 L", "5 L"]
    rust_per_area = "5 mg/cm2"      # expected rust, for the area a bath can strip
    spare = 0.2                     # bill-of-materials margin
    set_by = { target_ph = "ph" }   # factor -> target_ph / temperature

    [[bath.ingredient]]
    name = "tetrasodium EDTA"
    amount = "5 % w/v"              # base amount
    factor = "chelator"             # continuous factor: its value (in its unit) is the amount

    [[bath.ingredient]]
    name = "non-ionic surfactant"
    amount = "1 mL/L"
    factor = "surfactant"           # categorical factor: present at these levels only
    present_when = ["added"]

    [bath.reference]                # the reference bath of controls = ["reference"]
    ingredients = [{ name = "citric acid", amount = "10 % w/v" }]

Both parsers add problems to the trial's report and never raise.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

from trialkit.chemistry.amounts import Amount, parse_amount
from trialkit.chemistry.capacity import DEFAULT_RUST_MG_PER_CM2
from trialkit.chemistry.catalogue import Catalogue, Ingredient
from trialkit.chemistry.ingredient_table import default_catalogue, parse_ingredient
from trialkit.chemistry.volume import ASTM_G31_ML_PER_CM2, DEFAULT_CONTAINERS_L
from trialkit.exceptions import TrialkitError
from trialkit.problems import ProblemReport, did_you_mean

BATH_KEYS = ("ingredient", "adjust_with", "target_ph", "temperature", "volume",
             "volume_per_area", "containers", "rust_per_area", "spare", "set_by",
             "reference", "notes")
INGREDIENT_RULE_KEYS = ("name", "amount", "factor", "present_when")
SETTABLE = ("target_ph", "temperature")
REFERENCE_KEYS = ("ingredients", "adjust_with", "target_ph", "temperature")


@dataclass(frozen=True)
class IngredientRule:
    """One ingredient of the base recipe and the factor that sets it (if any)."""

    name: str
    amount: Amount | None
    factor: str | None = None
    present_when: tuple[str, ...] = ()


@dataclass(frozen=True)
class ReferenceBath:
    """The reference bath (``controls = ["reference"]``)."""

    ingredients: tuple[tuple[str, Amount], ...]
    adjust_with: str | tuple[str, ...] | None = None
    target_ph: float | None = None
    temperature_c: float | None = None


@dataclass(frozen=True)
class BathSection:
    """The parsed ``[bath]`` section."""

    ingredients: tuple[IngredientRule, ...]
    adjust_with: str | tuple[str, ...] | None = None
    target_ph: float | None = None
    temperature_c: float = 25.0
    volume_l: float | None = None
    ml_per_cm2: float = ASTM_G31_ML_PER_CM2
    containers_l: tuple[float, ...] = DEFAULT_CONTAINERS_L
    rust_mg_per_cm2: float = DEFAULT_RUST_MG_PER_CM2
    spare: float = 0.2
    set_by: dict[str, str] = field(default_factory=dict)
    reference: ReferenceBath | None = None
    catalogue: Catalogue | None = None

    def to_dict(self) -> dict:
        return {
            "ingredients": [{"name": r.name, "amount": None if r.amount is None else
                             str(r.amount), "factor": r.factor,
                             "present_when": list(r.present_when)} for r in self.ingredients],
            "adjust_with": (list(self.adjust_with) if isinstance(self.adjust_with, tuple)
                            else self.adjust_with), "target_ph": self.target_ph,
            "temperature_c": self.temperature_c, "volume_l": self.volume_l,
            "ml_per_cm2": self.ml_per_cm2, "containers_l": list(self.containers_l),
            "rust_mg_per_cm2": self.rust_mg_per_cm2, "spare": self.spare,
            "set_by": dict(self.set_by),
        }


def parse_ingredient_section(raw: Any, trial: Any, problems: ProblemReport,
                             where: str) -> tuple[Ingredient, ...]:
    """``[[ingredient]]`` tables: extra catalogue entries for this trial."""
    del trial
    tables = raw if isinstance(raw, list) else [raw]
    out = []
    for i, table in enumerate(tables, start=1):
        ing = parse_ingredient(table, problems, f"{where}[{i}]")
        if ing is not None:
            out.append(ing)
    return tuple(out)


def trial_catalogue(trial: Any) -> Catalogue:
    """The shipped catalogue plus the trial's own ``[[ingredient]]`` entries."""
    extra = getattr(trial, "sections", {}).get("ingredient") or ()
    extra = [e for e in extra if isinstance(e, Ingredient)]
    return default_catalogue().with_extra(extra) if extra else default_catalogue()


def parse_bath_section(raw: Any, trial: Any, problems: ProblemReport,
                       where: str) -> BathSection | None:
    """``[bath]``: base recipe, adjuster, temperature, volume rule, factor links."""
    if not isinstance(raw, dict):
        problems.add(where, "[bath] must be a table", value=raw, check="not_a_table")
        return None
    cat = trial_catalogue(trial)
    factors = {f.name: f for f in getattr(trial, "factors", ())}
    for key in raw:
        if key not in BATH_KEYS:
            problems.add(f"{where}.{key}", "unknown key in [bath]", value=key,
                         check="unknown_key", fix=did_you_mean(key, BATH_KEYS))
    rules = []
    raw_ings = raw.get("ingredient", [])
    if not isinstance(raw_ings, list):
        raw_ings = [raw_ings]
    if not raw_ings:
        problems.add(f"{where}.ingredient", "a bath needs at least one [[bath.ingredient]]",
                     check="missing_ingredients",
                     fix='add [[bath.ingredient]] with name = "..." and amount = "..."')
    for i, t in enumerate(raw_ings, start=1):
        rule = _rule(t, f"{where}.ingredient[{i}]", cat, factors, problems)
        if rule is not None:
            rules.append(rule)
    adjust_with = _adjuster(raw.get("adjust_with"), f"{where}.adjust_with", cat, problems)
    names = [r.name for r in rules]
    for name in sorted({n for n in names if names.count(n) > 1}):
        problems.add(f"{where}.ingredient", "the same ingredient is listed twice", value=name,
                     check="duplicate_ingredient", fix="give each ingredient once")
    for adj in adjuster_names(adjust_with):
        if adj in names:
            problems.add(f"{where}.adjust_with", "the pH adjuster is also a base-recipe "
                         "ingredient", value=adj, check="adjuster_is_ingredient",
                         fix="list it once, as adjust_with (its dose is computed)")
    target = raw.get("target_ph")
    if target is not None and (not _num(target) or not 0 < target < 14):
        problems.add(f"{where}.target_ph", "target pH must be a number between 0 and 14",
                     value=target, check="bad_ph")
        target = None
    set_by = raw.get("set_by", {})
    if not isinstance(set_by, dict):
        problems.add(f"{where}.set_by", "set_by must be a table such as { target_ph = "
                     "\"ph\" }", value=set_by, check="bad_set_by")
        set_by = {}
    for qty, fname in set_by.items():
        _check_set_by(qty, fname, f"{where}.set_by.{qty}", factors, problems)
    if (target is not None or "target_ph" in set_by) and adjust_with is None:
        problems.add(f"{where}.adjust_with", "a target pH needs a pH adjuster", value="",
                     check="missing_adjuster", fix='add adjust_with = "citric acid" (or another '
                     'acid or base of the catalogue)')
    temperature = _temperature(raw.get("temperature", "25 degC"), f"{where}.temperature",
                               problems)
    volume = None
    if "volume" in raw:
        volume = _quantity(raw["volume"], "L", f"{where}.volume", problems, "a volume")
    ratio = ASTM_G31_ML_PER_CM2
    if "volume_per_area" in raw:
        ratio = _quantity(raw["volume_per_area"], "mL/cm**2", f"{where}.volume_per_area",
                          problems, "a volume per area such as '20 mL/cm2'") or ratio
    containers = DEFAULT_CONTAINERS_L
    if "containers" in raw:
        vals = raw["containers"] if isinstance(raw["containers"], list) else [raw["containers"]]
        got = [_quantity(v, "L", f"{where}.containers", problems, "a volume") for v in vals]
        if got and all(g is not None for g in got):
            containers = tuple(sorted(got))
    rust = DEFAULT_RUST_MG_PER_CM2
    if "rust_per_area" in raw:
        rust = _quantity(raw["rust_per_area"], "mg/cm**2", f"{where}.rust_per_area",
                         problems, "a mass per area such as '5 mg/cm2'") or rust
    spare = raw.get("spare", 0.2)
    if not _num(spare) or not 0 <= spare <= 5:
        problems.add(f"{where}.spare", "spare is a fraction between 0 and 5 (0.2 = 20 %)",
                     value=spare, check="bad_spare")
        spare = 0.2
    reference = None
    controls = tuple(getattr(getattr(trial, "layout", None), "controls", ()) or ())
    if "reference" in raw:
        reference = _reference(raw["reference"], f"{where}.reference", cat, problems)
    elif "reference" in controls:
        problems.add(f"{where}.reference", "controls include \"reference\" but [bath] has "
                     "no [bath.reference] recipe", check="missing_reference",
                     fix='add [bath.reference] with ingredients = [{ name = "...", '
                         'amount = "..." }]')
    return BathSection(tuple(rules), adjust_with, None if target is None else float(target),
                       temperature if temperature is not None else 25.0, volume, ratio,
                       containers, rust, float(spare), dict(set_by), reference, cat)


def _rule(t: Any, where: str, cat: Catalogue, factors: dict, problems: ProblemReport):
    if not isinstance(t, dict):
        problems.add(where, "an ingredient line must be a table", value=t, check="not_a_table")
        return None
    for key in t:
        if key not in INGREDIENT_RULE_KEYS:
            problems.add(f"{where}.{key}", "unknown key in [[bath.ingredient]]", value=key,
                         check="unknown_key", fix=did_you_mean(key, INGREDIENT_RULE_KEYS))
    name = t.get("name")
    if not isinstance(name, str) or name not in cat:
        problems.add(f"{where}.name", "unknown ingredient", value=name,
                     check="unknown_ingredient",
                     fix=cat.suggest(str(name)) + " (or add an [[ingredient]] table)")
        return None
    canonical = cat.get(name).name
    amount = None
    if "amount" in t:
        amount = _amount(t["amount"], f"{where}.amount", problems)
    fname = t.get("factor")
    present = t.get("present_when", [])
    if not isinstance(present, list):
        present = [present]
    if fname is not None:
        f = factors.get(fname) if isinstance(fname, str) else None
        if f is None:
            problems.add(f"{where}.factor", "no factor of that name", value=fname,
                         check="unknown_factor", fix=did_you_mean(str(fname), list(factors)))
        elif f.is_continuous:
            try:
                parse_amount(f"1 {f.unit}")
            except TrialkitError:
                problems.add(f"{where}.factor", f"factor {fname!r} has unit {f.unit!r}, which is "
                             "not a concentration basis", value=f.unit, check="bad_factor_unit",
                             fix="give the factor a unit such as '% w/v' or 'g/L'")
            if present:
                problems.add(f"{where}.present_when", "present_when applies to categorical "
                             "factors only", value=present, check="bad_present_when")
        else:
            if "amount" not in t:
                problems.add(f"{where}.amount", "an ingredient switched by a categorical "
                             "factor needs its amount", value="", check="missing_amount")
            levels = [str(x) for x in f.levels]
            if not present:
                problems.add(f"{where}.present_when", "say at which levels of "
                             f"{fname!r} the ingredient is present", value="",
                             check="missing_present_when",
                             fix=f"e.g. present_when = [{levels[-1]!r}]")
            for lv in present:
                if str(lv) not in levels:
                    problems.add(f"{where}.present_when", f"not a level of {fname!r}", value=lv,
                                 check="unknown_level", fix=did_you_mean(str(lv), levels))
    elif "amount" not in t:
        problems.add(f"{where}.amount", "an ingredient not set by a factor needs an amount",
                     value="", check="missing_amount", fix='add amount = "5 % w/v"')
    return IngredientRule(canonical, amount, fname, tuple(str(x) for x in present))


def _check_set_by(qty: str, fname: Any, where: str, factors: dict, problems: ProblemReport):
    if qty not in SETTABLE:
        problems.add(where, "only target_ph and temperature can be set this way "
                     "(ingredient amounts use factor = ... in [[bath.ingredient]])", value=qty,
                     check="bad_set_by", fix=did_you_mean(qty, SETTABLE))
        return
    f = factors.get(fname) if isinstance(fname, str) else None
    if f is None:
        problems.add(where, "no factor of that name", value=fname, check="unknown_factor",
                     fix=did_you_mean(str(fname), list(factors)))
        return
    if not f.is_continuous:
        problems.add(where, f"{qty} needs a continuous factor", value=fname,
                     check="bad_set_by")
    elif qty == "temperature":
        try:
            from trialkit.units import to_unit

            to_unit(f"1 {f.unit}", "kelvin")
        except Exception:
            problems.add(where, f"factor {fname!r} sets the temperature but its unit "
                         f"{f.unit!r} is not a temperature", value=f.unit,
                         check="bad_factor_unit", fix="use unit = \"degC\"")
    elif f.unit not in ("pH", ""):
        problems.add(where, f"factor {fname!r} sets the pH but its unit is {f.unit!r}",
                     value=f.unit, check="bad_factor_unit", fix='use unit = "pH"')


def adjuster_names(adjust_with) -> tuple[str, ...]:
    """The adjuster names of an ``adjust_with`` value (one name, or an acid and a base)."""
    if adjust_with is None:
        return ()
    return (adjust_with,) if isinstance(adjust_with, str) else tuple(adjust_with)


def _adjuster(name: Any, where: str, cat: Catalogue, problems: ProblemReport
              ) -> str | tuple[str, ...] | None:
    """One pH adjuster, or a pair: one acid and one base (``role`` in the catalogue)."""
    if isinstance(name, list):
        if len(name) != 2:
            problems.add(where, "adjust_with takes one adjuster, or two: an acid and a base",
                         value=name, check="bad_adjuster",
                         fix='write adjust_with = ["citric acid", "sodium hydroxide"]')
            return None
        got = [_adjuster(n, f"{where}[{i}]", cat, problems) for i, n in enumerate(name, 1)]
        if any(g is None for g in got):
            return None
        roles = sorted(cat.get(g).role for g in got)
        if roles != ["acid", "base"]:
            problems.add(where, "two adjusters must be one acid and one base", value=name,
                         check="bad_adjuster", fix="give an acid and a base of the catalogue "
                         f"(these are: {', '.join(roles)})")
            return None
        return tuple(sorted(got, key=lambda g: cat.get(g).role))  # (acid, base)
    if name is None:
        return None
    if not isinstance(name, str) or name not in cat:
        problems.add(where, "unknown pH adjuster", value=name, check="unknown_ingredient",
                     fix=cat.suggest(str(name)))
        return None
    ing = cat.get(name)
    if not ing.species:
        problems.add(where, f"{ing.name} has no acid-base species and cannot set the pH",
                     value=name, check="bad_adjuster", fix="choose an acid or a base")
        return None
    return ing.name


def _amount(text: Any, where: str, problems: ProblemReport) -> Amount | None:
    try:
        return parse_amount(text)
    except TrialkitError as exc:
        check = "bad_amount"
        msg = str(exc)
        if "zero or negative" in msg:
            check = "amount_not_positive"
        elif "over 100" in msg:
            check = "percent_over_100"
        elif "basis" in msg:
            check = "unknown_basis"
        problems.add(where, msg, value=text, check=check)
        return None


def _quantity(text: Any, unit: str, where: str, problems: ProblemReport, what: str):
    from trialkit.units import to_unit

    try:
        value = to_unit(_exponents(text), unit) if isinstance(text, str) else None
    except TrialkitError:
        value = None
    if value is None or not value > 0:
        problems.add(where, f"expected {what} with its unit, above 0", value=text,
                     check="bad_quantity")
        return None
    return value


def _exponents(text: str) -> str:
    """``"mg/cm2"`` -> ``"mg/cm**2"`` (pint wants the exponent written out)."""
    import re

    return re.sub(r"(?<=[A-Za-z])([23])\b", r"**\1", text)


def _temperature(text: Any, where: str, problems: ProblemReport) -> float | None:
    from trialkit.units import to_unit

    try:
        value = to_unit(text, "degC") if isinstance(text, str) else None
    except TrialkitError:
        value = None
    if value is None or not 0 < value < 100:
        problems.add(where, "temperature must be written with its unit, between 0 and 100 °C",
                     value=text, check="bad_temperature", fix='write it like "25 degC"')
        return None
    return value


def _reference(raw: Any, where: str, cat: Catalogue, problems: ProblemReport):
    if not isinstance(raw, dict):
        problems.add(where, "[bath.reference] must be a table", value=raw, check="not_a_table")
        return None
    for key in raw:
        if key not in REFERENCE_KEYS:
            problems.add(f"{where}.{key}", "unknown key in [bath.reference]", value=key,
                         check="unknown_key", fix=did_you_mean(key, REFERENCE_KEYS))
    items = []
    listed = raw.get("ingredients", [])
    if not isinstance(listed, list):
        problems.add(f"{where}.ingredients", "ingredients must be a list of tables",
                     value=listed, check="not_a_table",
                     fix='write ingredients = [{ name = "...", amount = "..." }]')
        listed = []
    for i, t in enumerate(listed, start=1):
        w = f"{where}.ingredients[{i}]"
        name = t.get("name") if isinstance(t, dict) else None
        if not isinstance(name, str) or name not in cat:
            problems.add(f"{w}.name", "unknown ingredient", value=name,
                         check="unknown_ingredient", fix=cat.suggest(str(name)))
            continue
        amount = _amount(t.get("amount"), f"{w}.amount", problems)
        if amount is not None:
            items.append((cat.get(name).name, amount))
    adjust = _adjuster(raw.get("adjust_with"), f"{where}.adjust_with", cat, problems)
    target = raw.get("target_ph")
    if target is not None and (not _num(target) or not 0 < target < 14):
        problems.add(f"{where}.target_ph", "target pH must be between 0 and 14", value=target,
                     check="bad_ph")
        target = None
    temp = None
    if "temperature" in raw:
        temp = _temperature(raw["temperature"], f"{where}.temperature", problems)
    return ReferenceBath(tuple(items), adjust, None if target is None else float(target), temp)


def _num(x: Any) -> bool:
    return isinstance(x, (int, float)) and not isinstance(x, bool)
