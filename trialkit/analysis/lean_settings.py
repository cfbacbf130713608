"""Factors the trial found no use for: set them to the setting that costs least.

A model's best point picks a level of every factor, even of one whose effect the trial
could not tell from noise; the recommendation would then add an ingredient (or heat a
tank) on the strength of a difference nobody has shown.  When a factor made no detectable
difference to any response the trial wants something of, the recommendation moves it to
its cheapest setting: for a temperature the setting nearest room temperature (no heating:
cheaper and safer, `common practice`; heating is not in a recipe's cost), otherwise the
one whose recipe costs least (priced from the catalogue) or, unpriced, needs the least of
every ingredient.  A factor with a detected effect on
any wanted response, or on its interactions, is left where the model put it.

Examples
--------
>>> nearest_room_temperature([20.0, 40.0]), nearest_room_temperature([30.0, 50.0])
(20.0, 30.0)
"""

from __future__ import annotations

import math
import re
from types import SimpleNamespace

import pandas as pd

from trialkit.analysis.trial_data import TrialAnalysis, first_line
from trialkit.exceptions import TrialkitError
from trialkit.numbers import p_phrase, readable, settings_text, spoken_capitalised

#: Room temperature of a workshop, °C (`common practice`: 20-25 °C).
ROOM_TEMPERATURE_C = 22.0
#: Recipes whose costs differ by less than this share are taken as costing the same.
SAME_COST = 0.005


def nearest_room_temperature(values: list[float]) -> float:
    """The setting nearest :data:`ROOM_TEMPERATURE_C` (the first of a tie)."""
    return min(values, key=lambda v: abs(v - ROOM_TEMPERATURE_C))


def _tests(data: TrialAnalysis, name: str) -> dict[str, float]:
    """p-value of each model term of one response: on its own stratum in a split plot,
    Lenth's (approximate) in a saturated two-level screen."""
    split = data.split_plots.get(name)
    if split is not None:
        return {str(t): float(p) for t, p in zip(split.tests.term, split.tests.p_value,
                                                 strict=True)}
    fit = data.fits[name]
    if not fit.df_resid > 0 and name in data.effects:  # saturated: Lenth's approximate p
        eff = data.effects[name].summary
        return {str(t): float(p) for t, p in zip(eff.term, eff.p, strict=True)}
    table = fit.anova(2).summary
    return {str(t): float(p) for t, p in zip(table.term, table.p, strict=True)}


def quiet_factors(data: TrialAnalysis) -> dict[str, float]:
    """Factors with no term significant for any wanted response: name -> the smallest
    p-value among its terms (NaN when no model holds it).  A time judged by its censored
    model counts by that model's tests."""
    from trialkit.analysis.censored_times import censored_tests, uses_censored_model

    wanted = [n for n in dict.fromkeys([*data.fits, *data.censored_fits])
              if data.specs[n].is_wanted]
    found: dict[str, list[tuple[float, float]]] = {f.name: [] for f in data.trial.factors}
    for n in wanted:
        if uses_censored_model(data, n):
            alpha = getattr(data.fits.get(n), "alpha", 0.05)
            for factor, p in censored_tests(data, n).items():
                found.setdefault(factor, []).append((p, alpha))
            continue
        for term, p in _tests(data, n).items():
            # a term "a:b", "a^2", a level "a = x" or an alias chain "a:b = c:d"
            for part in {part.split("^")[0].strip() for part in re.split(r":| = ", term)}:
                if part in found and p == p:
                    found[part].append((p, data.fits[n].alpha))
    return {name: min((p for p, _ in tests), default=math.nan)
            for name, tests in found.items() if not any(p < a for p, a in tests)}


def _recipes(data: TrialAnalysis, rows: list[dict]) -> list | None:
    """The recipe of one bath at each of ``rows`` (None when they cannot be worked out)."""
    from trialkit.chemistry.bathspec import BathSection
    from trialkit.chemistry.mixing_sheet import recipes_for_plan

    if not isinstance((data.trial.sections or {}).get("bath"), BathSection):
        return None
    baths = pd.DataFrame([{"bath": f"lean{i}", "point": "recommended", **r}
                          for i, r in enumerate(rows)])
    plan = SimpleNamespace(trial=data.trial, baths=baths, fingerprint=data.plan.fingerprint)
    try:
        return recipes_for_plan(plan).recipes
    except TrialkitError as exc:
        data.note("recipe", f"the cheaper setting of a factor with no detected effect "
                            f"was not worked out: {first_line(exc)}")
        return None


def least_material(recipes: list) -> int | None:
    """Index of the recipe that needs no more of any ingredient than every other one and
    less of at least one (a bath without the surfactant, with less chelator), else None."""
    grams = [{ln.name: ln.grams for ln in r.lines} for r in recipes]
    names = set().union(*grams)
    for i, mine in enumerate(grams):
        others = [g for j, g in enumerate(grams) if j != i]
        if all(all(mine.get(n, 0.0) <= g.get(n, 0.0) * (1 + SAME_COST) for n in names)
               and any(mine.get(n, 0.0) < g.get(n, 0.0) * (1 - SAME_COST) for n in names)
               for g in others):
            return i
    return None


def _cheapest(data: TrialAnalysis, out: dict, name: str, options: list) -> tuple:
    """The option whose bath costs least (or needs least material), and why."""
    recipes = _recipes(data, [{**out, name: v} for v in options])
    if not recipes:
        return None, ""
    costs = [r.cost.total for r in recipes]
    currencies = {r.cost.currency for r in recipes}
    if all(c is not None for c in costs) and len(currencies) == 1:
        cheap, dear = min(costs), max(costs)
        if dear - cheap > SAME_COST * max(abs(dear), 1e-12):
            k = costs.index(cheap)
            here = costs[options.index(out[name])] if out[name] in options else None
            saving = (f", {readable(here - cheap, 3)} {currencies.pop() or ''} less a bath"
                      .replace("  ", " ") if here is not None and here > cheap else "")
            return options[k], f"the cheaper bath{saving}"
    k = least_material(recipes)
    if k is not None:
        return options[k], "the bath that needs the least material"
    return None, ""


def lean_settings(data: TrialAnalysis, settings: dict, reasons: list[str]
                  ) -> tuple[dict, dict]:
    """``settings`` with each factor the trial found no use for moved to its cheapest
    setting, and the moves (factor -> setting); a sentence in ``reasons`` for each."""
    factors = {f.name: f for f in data.trial.factors}
    out, moved = dict(settings), {}
    for name, p in quiet_factors(data).items():
        f = factors[name]
        if name not in out:
            continue
        options = [float(f.low), float(f.high)] if f.is_continuous else list(f.levels)
        if f.is_continuous and f.unit in ("degC", "°C"):  # heating is not in the recipe
            choice, why = nearest_room_temperature(options), \
                "nearest room temperature (no heating, which the recipe's cost leaves out)"
        else:
            choice, why = _cheapest(data, out, name, options)
        if choice is None or choice == out[name]:
            continue
        out[name] = moved[name] = choice
        tested = ("in no model" if p != p else
                  f"smallest {p_phrase(p)} among its terms")
        reasons.append(
            f"{spoken_capitalised(name, f.unit)} made no detectable difference to any "
            f"response the trial aims at ({tested}), so the recommendation takes "
            f"{settings_text({name: choice}, {name: f.unit})}: {why}. Not detected is not "
            "the same as no effect; the confirmation baths check this setting.")
    return out, moved
