"""Cost responses: what each bath of a plan costs, from its recipe.

A trial can name a cost as a response (``measure = "cost_per_l"``, ``"cost_per_bath"`` or
``"cost_per_m2"``, per square metre of coupon area): the value of each bath comes from the
recipe the chemistry stage works out for it (:func:`trialkit.chemistry.recipes_for_plan`,
with the catalogue's prices), so cost can be traded against removal and attack with no
hand-entered cost column.
"""

from __future__ import annotations

import math

import pandas as pd

from trialkit.exceptions import ResponseError

#: measure -> (unit text, field of :class:`trialkit.chemistry.cost.BathCost`, description)
COST_MEASURES: dict[str, tuple[str, str, str]] = {
    "cost_per_l": ("per L", "per_l", "ingredient cost per litre of bath, from its recipe"),
    "cost_per_bath": ("per bath", "total", "ingredient cost of the whole bath, from its "
                      "recipe"),
    "cost_per_m2": ("per m²", "per_m2", "ingredient cost per square metre of coupon area "
                    "in the bath, from its recipe"),
}


def cost_unit(measure: str, currencies) -> str:
    """The unit of a cost measure in the one currency of its baths, e.g. ``EUR/L``; the
    bare ``per L`` when the baths are priced in several currencies or in none.

    >>> cost_unit("cost_per_l", ["EUR", "EUR"]), cost_unit("cost_per_bath", ["EUR", "USD"])
    ('EUR/L', 'per bath')
    """
    text = COST_MEASURES[measure][0]
    found = {str(c) for c in currencies if isinstance(c, str) and c}
    if len(found) != 1:
        return text
    return f"{found.pop()}{text.replace('per ', '/') if text != 'per bath' else ' per bath'}"


def bath_costs(plan) -> pd.DataFrame:
    """One row per bath of ``plan``: ``bath``, each cost measure, ``currency``.

    Raises
    ------
    ResponseError
        The trial has no ``[bath]`` section to work the recipes out from.
    """
    from trialkit.chemistry.bathspec import BathSection
    from trialkit.chemistry.mixing_sheet import recipes_for_plan

    if not isinstance((plan.trial.sections or {}).get("bath"), BathSection):
        raise ResponseError("a cost response needs the trial's [bath] section (the recipes "
                            "and the catalogue's prices give the cost); add one, or remove "
                            "the cost response")
    sheet = recipes_for_plan(plan)
    rows = []
    for bath, index in sheet.bath_recipe.items():
        cost = sheet.recipes[index - 1].cost
        row = {"bath": str(bath), "currency": cost.currency}
        for measure, (_, attr, _) in COST_MEASURES.items():
            value = getattr(cost, attr)
            row[measure] = float(value) if value is not None else math.nan
        rows.append(row)
    return pd.DataFrame(rows, columns=["bath", *COST_MEASURES, "currency"])
