"""One bath's recipe: grams of each ingredient, the pH-adjuster dose, cost, capacity.

Examples
--------
>>> spec = BathSpec("demo", 1.0, (("tetrasodium EDTA", "5 % w/v"),))
>>> r = make_recipe(spec)
>>> round(r.lines[0].grams, 2), 10.5 < r.predicted_ph < 11.8
(50.51, True)
"""

from __future__ import annotations

import html
from dataclasses import dataclass, field

from trialkit.chemistry import speciation
from trialkit.chemistry.amounts import (
    DEFAULT_BATH_DENSITY,
    Amount,
    basis_note,
    parse_amount,
    weigh,
)
from trialkit.chemistry.capacity import DEFAULT_RUST_MG_PER_CM2, Capacity, capacity_from_moles
from trialkit.chemistry.catalogue import Catalogue, Ingredient
from trialkit.chemistry.cautions import cautions_for
from trialkit.chemistry.cost import BathCost, bath_cost
from trialkit.chemistry.dosing import Dose, find_dose, local_dose
from trialkit.chemistry.ingredient_table import default_catalogue
from trialkit.exceptions import ChemistryError

#: Fraction of the dose given as the main addition when the curve is steep.
MAIN_FRACTION = 0.9
#: Size of each final step, as a fraction of the dose.
STEP_FRACTION = 0.025


@dataclass(frozen=True)
class BathSpec:
    """What one bath should be: the input of :func:`make_recipe`.

    Attributes
    ----------
    bath : str
        Bath id (``"B01"``) or a label.
    volume_l : float
        Bath volume, litres.
    ingredients : tuple of (name, amount)
        Catalogue name and amount (text such as ``"5 % w/v"`` or an :class:`Amount`).
    adjust_with : str, tuple of str, or None
        Catalogue name of the pH adjuster; or an acid and a base, of which each bath
        takes the one its starting pH needs.
    target_ph : float or None
        pH to reach with the adjuster.
    temperature_c : float
        Bath temperature, °C.
    area_cm2 : float or None
        Coupon area in the bath (for cost per m²).
    rust_mg_per_cm2 : float
        Expected rust per area (for the area a bath can strip).
    """

    bath: str
    volume_l: float
    ingredients: tuple = ()
    adjust_with: str | tuple[str, ...] | None = None
    target_ph: float | None = None
    temperature_c: float = 25.0
    area_cm2: float | None = None
    rust_mg_per_cm2: float = DEFAULT_RUST_MG_PER_CM2
    bath_density_g_ml: float = DEFAULT_BATH_DENSITY

    def key(self) -> tuple:
        """Identity of the mixture (baths with equal keys are mixed the same way)."""
        ings = tuple((n.lower(), str(a)) for n, a in self.ingredients)
        ph = None if self.target_ph is None else round(float(self.target_ph), 6)
        adjusters = (self.adjust_with,) if isinstance(self.adjust_with, str) \
            else tuple(self.adjust_with or ())
        return (ings, "|".join(adjusters).lower(), ph,
                round(float(self.temperature_c), 6), round(float(self.volume_l), 9))


@dataclass(frozen=True)
class RecipeLine:
    """One ingredient of a recipe (grams of the product as supplied).

    Lines are kept in order of addition: bases, chelators, salts, acids, surfactants,
    then the pH adjuster.
    """

    name: str
    grams: float
    basis: str
    role: str
    moles: float
    millilitres: float | None = None
    note: str = ""
    cost: float | None = None
    currency: str | None = None

    def to_dict(self) -> dict:
        return dict(self.__dict__)


@dataclass
class BathRecipe:
    """The recipe of one bath; ``to_dict()`` gives the JSON form."""

    bath: str
    volume_l: float
    temperature_c: float
    lines: list[RecipeLine]
    target_ph: float | None
    predicted_ph: float
    ph_before_adjustment: float
    ionic_strength: float
    cost: BathCost
    capacity: Capacity
    cautions: list[str]
    steps: list[str]
    notes: list[str] = field(default_factory=list)
    dose: Dose | None = None
    cross_check: dict | None = None
    phreeqc_calls: int = 0
    baths: tuple[str, ...] = ()

    def to_dict(self) -> dict:
        return {
            "bath": self.bath,
            "baths": list(self.baths or (self.bath,)),
            "volume_l": self.volume_l,
            "temperature_c": self.temperature_c,
            "ingredients": [ln.to_dict() for ln in self.lines],
            "target_ph": self.target_ph,
            "predicted_ph": self.predicted_ph,
            "ph_before_adjustment": self.ph_before_adjustment,
            "ionic_strength": self.ionic_strength,
            "cost": self.cost.total,
            "currency": self.cost.currency,
            "cost_per_l": self.cost.per_l,
            "cost_per_us_gal": self.cost.per_us_gal,
            "cost_per_m2": self.cost.per_m2,
            "capacity_g_fe_per_l": self.capacity.g_fe_per_l,
            "capacity": self.capacity.to_dict(),
            "cross_check": self.cross_check,
            "steep": None if self.dose is None else self.dose.steep,
            "steps": list(self.steps),
            "notes": list(self.notes),
            "cautions": list(self.cautions),
            "phreeqc_calls": self.phreeqc_calls,
        }

    def table(self):
        """Ingredient lines as a DataFrame."""
        import pandas as pd

        return pd.DataFrame([ln.to_dict() for ln in self.lines])

    def __repr__(self) -> str:
        ph = "" if self.target_ph is None else f", target pH {self.target_ph:g}"
        return (f"BathRecipe({self.bath!r}, {self.volume_l:g} L, {len(self.lines)} "
                f"ingredients{ph}, predicted pH {self.predicted_ph:.2f})")

    def _repr_html_(self) -> str:
        head = (f"<p><b>Bath {html.escape(self.bath)}</b>: {self.volume_l:g} L at "
                f"{self.temperature_c:g} °C, predicted pH {self.predicted_ph:.2f}, ionic "
                f"strength {self.ionic_strength:.2f} mol/kg</p>")
        return head + self.table().to_html(index=False, escape=True)


def _composition(items: list[tuple[Ingredient, float]], volume_l: float) -> dict[str, float]:
    comp: dict[str, float] = {}
    for ing, moles in items:
        for sp, n in ing.species.items():
            comp[sp] = comp.get(sp, 0.0) + n * moles / volume_l
    return comp


def make_recipe(spec: BathSpec, catalogue: Catalogue | None = None, *,
                cross_check: bool = True) -> BathRecipe:
    """Turn a :class:`BathSpec` into a :class:`BathRecipe` (PHREEQC for the pH)."""
    cat = catalogue or default_catalogue()
    label = f"bath {spec.bath}"
    if not spec.volume_l > 0:
        raise ChemistryError(f"{label}: volume must be above 0 L, got {spec.volume_l}")
    calls0 = speciation.call_count()
    lines: list[RecipeLine] = []
    moles: list[tuple[Ingredient, float]] = []
    notes: list[str] = []
    hazards: set[str] = set()
    seen: set[str] = set()
    for name, amount in spec.ingredients:
        ing = cat.get(name)
        if ing.name in seen:
            raise ChemistryError(f"{label}: {ing.name} is listed twice; give it once")
        seen.add(ing.name)
        amt = amount if isinstance(amount, Amount) else parse_amount(amount)
        if ing.role == "solvent":
            continue  # the bath is made up to volume with it
        w = weigh(ing, amt, spec.volume_l, spec.bath_density_g_ml)
        if amt.basis == "% w/w":
            notes.append(f"{ing.name}: % w/w assumes a bath density of "
                         f"{spec.bath_density_g_ml:g} g/mL")
        lines.append(_line(ing, w.grams, str(amt), w.moles, w.millilitres,
                           basis_note(ing, amt)))
        moles.append((ing, w.moles))
        hazards.update(ing.hazards)
    order = {"base": 0, "chelator": 1, "salt": 2, "acid": 3, "surfactant": 4}
    lines.sort(key=lambda ln: order.get(ln.role, 5))  # order of addition (stable)
    base = _composition(moles, spec.volume_l)
    t = float(spec.temperature_c)
    before = speciation.solve([base], t, label=label)[0] if spec.target_ph is None else None
    dose = None
    adj = None
    final = before
    if spec.target_ph is not None:
        if not spec.adjust_with:
            raise ChemistryError(f"{label}: a target pH needs a pH adjuster (adjust_with)")
        adj = _adjuster_for(spec, base, t, cat, label, notes)
        if adj.name in seen:
            raise ChemistryError(f"{label}: {adj.name} is both an ingredient and the pH "
                                 "adjuster; give it once, as the adjuster")
        if not 0 < float(spec.target_ph) < 14:
            raise ChemistryError(f"{label}: target pH must lie between 0 and 14, got "
                                 f"{spec.target_ph}")
        per_g = {sp: n * adj.mol_per_gram_supplied for sp, n in adj.species.items()}
        dose = find_dose(base, per_g, float(spec.target_ph), t, label=label,
                         adjuster=adj.name)
        grams = dose.g_per_l * spec.volume_l
        w_moles = grams * adj.mol_per_gram_supplied
        ml = grams / adj.density_g_ml if adj.form == "liquid" and adj.density_g_ml else None
        lines.append(_line(adj, grams, f"pH adjuster to pH {float(spec.target_ph):g}",
                           w_moles, ml, "dose from the PHREEQC titration curve"))
        moles.append((adj, w_moles))
        hazards.update(adj.hazards)
        final = speciation.SolutionResult(dose.predicted_ph, dose.ionic_strength,
                                          speciation.DEFAULT_DATABASE)
    predicted = dose.predicted_ph if dose else final.ph
    ph_before = before.ph if before is not None else dose.ph_at_zero
    xcheck = None
    if cross_check and final.ionic_strength > speciation.DAVIES_LIMIT:
        xcheck = _cross_check(base, adj, spec, moles, dose, label, notes)
    mol_fe = sum(ing.fe_per_mol * m for ing, m in moles) / spec.volume_l
    cap = capacity_from_moles(mol_fe, volume_l=spec.volume_l,
                              rust_mg_per_cm2=spec.rust_mg_per_cm2)
    cost = bath_cost([(ln.name, ln.cost, ln.currency) for ln in lines], spec.volume_l,
                     spec.area_cm2)
    if cost.missing_prices:
        notes.append("no price for: " + ", ".join(cost.missing_prices))
    if cost.currency == "mixed":
        notes.append("prices are in several currencies: no total is given")
    steps = _steps(spec, lines, dose, adj)
    return BathRecipe(
        bath=spec.bath, volume_l=spec.volume_l, temperature_c=t, lines=lines,
        target_ph=None if spec.target_ph is None else float(spec.target_ph),
        predicted_ph=float(predicted), ph_before_adjustment=float(ph_before),
        ionic_strength=final.ionic_strength, cost=cost, capacity=cap,
        cautions=cautions_for(hazards, acidic_bath=predicted < 5.0, temperature_c=t),
        steps=steps,
        notes=notes, dose=dose, cross_check=xcheck,
        phreeqc_calls=speciation.call_count() - calls0, baths=(spec.bath,),
    )


def _adjuster_for(spec: BathSpec, base: dict, t: float, cat: Catalogue, label: str,
                  notes: list[str]) -> Ingredient:
    """The adjuster this bath needs: the only one, or of an acid and a base the one that
    moves its starting pH towards the target (the note says which and why)."""
    if isinstance(spec.adjust_with, str):
        return cat.get(spec.adjust_with)
    names = tuple(spec.adjust_with)
    if len(names) == 1:
        return cat.get(names[0])
    start = speciation.solve([base], t, label=label)[0].ph
    want = "acid" if start > float(spec.target_ph) else "base"
    chosen = next((cat.get(n) for n in names if cat.get(n).role == want), cat.get(names[0]))
    way = "down" if want == "acid" else "up"
    notes.append(f"before adjustment the bath is at pH {start:.2f} (predicted), so it is "
                 f"brought {way} to pH {float(spec.target_ph):g} with {chosen.name}, the "
                 f"{want} of adjust_with")
    return chosen


def _line(ing: Ingredient, grams: float, basis: str, moles: float, ml: float | None,
          note: str) -> RecipeLine:
    ppg = ing.price_per_gram()
    cost = None if ppg is None else grams * ppg
    cur = None if ing.price is None else ing.price.currency
    return RecipeLine(ing.name, float(grams), basis, ing.role, float(moles),
                      None if ml is None else float(ml), note, cost, cur)


def _cross_check(base, adj, spec, moles, dose, label, notes) -> dict:
    sit = speciation.CROSS_CHECK_DATABASE
    out = {"database": sit, "predicted_ph": None, "dose_g": None, "dose_spread_g": None}
    if dose is None:
        comp = _composition(moles, spec.volume_l)
        ph_sit = speciation.solve([comp], spec.temperature_c, database=sit, label=label)[0].ph
        tail = ""
    else:
        per_g = {sp: n * adj.mol_per_gram_supplied for sp, n in adj.species.items()}
        tail = "; it cannot reach the target with this adjuster"
        try:
            d_sit = local_dose(base, per_g, float(spec.target_ph), dose.g_per_l,
                               spec.temperature_c, database=sit, label=label,
                               adjuster=adj.name)
            ph_sit = d_sit.ph_at_zero
            g_sit = d_sit.g_per_l * spec.volume_l
            spread = abs(g_sit - dose.g_per_l * spec.volume_l)
            out.update(dose_g=g_sit, dose_spread_g=spread)
            tail = (f" and a dose of {g_sit:.1f} g; take ±{spread:.1f} g as the "
                    "uncertainty of the dose")
        except ChemistryError:
            comp = _composition(moles, spec.volume_l)
            ph_sit = speciation.solve([comp], spec.temperature_c, database=sit,
                                      label=label)[0].ph
    out["predicted_ph"] = ph_sit
    notes.append(f"ionic strength is above {speciation.DAVIES_LIMIT} mol/kg, where the "
                 f"Davies model is unreliable: the specific-ion-interaction model ({sit}) "
                 f"gives pH {ph_sit:.2f} for this recipe{tail}. The pH is an estimate: "
                 "confirm it with a pH meter.")
    return out


def _steps(spec: BathSpec, lines: list[RecipeLine], dose: Dose | None,
           adj: Ingredient | None) -> list[str]:
    v = spec.volume_l
    steps = [f"Measure about {0.8 * v:.3g} L of deionised water into a vented, non-metal "
             f"container of at least {v:g} L; bring it to {spec.temperature_c:g} °C."]
    body = [ln for ln in lines if adj is None or ln.name != adj.name]
    for ln in body:
        how = f"{ln.grams:.4g} g" + ("" if ln.millilitres is None else
                                     f" ({ln.millilitres:.3g} mL)")
        verb = "Add slowly, stirring," if ln.role == "base" else "Add"
        steps.append(f"{verb} {how} of {ln.name} ({ln.basis}) and stir until dissolved.")
    if dose is not None and adj is not None:
        g = dose.g_per_l * v
        if dose.steep:
            main = MAIN_FRACTION * g
            step = STEP_FRACTION * g
            steps.append(
                f"The pH changes steeply near the target: add {main:.4g} g of {adj.name} "
                f"(90 % of the dose; the model gives pH {dose.ph_at_90:.2f}), stir, then add "
                f"{step:.3g} g at a time, reading a pH meter after each, until pH "
                f"{float(spec.target_ph):g} (about {(g - main) / step:.0f} steps).")
        else:
            steps.append(f"Add {g:.4g} g of {adj.name} to bring the bath to pH "
                         f"{float(spec.target_ph):g}; stir and check with a pH meter.")
    steps.append(f"Make up to {v:g} L with deionised water, stir, and record the measured "
                 "pH and temperature.")
    return steps
