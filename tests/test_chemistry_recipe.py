"""Whole bath recipes: published pH values, cross-check, cautions."""

import math

import pytest

from trialkit.chemistry.recipe import BathSpec, make_recipe
from trialkit.exceptions import ChemistryError


def test_tetrasodium_edta_solutions_near_the_published_ph():
    # "A 1% aqueous solution has a pH of approximately 11.3": Ataman Chemicals, EDTA and
    # EDTA salts product page (https://www.atamanchemicals.com/edta-and-edta-salts_u24915/,
    # read 2026-12-02).  Commercial grades often carry a little free alkali; the model,
    # with sodium-EDTA ion pairs, reads lower, within 0.6 pH.
    one = make_recipe(BathSpec("t", 1.0, (("tetrasodium EDTA", "1 % w/v"),)))
    assert abs(one.predicted_ph - 11.3) < 0.6
    # 5 % w/v (0.130 mol/L): hydrolysis of Y4- alone with Harris's pKa6 = 10.37
    # (tests/reference/chem) gives pH 11.74 by hand, the ideal-solution ceiling; a
    # weak base's pH does not fall as it gets more concentrated.
    r = make_recipe(BathSpec("t", 1.0, (("tetrasodium EDTA", "5 % w/v"),)))
    kb = 10.0 ** (-14.0 + 10.37)
    c = 5.0 * 10 * 0.99 / 380.1704
    oh = (-kb + (kb * kb + 4 * kb * c) ** 0.5) / 2
    assert 14.0 + math.log10(oh) == pytest.approx(11.74, abs=0.01)
    assert one.predicted_ph - 0.05 <= r.predicted_ph < 14.0 + math.log10(oh)
    assert r.ionic_strength == pytest.approx(0.8, abs=0.1)  # issue 3: near 0.8 mol/kg
    assert r.cross_check["database"] == "sit.dat"
    assert abs(r.cross_check["predicted_ph"] - r.predicted_ph) < 0.5


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


def test_each_bath_takes_the_adjuster_its_starting_ph_needs():
    # issue 16: one trial, an acid and a base; tetrasodium EDTA starts alkaline (needs the
    # acid), disodium EDTA starts acidic (needs the base) to reach the same pH 6.5
    both = ("citric acid", "sodium hydroxide")
    alkaline = make_recipe(BathSpec("A", 1.0, (("tetrasodium EDTA", "5 % w/v"),), both, 6.5))
    acidic = make_recipe(BathSpec("B", 1.0, (("disodium EDTA dihydrate", "5 % w/v"),), both,
                                  6.5))
    assert alkaline.lines[-1].name == "citric acid" and alkaline.ph_before_adjustment > 6.5
    assert acidic.lines[-1].name == "sodium hydroxide" and acidic.ph_before_adjustment < 6.5
    for r in (alkaline, acidic):
        assert r.predicted_ph == pytest.approx(6.5, abs=0.01)
    assert any("brought up to pH 6.5 with sodium hydroxide" in n for n in acidic.notes)
    assert any("brought down to pH 6.5 with citric acid" in n for n in alkaline.notes)


def test_disodium_edta_solution_near_the_published_ph():
    # "pH (50 g/l) 4 - 5": PanReac AppliChem specification of EDTA disodium salt
    # 2-hydrate, product 131669 (read 2026-12-02 in a stored copy of the sheet); the
    # model, with ion pairs and activities, must fall in that range.  50 g/L of the
    # dihydrate (372.24 g/mol) is 45.2 g/L, 4.52 % w/v, of the anhydrous salt (336.21 g/mol;
    # molar masses from molmass, tests/reference/chem/molar_masses.json)
    r = make_recipe(BathSpec("t", 1.0, (("disodium EDTA dihydrate", "4.52 % w/v"),)))
    assert 4.0 <= r.predicted_ph <= 5.0
