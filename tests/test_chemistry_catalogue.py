"""Checks of the ingredient catalogue against molar masses from IUPAC atomic weights."""

import json
from pathlib import Path

import pytest

from trialkit.chemistry.ingredient_table import default_catalogue
from trialkit.exceptions import ChemistryError

REF = Path(__file__).parent / "reference" / "chem"


def _reference_masses():
    data = json.loads((REF / "molar_masses.json").read_text())
    return {c["formula"]: c for c in data["compounds"]}


# Source: tests/reference/chem/molar_masses.json, computed from IUPAC standard atomic
# weights; we compare with the *periodictable* column, an independent package.
@pytest.mark.parametrize("name, formula", [
    ("tetrasodium EDTA", "C10H12N2Na4O8"),
    ("tetrasodium EDTA tetrahydrate", "C10H12N2Na4O8.4H2O"),
    ("disodium EDTA dihydrate", "C10H14N2Na2O8.2H2O"),
    ("citric acid", "C6H8O7"),
    ("citric acid monohydrate", "C6H8O7.H2O"),
    ("trisodium citrate dihydrate", "Na3C6H5O7.2H2O"),
    ("disodium phosphate", "Na2HPO4"),
])
def test_molar_mass_matches_iupac_weights(name, formula):
    ref = _reference_masses()[formula]
    ing = default_catalogue().get(name)
    assert ing.molar_mass_supplied == pytest.approx(
        ref["molar_mass_periodictable_g_per_mol"], abs=0.01)


def test_every_entry_has_a_molar_mass_or_is_a_mixture():
    for ing in default_catalogue():
        if ing.species:
            assert ing.molar_mass_anhydrous > 0
    assert default_catalogue().get("non-ionic surfactant").molar_mass_anhydrous is None


def test_lookup_is_case_insensitive_and_knows_aliases():
    cat = default_catalogue()
    assert cat.get("CITRIC ACID").name == "citric acid"
    assert cat.get("household vinegar").name == "vinegar"


def test_unknown_name_suggests_the_nearest():
    with pytest.raises(ChemistryError, match="did you mean 'citric acid'"):
        default_catalogue().get("citrc acid")


def test_hydrate_and_assay_make_the_product_heavier():
    cat = default_catalogue()
    anh = cat.get("tetrasodium EDTA")
    tetra = cat.get("tetrasodium EDTA tetrahydrate")
    # 452.23 / 380.17 / 0.99 g of tetrahydrate per g of anhydrous Na4EDTA
    assert 1 / tetra.active_fraction == pytest.approx(452.2316 / 380.1704 / 0.99, rel=1e-4)
    assert anh.active_fraction == pytest.approx(0.99)


def test_vinegar_is_five_percent_acetic_acid():
    # common practice: household vinegar is about 5 % acetic acid (w/w)
    v = default_catalogue().get("vinegar")
    assert v.mol_per_gram_supplied == pytest.approx(0.05 / 60.052, rel=1e-3)


def test_price_per_gram_of_liquid_uses_density():
    p = default_catalogue().get("phosphoric acid 85 %")
    assert p.price_per_gram() == pytest.approx(16.0 / (1000 * 1.685))


# IUPAC abridged standard atomic weights (CIAAW, 2021 table, values to 3 decimals):
# H 1.008, C 12.011, N 14.007, O 15.999, Na 22.990, P 30.974.  Summed here by hand,
# independently of molmass, for every formula of the shipped catalogue.
IUPAC = {"H": 1.008, "C": 12.011, "N": 14.007, "O": 15.999, "Na": 22.990, "P": 30.974}
COUNTS = {  # element counts of the product as supplied (formula + hydrate water)
    "tetrasodium EDTA": {"C": 10, "H": 12, "N": 2, "Na": 4, "O": 8},
    "tetrasodium EDTA tetrahydrate": {"C": 10, "H": 20, "N": 2, "Na": 4, "O": 12},
    "disodium EDTA dihydrate": {"C": 10, "H": 18, "N": 2, "Na": 2, "O": 10},
    "citric acid": {"C": 6, "H": 8, "O": 7},
    "citric acid monohydrate": {"C": 6, "H": 10, "O": 8},
    "trisodium citrate dihydrate": {"C": 6, "H": 9, "Na": 3, "O": 9},
    "acetic acid": {"C": 2, "H": 4, "O": 2},
    "vinegar": {"C": 2, "H": 4, "O": 2},
    "oxalic acid dihydrate": {"C": 2, "H": 6, "O": 6},
    "phosphoric acid 75 %": {"H": 3, "P": 1, "O": 4},
    "phosphoric acid 85 %": {"H": 3, "P": 1, "O": 4},
    "disodium phosphate": {"Na": 2, "H": 1, "P": 1, "O": 4},
    "sodium hydroxide": {"Na": 1, "O": 1, "H": 1},
    "sodium carbonate": {"Na": 2, "C": 1, "O": 3},
    "deionised water": {"H": 2, "O": 1},
}


def test_every_catalogue_formula_against_summed_atomic_weights():
    with_formula = [i for i in default_catalogue() if i.formula]
    assert {i.name for i in with_formula} == set(COUNTS)
    for ing in with_formula:
        expected = sum(IUPAC[el] * n for el, n in COUNTS[ing.name].items())
        # abridged weights are rounded to 0.001 per atom: allow 0.002 per 10 atoms
        atoms = sum(COUNTS[ing.name].values())
        assert ing.molar_mass_supplied == pytest.approx(expected, abs=2e-4 * atoms + 1e-3)
