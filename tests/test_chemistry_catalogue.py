"""Checks of the ingredient catalogue against molar masses from IUPAC atomic weights."""

import json
from pathlib import Path

import pytest

from trialkit.chemistry.catalogue import default_catalogue, read_catalogue_text
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


def test_bad_catalogue_entries_are_all_reported(tmp_path):
    path = tmp_path / "bad_catalogue.toml"
    path.write_text(
        '[[ingredient]]\nname = "x"\nformula = "C6H8O7"\nassay = 1.5\n'
        'price = { pack = "1 furlong", amount = 3, currency = "EUR" }\n'
        '[[ingredient]]\nname = "y"\nformula = "NaCl"\n'
        'price = { pack = "1 kg", amount = 3, currency = "DOUBLOON" }\n',
        encoding="utf-8")
    with pytest.raises(ChemistryError) as err:
        read_catalogue_text(path.read_text(), str(path))
    assert err.value.problems.checks() == ["bad_fraction", "bad_pack_unit", "unknown_currency"]


def test_price_per_gram_of_liquid_uses_density():
    p = default_catalogue().get("phosphoric acid 85 %")
    assert p.price_per_gram() == pytest.approx(16.0 / (1000 * 1.685))
