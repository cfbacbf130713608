"""Reading [[ingredient]] tables: every problem collected, bad input as real files."""

import pytest

from trialkit.chemistry.ingredient_table import parse_ingredient, read_catalogue_text
from trialkit.exceptions import ChemistryError
from trialkit.problems import ProblemReport


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


def test_liquid_needs_density_and_species_must_be_known():
    p = ProblemReport("x")
    got = parse_ingredient({"name": "y", "formula": "NaCl", "form": "liquid",
                            "species": {"Chloride": 1}}, p, "ingredient[1]")
    assert got is None
    assert p.checks() == ["missing_density", "unknown_species"]


def test_good_table_gives_an_ingredient():
    p = ProblemReport("x")
    ing = parse_ingredient({"name": "potassium citrate", "formula": "C6H5K3O7", "hydrate": 1,
                            "species": {"K": 3, "Citrate": 1}, "fe_per_mol": 1,
                            "price": {"pack": "2 lb", "amount": 10, "currency": "USD"}},
                           p, "ingredient[1]")
    assert not p
    # 2 lb = 907.18474 g (NIST SP 811: 1 lb = 0.45359237 kg exactly)
    assert ing.price_per_gram() == pytest.approx(10 / 907.18474)
