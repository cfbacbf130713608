"""The mixing sheet of a plan: one recipe per distinct bath, and the bill of materials.

:func:`recipes_for_plan` turns each bath of a :class:`~trialkit.planning.plan.Plan` into a
:class:`~trialkit.chemistry.recipe.BathSpec` using the trial's ``[bath]`` section, groups
identical baths, solves each distinct one once, and totals the materials with the spare
margin.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import pandas as pd

from trialkit.chemistry.amounts import Amount, parse_amount
from trialkit.chemistry.bathspec import BathSection
from trialkit.chemistry.cautions import CSV_CAUTION as _CAUTION
from trialkit.chemistry.cautions import GENERAL
from trialkit.chemistry.cost import packs_needed
from trialkit.chemistry.recipe import BathRecipe, BathSpec, make_recipe
from trialkit.chemistry.volume import bath_volume
from trialkit.exceptions import ChemistryError

#: First line of the CSV mixing sheet.
CSV_CAUTION = _CAUTION + " The HTML mixing sheet lists the cautions of these baths."

#: Columns of :meth:`MixingSheet.table` (one row per bath and ingredient).
SHEET_COLUMNS = ("recipe", "bath", "point", "volume_l", "ingredient", "grams", "millilitres",
                 "basis", "target_ph", "predicted_ph", "temperature_c")
#: Columns of :attr:`MixingSheet.materials`.
MATERIAL_COLUMNS = ("ingredient", "grams", "grams_with_spare", "pack", "packs", "cost",
                    "currency")


@dataclass
class MixingSheet:
    """Recipes for every bath of a plan.

    Attributes
    ----------
    recipes : list of BathRecipe
        One per distinct bath; ``recipe.baths`` lists the baths mixed by it.
    bath_recipe : dict
        Bath id -> index (1-based) of its recipe.
    materials : DataFrame
        Bill of materials, columns :data:`MATERIAL_COLUMNS`.
    fingerprint : str
        Plan fingerprint the sheet was made for.
    """

    recipes: list[BathRecipe]
    bath_recipe: dict[str, int]
    materials: pd.DataFrame
    fingerprint: str = ""
    title: str = ""
    spare: float = 0.2
    points: dict[str, str] = field(default_factory=dict)

    @property
    def cautions(self) -> list[str]:
        out: list[str] = []
        for r in self.recipes:
            out.extend(c for c in r.cautions if c not in out)
        return out or list(GENERAL)

    def table(self) -> pd.DataFrame:
        """One row per bath and ingredient, columns :data:`SHEET_COLUMNS`."""
        rows = []
        for bath, k in self.bath_recipe.items():
            r = self.recipes[k - 1]
            lines = r.lines or [None]
            for ln in lines:
                rows.append({
                    "recipe": k, "bath": bath, "point": self.points.get(bath, ""),
                    "volume_l": r.volume_l,
                    "ingredient": "deionised water only" if ln is None else ln.name,
                    "grams": None if ln is None else round(ln.grams, 3),
                    "millilitres": None if ln is None or ln.millilitres is None
                    else round(ln.millilitres, 2),
                    "basis": "" if ln is None else ln.basis,
                    "target_ph": r.target_ph, "predicted_ph": round(r.predicted_ph, 2),
                    "temperature_c": r.temperature_c})
        return pd.DataFrame(rows, columns=list(SHEET_COLUMNS))

    def to_dict(self) -> dict:
        return {"fingerprint": self.fingerprint, "title": self.title, "spare": self.spare,
                "bath_recipe": dict(self.bath_recipe),
                "recipes": [r.to_dict() for r in self.recipes],
                "materials": self.materials.to_dict("records"),
                "cautions": self.cautions}

    def write_csv(self, path: str | Path) -> Path:
        """The table as CSV, after one caution line (read it back with ``skiprows=1``)."""
        path = Path(path)
        with open(path, "w", encoding="utf-8", newline="") as out:
            out.write(f"{CSV_CAUTION}\n")
            self.table().to_csv(out, index=False, lineterminator="\n")
        return path

    def to_html(self) -> str:
        """A printable HTML page (jinja2, autoescaped)."""
        import jinja2

        env = jinja2.Environment(autoescape=True, undefined=jinja2.StrictUndefined)
        return env.from_string(_TEMPLATE).render(sheet=self, fmt=_fmt)

    def write_html(self, path: str | Path) -> Path:
        path = Path(path)
        path.write_text(self.to_html(), encoding="utf-8")
        return path

    def summary(self) -> str:
        """A few lines per distinct recipe and the bill of materials, for the console."""
        lines = [f"{self.title}" if self.title else "Mixing sheet",
                 f"  {len(self.bath_recipe)} baths, {len(self.recipes)} distinct recipes, "
                 f"plan {self.fingerprint or '?'}"]
        for i, r in enumerate(self.recipes, start=1):
            ph = f", pH {_fmt(r.target_ph)}" if r.target_ph is not None else ""
            lines.append(f"  recipe {i} ({', '.join(r.baths or (r.bath,))}): "
                         f"{_fmt(r.volume_l)} L at {_fmt(r.temperature_c)} °C{ph}")
            for ln in r.lines:
                ml = f" ({_fmt(ln.millilitres)} mL)" if ln.millilitres else ""
                lines.append(f"      {_fmt(ln.grams, 4):>9} g{ml}  {ln.name}  [{ln.basis}]")
        lines.append(f"  bill of materials (to buy: what the baths need plus {self.spare:.0%} "
                     "spare; the cost is of the amount to buy):")
        for rec in self.materials.to_dict("records"):
            cost = (f", {rec['cost']:.2f} {rec['currency']}"
                    if rec.get("cost") == rec.get("cost") and rec.get("cost") is not None
                    else "")
            lines.append(f"      {_fmt(rec['grams_with_spare'], 4):>9} g  {rec['ingredient']}"
                         f"{cost}  (the baths need {_fmt(rec['grams'], 4)} g)")
        return "\n".join(lines)

    def __repr__(self) -> str:
        return (f"MixingSheet({len(self.bath_recipe)} baths, {len(self.recipes)} distinct "
                f"recipes, plan {self.fingerprint or '?'})")

    def _repr_html_(self) -> str:
        return self.table().to_html(index=False, escape=True)


def _fmt(x: Any, digits: int = 3) -> str:
    if x is None or (isinstance(x, float) and not math.isfinite(x)):
        return "–"
    if isinstance(x, float):
        return f"{x:.{digits}g}" if abs(x) < 10 ** digits else f"{x:.0f}"
    return str(x)


def coupon_area_cm2(coupons: Any) -> float | None:
    """Area of one coupon, cm², from ``[coupons]``
    (:func:`trialkit.trial.geometry.coupon_area_cm2`); ``None`` when the trial gives
    no coupons or not enough dimensions."""
    if coupons is None:
        return None
    from trialkit.exceptions import TrialkitError
    from trialkit.trial.geometry import coupon_area_cm2 as geometric

    try:
        return float(geometric(coupons))
    except TrialkitError:
        return None


def _bath_specs(plan: Any, section: BathSection) -> list[tuple[str, str, BathSpec]]:
    trial = plan.trial
    factors = {f.name: f for f in trial.factors}
    layout = trial.layout
    per_coupon = coupon_area_cm2(trial.coupons)
    n_coupons = layout.coupons_per_bath + layout.witness_coupons
    area = per_coupon * n_coupons if per_coupon else None
    if section.volume_l is not None:
        volume = section.volume_l
    elif area is not None:
        volume = bath_volume(area, section.ml_per_cm2, section.containers_l).volume_l
    else:
        raise ChemistryError("bath volume unknown: give [bath] volume = \"2 L\", or coupon "
                             "dimensions (or area) in [coupons] for the volume-to-area rule")
    out = []
    for row in plan.baths.to_dict("records"):
        bath, point = str(row["bath"]), str(row.get("point", ""))
        common = dict(bath=bath, volume_l=volume, area_cm2=area,
                      rust_mg_per_cm2=section.rust_mg_per_cm2)
        if point == "control":
            spec = BathSpec(temperature_c=section.temperature_c, **common)
        elif point == "reference":
            ref = section.reference
            if ref is None:
                raise ChemistryError(f"bath {bath} is a reference bath but [bath] has no "
                                     "[bath.reference] recipe")
            spec = BathSpec(ingredients=ref.ingredients, adjust_with=ref.adjust_with,
                            target_ph=ref.target_ph,
                            temperature_c=ref.temperature_c or section.temperature_c, **common)
        else:
            spec = _design_bath(row, section, factors, common)
        out.append((bath, point, spec))
    return out


def _design_bath(row: dict, section: BathSection, factors: dict, common: dict) -> BathSpec:
    ings: list[tuple[str, Amount]] = []
    for rule in section.ingredients:
        amount = rule.amount
        if rule.factor is not None:
            f = factors[rule.factor]
            value = row.get(rule.factor)
            if f.is_continuous:
                if value is None or (isinstance(value, float) and math.isnan(value)):
                    continue
                amount = parse_amount(f"{float(value):.10g} {f.unit}")
            elif str(value) not in rule.present_when:
                continue
        ings.append((rule.name, amount))
    target = section.target_ph
    temp = section.temperature_c
    if "target_ph" in section.set_by:
        target = float(row[section.set_by["target_ph"]])
    if "temperature" in section.set_by:
        from trialkit.units import to_unit

        f = factors[section.set_by["temperature"]]
        temp = to_unit(f"{float(row[f.name])} {f.unit}", "degC")
    return BathSpec(ingredients=tuple(ings), adjust_with=section.adjust_with,
                    target_ph=target, temperature_c=temp, **common)


def recipes_for_plan(plan: Any) -> MixingSheet:
    """The mixing sheet of ``plan`` (needs a parsed ``[bath]`` section in its trial)."""
    section = plan.trial.sections.get("bath") if plan.trial.sections else None
    if not isinstance(section, BathSection):
        raise ChemistryError("the trial file has no [bath] section, so the baths cannot be "
                             "mixed: add one (see the starter file from 'trialkit new')")
    specs = _bath_specs(plan, section)
    groups: dict[tuple, list[tuple[str, str, BathSpec]]] = {}
    for item in specs:
        groups.setdefault(item[2].key(), []).append(item)
    recipes, bath_recipe, points = [], {}, {}
    for k, members in enumerate(groups.values(), start=1):
        first = members[0][2]
        try:
            r = make_recipe(first, section.catalogue)
        except ChemistryError as exc:
            names = ", ".join(m[0] for m in members)
            raise ChemistryError(f"baths {names}: {exc}") from None
        r.baths = tuple(m[0] for m in members)
        r.bath = r.baths[0]
        recipes.append(r)
        for bath, point, _ in members:
            bath_recipe[bath] = k
            points[bath] = point
    order = {str(b): i for i, b in enumerate(plan.baths["bath"])}
    bath_recipe = dict(sorted(bath_recipe.items(), key=lambda kv: order[kv[0]]))
    materials = bill_of_materials(recipes, section, spare=section.spare)
    return MixingSheet(recipes, bath_recipe, materials, str(getattr(plan, "fingerprint", "")),
                       str(getattr(plan.trial, "title", "")), section.spare, points)


def bill_of_materials(recipes: list[BathRecipe], section: BathSection | None = None, *,
                      spare: float = 0.2) -> pd.DataFrame:
    """Total grams of each ingredient over all baths, with ``spare`` margin and packs."""
    from trialkit.chemistry.ingredient_table import default_catalogue

    cat = (section.catalogue if section is not None and section.catalogue is not None
           else default_catalogue())
    totals: dict[str, float] = {}
    for r in recipes:
        n = len(r.baths or (r.bath,))
        for ln in r.lines:
            totals[ln.name] = totals.get(ln.name, 0.0) + ln.grams * n
    rows = []
    for name, grams in totals.items():
        ing = cat.get(name)
        with_spare = grams * (1 + spare)
        pack_g, pack_text, cost, cur = None, "", None, None
        if ing.price is not None:
            p = ing.price
            pack_text = p.pack
            ppg = ing.price_per_gram()
            pack_g = p.amount / ppg if ppg else None
            cost, cur = (with_spare * ppg if ppg else None), p.currency
        rows.append({"ingredient": name, "grams": grams, "grams_with_spare": with_spare,
                     "pack": pack_text, "packs": packs_needed(with_spare, pack_g),
                     "cost": cost, "currency": cur})
    return pd.DataFrame(rows, columns=list(MATERIAL_COLUMNS))


_TEMPLATE = """<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8">
<title>Mixing sheet{% if sheet.title %} – {{ sheet.title }}{% endif %}</title>
<style>
body { font-family: sans-serif; margin: 1.5em; font-size: 11pt; }
table { border-collapse: collapse; margin: 0.5em 0 1em; }
th, td { border: 1px solid #999; padding: 3px 8px; text-align: left; }
section.recipe { page-break-inside: avoid; border-top: 2px solid #333; margin-top: 1em; }
.cautions { border: 2px solid #333; padding: 0.5em 1em; }
@media print { section.recipe { page-break-inside: avoid; } }
</style></head><body>
<h1>Mixing sheet{% if sheet.title %}: {{ sheet.title }}{% endif %}</h1>
<p>Plan {{ sheet.fingerprint }} · {{ sheet.bath_recipe|length }} baths ·
{{ sheet.recipes|length }} distinct recipes</p>
<div class="cautions"><h2>Cautions</h2><ul>
{% for c in sheet.cautions %}<li>{{ c }}</li>{% endfor %}</ul></div>
{% for r in sheet.recipes %}
<section class="recipe">
<h2>Recipe {{ loop.index }} – baths {{ r.baths|join(", ") }}</h2>
<p>{{ fmt(r.volume_l) }} L at {{ fmt(r.temperature_c) }} °C ·
{% if r.target_ph is not none %}target pH {{ fmt(r.target_ph) }} · {% endif %}
predicted pH {{ "%.2f"|format(r.predicted_ph) }} · ionic strength
{{ "%.2f"|format(r.ionic_strength) }} mol/kg</p>
<table><tr><th>ingredient</th><th>grams</th><th>mL</th><th>amount</th><th>note</th></tr>
{% for ln in r.lines %}<tr><td>{{ ln.name }}</td><td>{{ "%.2f"|format(ln.grams) }}</td>
<td>{{ fmt(ln.millilitres) }}</td><td>{{ ln.basis }}</td><td>{{ ln.note }}</td></tr>
{% endfor %}</table>
<ol>{% for s in r.steps %}<li>{{ s }}</li>{% endfor %}</ol>
{% for n in r.notes %}<p><em>{{ n }}</em></p>{% endfor %}
<p>Cost {{ fmt(r.cost.total) }} {{ r.cost.currency or "" }} · capacity
{{ fmt(r.capacity.g_fe_per_l) }} g Fe per litre</p>
</section>
{% endfor %}
<h2>Bill of materials (spare {{ (sheet.spare * 100)|round|int }} %)</h2>
<table><tr><th>ingredient</th><th>grams</th><th>with spare</th><th>pack</th><th>packs</th>
<th>cost (of the amount with spare)</th></tr>
{% for m in sheet.materials.to_dict("records") %}<tr><td>{{ m.ingredient }}</td>
<td>{{ "%.1f"|format(m.grams) }}</td><td>{{ "%.1f"|format(m.grams_with_spare) }}</td>
<td>{{ m.pack }}</td><td>{{ fmt(m.packs) }}</td><td>{{ fmt(m.cost) }} {{ m.currency or "" }}</td>
</tr>{% endfor %}</table>
</body></html>
"""
