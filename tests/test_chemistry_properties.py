"""Property tests (hypothesis) of amounts and weighing: no PHREEQC involved."""

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from trialkit.chemistry.amounts import parse_amount, weigh
from trialkit.chemistry.catalogue import default_catalogue

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
