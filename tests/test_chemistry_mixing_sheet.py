"""Mixing sheet of a real plan: grouping, volume, bill of materials, CSV and HTML."""

import math

import pandas as pd
import pytest

from trialkit.chemistry.mixing_sheet import (
    MATERIAL_COLUMNS,
    SHEET_COLUMNS,
    coupon_area_cm2,
    recipes_for_plan,
)
from trialkit.planning.plan import load_plan
from trialkit.trial.file import CouponSpec

TRIAL = """
[trial]
title = "invented <demo> trial"
seed = 11
[[factor]]
name = "chelator"
unit = "% w/v"
low = 2.0
high = 5.0
[[factor]]
name = "ph"
unit = "pH"
low = 6.0
high = 7.0
[[factor]]
name = "surfactant"
levels = ["none", "added"]
[design]
kind = "full-factorial"
[layout]
replicates = 2
controls = ["untreated", "reference"]
coupons_per_bath = 2
witness_coupons = 1
[coupons]
shape = "plate"
length = 50
width = 25
thickness = 2
[bath]
adjust_with = "citric acid"
set_by = { target_ph = "ph" }
spare = 0.25
[[bath.ingredient]]
name = "tetrasodium EDTA"
factor = "chelator"
[[bath.ingredient]]
name = "non-ionic surfactant"
amount = "1 mL/L"
factor = "surfactant"
present_when = ["added"]
[bath.reference]
ingredients = [{ name = "citric acid", amount = "10 % w/v" }]
"""


@pytest.fixture(scope="module")
def sheet(tmp_path_factory):
    folder = tmp_path_factory.mktemp("trial")
    (folder / "trial.toml").write_text(TRIAL, encoding="utf-8")
    plan = load_plan(folder / "trial.toml")
    return plan, recipes_for_plan(plan)


def test_plate_area():
    # plain geometry: 2(LW + LT + WT) for a 50 x 25 x 2 mm plate = 2800 mm2
    assert coupon_area_cm2(CouponSpec("plate", 50, 25, 2)) == pytest.approx(28.0)
    disc = CouponSpec("disc", diameter_mm=38, thickness_mm=3, holes=(8,))
    # ASTM G31 disc with hole: (pi/2)(D^2 - d^2) + t pi D + t pi d
    expected = (math.pi / 2 * (38**2 - 8**2) + 3 * math.pi * 38 + 3 * math.pi * 8) / 100
    assert coupon_area_cm2(disc) == pytest.approx(expected)


def test_identical_baths_share_a_recipe(sheet):
    plan, s = sheet
    assert len(s.bath_recipe) == len(plan.baths) == 18
    assert len(s.recipes) == 8 + 2  # 8 design points, untreated and reference
    for r in s.recipes:
        assert len(r.baths) in (1, 2)


def test_design_values_reach_the_recipe(sheet):
    plan, s = sheet
    for row in plan.baths.to_dict("records"):
        r = s.recipes[s.bath_recipe[row["bath"]] - 1]
        names = [ln.name for ln in r.lines]
        if row["point"] == "control":
            assert names == [] and r.target_ph is None
        elif row["point"] == "reference":
            assert names == ["citric acid"] and r.predicted_ph < 2.5
        else:
            assert r.target_ph == row["ph"]
            assert r.predicted_ph == pytest.approx(row["ph"], abs=0.01)
            edta = r.lines[0]
            assert edta.grams == pytest.approx(row["chelator"] * 10 * r.volume_l / 0.99)
            assert ("non-ionic surfactant" in names) == (row["surfactant"] == "added")


def test_volume_from_g31_ratio(sheet):
    _, s = sheet
    # 3 coupons x 28 cm2 x 20 mL/cm2 = 1.68 L -> 2 L container
    assert {r.volume_l for r in s.recipes} == {2.0}


def test_bill_of_materials(sheet):
    _, s = sheet
    m = s.materials
    assert list(m.columns) == list(MATERIAL_COLUMNS)
    edta = m[m.ingredient == "tetrasodium EDTA"].iloc[0]
    total = sum(ln.grams * len(r.baths) for r in s.recipes for ln in r.lines
                if ln.name == "tetrasodium EDTA")
    assert edta.grams == pytest.approx(total)
    assert edta.grams_with_spare == pytest.approx(total * 1.25)
    assert edta.packs == math.ceil(total * 1.25 / 1000)
    # issue 17: grams and cost on one basis, the amount to buy (needed plus the spare)
    from trialkit.chemistry.ingredient_table import default_catalogue

    per_gram = default_catalogue().get("tetrasodium EDTA").price_per_gram()
    assert edta.cost == pytest.approx(edta.grams_with_spare * per_gram)
    line = next(ln for ln in s.summary().splitlines()
                if "g  tetrasodium EDTA, " in ln)
    assert line.split()[0] == f"{edta.grams_with_spare:.4g}"
    assert f"EDTA, {edta.cost:.2f} EUR  (the baths need {total:.4g} g)" in line
    assert "cost is of the amount to buy" in s.summary()


def test_csv_and_html(sheet, tmp_path):
    _, s = sheet
    csv = pd.read_csv(s.write_csv(tmp_path / "m.csv"), skiprows=1)  # the caution line
    assert list(csv.columns) == list(SHEET_COLUMNS)
    assert set(csv.bath) == set(s.bath_recipe)
    page = s.to_html()
    assert "invented &lt;demo&gt; trial" in page  # autoescaped
    assert "hydrogen" in page and "safety data sheet" in page
    assert page.count('class="recipe"') == len(s.recipes)
    assert s.to_dict()["fingerprint"] == s.fingerprint != ""


class _StandIn:
    """A minimal plan-like object (bath rows, trial, fingerprint) for one case."""

    def __init__(self, trial, baths):
        self.trial, self.baths, self.fingerprint = trial, baths, "0123456789ab"


def test_temperature_factor_fixed_volume_and_order_of_addition(tmp_path):
    from trialkit.trial.file import load_trial

    text = TRIAL.replace('[[factor]]\nname = "surfactant"\nlevels = ["none", "added"]',
                         '[[factor]]\nname = "temp"\nunit = "degC"\nlow = 20\nhigh = 40')
    text = text.replace('set_by = { target_ph = "ph" }',
                        'set_by = { target_ph = "ph", temperature = "temp" }\nvolume = "1.5 L"')
    text = text.replace('factor = "surfactant"\npresent_when = ["added"]\n', "")
    (tmp_path / "trial.toml").write_text(text, encoding="utf-8")
    trial = load_trial(tmp_path / "trial.toml")
    baths = pd.DataFrame({"run": [1], "bath": ["B01"], "block": [1], "point": ["factorial"],
                          "chelator": [4.0], "ph": [7.0], "temp": [40.0],
                          "replicate": [1], "std_order": [1]})
    s = recipes_for_plan(_StandIn(trial, baths))
    r = s.recipes[0]
    assert (r.volume_l, r.temperature_c, r.target_ph) == (1.5, pytest.approx(40.0), 7.0)
    assert [ln.name for ln in r.lines] == ["tetrasodium EDTA", "non-ionic surfactant",
                                           "citric acid"]
    assert s.fingerprint == "0123456789ab"


def test_trial_without_bath_section_is_refused(tmp_path):
    from trialkit.exceptions import ChemistryError
    from trialkit.trial.file import load_trial

    (tmp_path / "trial.toml").write_text(TRIAL.split("[bath]")[0], encoding="utf-8")
    trial = load_trial(tmp_path / "trial.toml")
    with pytest.raises(ChemistryError, match=r"no \[bath\] section"):
        recipes_for_plan(_StandIn(trial, pd.DataFrame({"bath": ["B01"]})))
