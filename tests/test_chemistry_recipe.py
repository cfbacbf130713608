"""Whole bath recipes: common practice, cross-check, cautions."""

import pytest

from trialkit.chemistry.recipe import BathSpec, make_recipe
from trialkit.exceptions import ChemistryError


def test_five_percent_tetrasodium_edta_reads_about_ph_11():
    # common practice: a 5 % w/v tetrasodium EDTA solution reads about pH 11 on pH paper
    r = make_recipe(BathSpec("t", 1.0, (("tetrasodium EDTA", "5 % w/v"),)))
    assert 10.5 <= r.predicted_ph <= 11.8
    assert r.ionic_strength == pytest.approx(0.8, abs=0.1)  # issue 3: near 0.8 mol/kg
    assert r.cross_check["database"] == "sit.dat"
    assert 10.5 <= r.cross_check["predicted_ph"] <= 11.8


def test_citric_acid_buffered_bath():
    r = make_recipe(BathSpec("B01", 2.0, (("tetrasodium EDTA", "5 % w/v"),
                                          ("non-ionic surfactant", "1 mL/L")),
                             "citric acid", 6.5, area_cm2=100.0))
    d = r.to_dict()
    assert d["target_ph"] == 6.5 and d["predicted_ph"] == pytest.approx(6.5, abs=0.01)
    names = [x["name"] for x in d["ingredients"]]
    assert names == ["tetrasodium EDTA", "non-ionic surfactant", "citric acid"]
    # 5 % w/v as anhydrous at 99 % assay in 2 L
    assert d["ingredients"][0]["grams"] == pytest.approx(100 / 0.99)
    # high ionic strength: sit.dat cross-check gives a dose spread and a meter note
    assert d["cross_check"]["dose_spread_g"] > 0
    assert any("pH meter" in n for n in d["notes"])
    assert any("hydrogen" in c for c in d["cautions"])
    assert any("dispose" in c for c in d["cautions"])
    # capacity: EDTA (50 g/L / 380.17 g/mol) plus citrate, 1:1
    cit = d["ingredients"][2]["moles"] / 2.0
    assert d["capacity_g_fe_per_l"] == pytest.approx((50 / 380.1704 + cit) * 55.845, rel=1e-3)
    assert d["cost"] == pytest.approx(sum(x["cost"] for x in d["ingredients"]))
    assert d["cost_per_m2"] == pytest.approx(d["cost"] / 0.01)


def test_steep_curve_is_split_into_steps():
    r = make_recipe(BathSpec("s", 1.0, (("tetrasodium EDTA", "5 % w/v"),), "citric acid",
                             6.5))
    assert r.dose.steep
    assert any("90 %" in s and "pH meter" in s for s in r.steps)


def test_unreachable_target_names_bath_and_range():
    with pytest.raises(ChemistryError, match=r"bath X9.*pH \d+\.\d\d to"):
        make_recipe(BathSpec("X9", 1.0, (("tetrasodium EDTA", "5 % w/v"),),
                             "sodium hydroxide", 4.0))


def test_target_without_adjuster_refused():
    with pytest.raises(ChemistryError, match="adjust_with"):
        make_recipe(BathSpec("x", 1.0, (("citric acid", "1 % w/v"),), None, 4.0))


def test_temperature_changes_the_ph():
    a = make_recipe(BathSpec("a", 1.0, (("sodium carbonate", "1 % w/v"),), temperature_c=20))
    b = make_recipe(BathSpec("b", 1.0, (("sodium carbonate", "1 % w/v"),), temperature_c=50))
    assert b.predicted_ph < a.predicted_ph - 0.2  # carbonate and water pK fall with T


def test_bath_without_target_has_null_target_in_json():
    d = make_recipe(BathSpec("n", 0.5, (("Citric Acid", "1 % w/v"),))).to_dict()
    assert d["target_ph"] is None and d["volume_l"] == 0.5
    assert d["ingredients"][0]["grams"] == pytest.approx(5.0 / 0.995)
    # 10 g/L = 0.0520 mol/L citric acid: handbook pKa (Benezeth et al. 1997) with Davies
    # activity give pH 2.23 (the independent solver in test_chemistry_speciation.py)
    assert d["predicted_ph"] == pytest.approx(2.23, abs=0.02)
