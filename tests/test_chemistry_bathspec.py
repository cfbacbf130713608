"""The trial file's [bath] and [[ingredient]] sections, bad input as real files."""

import pytest

from trialkit.chemistry.bathspec import BathSection
from trialkit.exceptions import TrialFileError
from trialkit.trial.file import load_trial

HEAD = """
[trial]
title = "invented example trial"
seed = 7
[[factor]]
name = "chelator"
unit = "% w/v"
low = 2.0
high = 6.0
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
controls = ["untreated", "reference"]
coupons_per_bath = 2
[coupons]
shape = "plate"
length = 50
width = 25
thickness = 2
"""

GOOD_BATH = """
[bath]
adjust_with = "citric acid"
temperature = "30 degC"
containers = ["1 L", "2 L", "5 L"]
rust_per_area = "4 mg/cm2"
set_by = { target_ph = "ph" }
[[bath.ingredient]]
name = "Tetrasodium EDTA"
factor = "chelator"
[[bath.ingredient]]
name = "non-ionic surfactant"
amount = "1 mL/L"
factor = "surfactant"
present_when = ["added"]
[bath.reference]
ingredients = [{ name = "citric acid", amount = "10 % w/v" }]
"""


def write(tmp_path, text):
    path = tmp_path / "trial.toml"
    path.write_text(text, encoding="utf-8")
    return path


def checks_of(path):
    with pytest.raises(TrialFileError) as info:
        load_trial(path)
    return info.value.problems.checks(), str(info.value)


def test_good_section_parses(tmp_path):
    trial = load_trial(write(tmp_path, HEAD + GOOD_BATH))
    bath = trial.sections["bath"]
    assert isinstance(bath, BathSection)
    assert bath.ingredients[0].name == "tetrasodium EDTA"  # case-insensitive match
    assert bath.temperature_c == pytest.approx(30.0)
    assert bath.containers_l == (1.0, 2.0, 5.0)
    assert bath.rust_mg_per_cm2 == pytest.approx(4.0)
    assert bath.set_by == {"target_ph": "ph"}
    assert bath.reference.ingredients[0][0] == "citric acid"


def test_unknown_ingredient_suggests_nearest(tmp_path):
    text = HEAD + GOOD_BATH.replace('name = "Tetrasodium EDTA"', 'name = "tetrasodum EDTA"')
    checks, message = checks_of(write(tmp_path, text))
    assert checks == ["unknown_ingredient"]
    assert "did you mean 'tetrasodium EDTA'" in message


@pytest.mark.parametrize("amount, check", [
    ('"0 mL/L"', "amount_not_positive"),
    ('"-1 mL/L"', "amount_not_positive"),
    ('"150 % v/v"', "percent_over_100"),
    ('"2 drops"', "unknown_basis"),
])
def test_bad_amounts(tmp_path, amount, check):
    text = HEAD + GOOD_BATH.replace('amount = "1 mL/L"', f"amount = {amount}")
    checks, _ = checks_of(write(tmp_path, text))
    assert checks == [check]


def test_extra_ingredient_with_unknown_currency_and_unit(tmp_path):
    extra = """
[[ingredient]]
name = "sodium gluconate"
formula = "C6H11NaO7"
role = "chelator"
species = { Na = 1 }
price = { pack = "1 furlong", amount = 9.0, currency = "ZZZ" }
"""
    checks, message = checks_of(write(tmp_path, HEAD + extra + GOOD_BATH))
    assert checks == ["bad_pack_unit", "unknown_currency"]
    assert "ISO 4217" in message


def test_extra_ingredient_is_usable(tmp_path):
    extra = """
[[ingredient]]
name = "potassium citrate"
formula = "C6H5K3O7"
hydrate = 1
role = "salt"
species = { K = 3, Citrate = 1 }
price = { pack = "500 g", amount = 9.0, currency = "EUR" }
"""
    text = HEAD + extra + GOOD_BATH.replace(
        'ingredients = [{ name = "citric acid"', 'ingredients = [{ name = "potassium citrate"')
    trial = load_trial(write(tmp_path, text))
    ref = trial.sections["bath"].reference
    assert ref.ingredients[0][0] == "potassium citrate"


def test_factor_links_are_checked(tmp_path):
    text = HEAD + GOOD_BATH.replace('set_by = { target_ph = "ph" }',
                                    'set_by = { target_ph = "pH_value", colour = "ph" }')
    text = text.replace('present_when = ["added"]', 'present_when = ["yes"]')
    checks, _ = checks_of(write(tmp_path, text))
    assert sorted(checks) == ["bad_set_by", "unknown_factor", "unknown_level"]


def test_reference_control_needs_a_reference_recipe(tmp_path):
    text = HEAD + GOOD_BATH.split("[bath.reference]")[0]
    checks, _ = checks_of(write(tmp_path, text))
    assert checks == ["missing_reference"]


def test_target_ph_needs_an_adjuster_and_adjuster_must_exist(tmp_path):
    text = HEAD + GOOD_BATH.replace('adjust_with = "citric acid"', 'adjust_with = "lemon"')
    checks, _ = checks_of(write(tmp_path, text))
    assert checks == ["unknown_ingredient", "missing_adjuster"]


def test_bad_temperature_and_volume(tmp_path):
    text = HEAD + GOOD_BATH.replace('temperature = "30 degC"',
                                    'temperature = "30"\nvolume = "2 kg"')
    checks, _ = checks_of(write(tmp_path, text))
    assert checks == ["bad_temperature", "bad_quantity"]


def test_duplicate_ingredient_and_adjuster_listed_as_ingredient(tmp_path):
    text = HEAD + GOOD_BATH.replace('name = "non-ionic surfactant"', 'name = "tetrasodium EDTA"')
    text = text.replace('adjust_with = "citric acid"', 'adjust_with = "tetrasodium EDTA"')
    checks, _ = checks_of(write(tmp_path, text))
    assert checks == ["duplicate_ingredient", "adjuster_is_ingredient"]


def test_an_acid_and_a_base_as_adjusters(tmp_path):
    # issue 16: comparing salts at equal pH needs acid for some baths and base for others
    text = HEAD + GOOD_BATH.replace('adjust_with = "citric acid"',
                                    'adjust_with = ["sodium hydroxide", "citric acid"]')
    bath = load_trial(write(tmp_path, text)).sections["bath"]
    assert bath.adjust_with == ("citric acid", "sodium hydroxide")   # (acid, base)
    assert bath.to_dict()["adjust_with"] == ["citric acid", "sodium hydroxide"]


@pytest.mark.parametrize("value", ['["citric acid", "acetic acid"]',
                                   '["citric acid", "sodium hydroxide", "vinegar"]'])
def test_two_adjusters_must_be_an_acid_and_a_base(tmp_path, value):
    text = HEAD + GOOD_BATH.replace('adjust_with = "citric acid"', f"adjust_with = {value}")
    checks, message = checks_of(write(tmp_path, text))
    assert "bad_adjuster" in checks and "acid and" in message
