"""Bath chemistry: ingredient catalogue, PHREEQC speciation, recipes, cost and capacity.

May import: ``trialkit.planning``, ``trialkit.trial`` and the shared modules.

Examples
--------
>>> from trialkit.chemistry import BathSpec, make_recipe
>>> r = make_recipe(BathSpec("demo", 1.0, (("citric acid", "1 % w/v"),)))
>>> round(r.predicted_ph, 1)
2.2
"""

from trialkit.chemistry.amounts import Amount, parse_amount, weigh
from trialkit.chemistry.bathspec import BathSection, parse_bath_section, parse_ingredient_section
from trialkit.chemistry.capacity import Capacity, capacity_from_moles
from trialkit.chemistry.catalogue import Catalogue, Ingredient
from trialkit.chemistry.cost import BathCost, bath_cost
from trialkit.chemistry.dosing import Dose, TitrationCurve, find_dose, titration_curve
from trialkit.chemistry.ingredient_table import default_catalogue
from trialkit.chemistry.mixing_sheet import MixingSheet, bill_of_materials, recipes_for_plan
from trialkit.chemistry.recipe import BathRecipe, BathSpec, RecipeLine, make_recipe
from trialkit.chemistry.speciation import SolutionResult, solve
from trialkit.chemistry.volume import ASTM_G31_ML_PER_CM2, BathVolume, bath_volume

__all__ = [
    "ASTM_G31_ML_PER_CM2", "Amount", "BathCost", "BathRecipe", "BathSection", "BathSpec",
    "BathVolume", "Capacity", "Catalogue", "Dose", "Ingredient", "MixingSheet", "RecipeLine",
    "SolutionResult", "TitrationCurve", "bath_cost", "bath_volume", "bill_of_materials",
    "capacity_from_moles", "default_catalogue", "find_dose", "make_recipe", "parse_amount",
    "parse_bath_section", "parse_ingredient_section", "recipes_for_plan", "solve",
    "titration_curve", "weigh",
]
