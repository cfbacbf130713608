"""A factor the trial found no use for is recommended at its cheapest setting.

Invented two-level trial (not measurements): removal rises with chelator; surfactant and
temperature do nothing in the invented truth.  A model's best point would still pick a
level of each; the recommendation must not add an ingredient or heat a tank on the
strength of a difference nobody has shown (`common practice`: with no shown benefit take
the cheaper, simpler setting, and confirm it).
"""

from __future__ import annotations

from types import SimpleNamespace

import numpy as np
import pytest
import statsmodels.api as sm
import statsmodels.formula.api as smf

from trialkit.analysis.lean_settings import least_material, nearest_room_temperature
from trialkit.analysis.trial_analysis import analyze
from trialkit.planning.plan import make_plan
from trialkit.trial.file import load_trial

TRIAL = """
[trial]
title = "Lean settings, invented example"
question = "Which settings remove the most rust?"
seed = 31
[[factor]]
name = "chelator"
low = 2
high = 6
unit = "% w/v"
[[factor]]
name = "surfactant"
levels = ["none", "added"]
[[factor]]
name = "temperature"
low = 20
high = 40
unit = "degC"
[design]
kind = "full-factorial"
[layout]
replicates = 3
[[response]]
name = "removal"
unit = "%"
aim = "higher"
measure = "removal_pct"
[bath]
adjust_with = "citric acid"
target_ph = 7.0
set_by = { temperature = "temperature" }
volume_per_area = "20 mL/cm2"
[[bath.ingredient]]
name = "tetrasodium EDTA"
factor = "chelator"
[[bath.ingredient]]
name = "non-ionic surfactant"
amount = "0.1 % w/v"
factor = "surfactant"
present_when = ["added"]
[analysis]
model = "main"
"""


def _analysed(tmp_path, surfactant_gain: float, seed: int):
    folder = tmp_path / f"lean{seed}"
    folder.mkdir()
    (folder / "trial.toml").write_text(TRIAL, encoding="utf-8")
    plan = make_plan(load_trial(folder))
    rng = np.random.default_rng(seed)
    baths = plan.baths.copy()
    baths["removal"] = (40 + 6 * baths["chelator"].astype(float)
                        + surfactant_gain * (baths["surfactant"] == "added")
                        + rng.normal(0, 2.0, len(baths)))
    return analyze(folder, baths=baths).to_dict()["recommendation"], baths


def _p_values(baths) -> dict:
    """Reference: statsmodels OLS and its type 2 ANOVA on the same main-effects model."""
    table = baths.assign(chelator=baths.chelator.astype(float),
                         temperature=baths.temperature.astype(float))
    fit = smf.ols("removal ~ chelator + C(surfactant) + temperature", data=table).fit()
    p = sm.stats.anova_lm(fit, typ=2)["PR(>F)"]
    return {"chelator": p["chelator"], "surfactant": p["C(surfactant)"],
            "temperature": p["temperature"]}


@pytest.mark.parametrize("seed", [101, 102, 103])
def test_a_factor_with_no_detected_effect_is_left_out_of_the_bath(tmp_path, seed):
    rec, baths = _analysed(tmp_path, 0.0, seed)
    p = _p_values(baths)
    cheap = rec["set_to_cheapest"]
    assert rec["settings"]["chelator"] == pytest.approx(6.0)   # the factor that matters
    assert "chelator" not in cheap and p["chelator"] < 0.05
    # at its cheapest when the reference ANOVA does not detect it, else the model decides
    for name, cheapest in (("surfactant", "none"), ("temperature", 20.0)):
        if p[name] >= 0.05:
            assert rec["settings"][name] == cheapest
        else:
            assert name not in cheap
    for name in cheap:
        said = [r for r in rec["reasons"]
                if r.startswith(f"{name.capitalize()} made no detectable difference")]
        assert said and "confirm" in said[0]


def test_a_factor_with_a_detected_effect_keeps_the_models_choice(tmp_path):
    rec, _ = _analysed(tmp_path, 12.0, 7)   # surfactant adds 12 points: 6 SDs of the noise
    assert rec["settings"]["surfactant"] == "added"
    assert "surfactant" not in rec["set_to_cheapest"]


def _recipe(**grams):
    return SimpleNamespace(lines=[SimpleNamespace(name=k, grams=v) for k, v in grams.items()])


def test_least_material_is_the_recipe_needing_no_more_of_anything():
    with_wetter = _recipe(edta=120.0, acid=18.0, wetter=2.0)
    without = _recipe(edta=120.0, acid=18.0)
    assert least_material([with_wetter, without]) == 1
    # more chelator but less acid: neither needs less of everything
    assert least_material([_recipe(edta=120.0, acid=10.0), _recipe(edta=80.0, acid=18.0)]) \
        is None


def test_room_temperature_is_the_nearest_setting_to_22_degc():
    assert nearest_room_temperature([40.0, 20.0]) == 20.0
    assert nearest_room_temperature([35.0, 60.0]) == 35.0


def test_a_saturated_screen_judges_by_lenth_not_by_an_empty_anova(tmp_path):
    # one replicate of 2^3 with every interaction: no residual df, so the ANOVA has no
    # p-values; Lenth's method (Lenth 1989) sees the surfactant's 20-point effect
    folder = tmp_path / "sat"
    folder.mkdir()
    saturated = ("chelator + surfactant + temperature + chelator:surfactant + "
                 "chelator:temperature + surfactant:temperature + "
                 "chelator:surfactant:temperature")
    (folder / "trial.toml").write_text(
        TRIAL.replace("replicates = 3", "replicates = 1")
        .replace('model = "main"', f'model = "{saturated}"'), encoding="utf-8")
    plan = make_plan(load_trial(folder))
    rng = np.random.default_rng(3)
    baths = plan.baths.copy()
    baths["removal"] = (40 + 6 * baths["chelator"].astype(float)
                        + 20 * (baths["surfactant"] == "added")
                        + rng.normal(0, 1.0, len(baths)))
    data = analyze(folder, baths=baths)
    assert not data.fits["removal"].df_resid > 0 and "removal" in data.effects
    rec = data.to_dict()["recommendation"]
    assert rec["settings"]["surfactant"] == "added"
    assert "surfactant" not in rec["set_to_cheapest"]
