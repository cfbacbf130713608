"""Concentration bases, hydrate and purity corrections."""

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from trialkit.chemistry.amounts import basis_note, parse_amount, weigh
from trialkit.chemistry.ingredient_table import default_catalogue
from trialkit.exceptions import ChemistryError


def test_five_grams_in_100_ml_is_five_percent_w_v():
    # common practice: 5 g in 100 mL is 5 % w/v (definition of % w/v)
    ing = default_catalogue().get("tetrasodium EDTA")
    w = weigh(ing, parse_amount("5 % w/v as supplied"), 0.1)
    assert w.grams == pytest.approx(5.0)


def test_as_anhydrous_tetrahydrate_weighs_more_and_recipe_says_so():
    cat = default_catalogue()
    tetra = cat.get("tetrasodium EDTA tetrahydrate")
    w = weigh(tetra, parse_amount("5 % w/v"), 1.0)
    assert w.active_grams == pytest.approx(50.0)
    assert w.grams == pytest.approx(50.0 * 452.2316 / 380.1704 / 0.99, rel=1e-4)
    assert "weighs more" in basis_note(tetra, parse_amount("5 % w/v"))


@pytest.mark.parametrize("text, basis, value", [
    ("50 g/L", "g/L", 50.0), ("0.1 mol/L", "mol/L", 0.1), ("100 mmol/L", "mol/L", 0.1),
    ("5 g/100 mL", "g/L", 50.0), ("2 mL/L", "mL/L", 2.0), ("3 % w/w", "% w/w", 3.0),
])
def test_bases(text, basis, value):
    a = parse_amount(text)
    assert (a.basis, a.value) == (basis, pytest.approx(value))


def test_mol_per_l_uses_the_molar_mass():
    ing = default_catalogue().get("citric acid monohydrate")
    w = weigh(ing, parse_amount("0.1 mol/L"), 1.0)
    assert w.grams == pytest.approx(0.1 * 210.1391 / 0.995, rel=1e-4)


def test_v_v_of_a_liquid_uses_its_density():
    w = weigh(default_catalogue().get("vinegar"), parse_amount("10 % v/v"), 1.0)
    assert (w.millilitres, w.grams) == (pytest.approx(100.0), pytest.approx(100.5))


@pytest.mark.parametrize("text, match", [
    ("0 % w/v", "zero or negative"), ("-2 g/L", "zero or negative"),
    ("120 % w/v", "over 100"), ("5 ppm", "unknown concentration basis"),
    ("lots", "cannot read"),
])
def test_bad_amounts(text, match):
    with pytest.raises(ChemistryError, match=match):
        parse_amount(text)


def test_v_v_refused_for_a_solid():
    with pytest.raises(ChemistryError, match="solid"):
        weigh(default_catalogue().get("citric acid"), parse_amount("1 % v/v"), 1.0)


# -- properties (hypothesis, fixed derandomized examples) ------------------------------
NAMES = [i.name for i in default_catalogue() if i.formula and i.form == "solid"]


@settings(max_examples=60, deadline=None, derandomize=True)
@given(name=st.sampled_from(NAMES), pct=st.floats(0.01, 50), litres=st.floats(0.05, 50))
def test_grams_scale_with_volume_and_active_mass_is_exact(name, pct, litres):
    ing = default_catalogue().get(name)
    a = parse_amount(f"{pct!r} % w/v")
    w1, w2 = weigh(ing, a, litres), weigh(ing, a, 2 * litres)
    assert w2.grams == pytest.approx(2 * w1.grams, rel=1e-12)
    assert w1.active_grams == pytest.approx(pct * 10 * litres, rel=1e-12)
    assert w1.grams >= w1.active_grams  # hydrate water and assay only add mass


@settings(max_examples=60, deadline=None, derandomize=True)
@given(value=st.floats(1e-3, 100), basis=st.sampled_from(["% w/v", "% w/w", "g/L",
                                                           "mol/L", "mL/L"]))
def test_amount_text_round_trips(value, basis):
    a = parse_amount(f"{value!r} {basis}")
    b = parse_amount(str(a))
    assert (b.basis, b.value) == (a.basis, pytest.approx(a.value, rel=1e-5))
