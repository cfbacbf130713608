"""Bath cost and unit factors."""

import pytest

from trialkit.chemistry.cost import LITRES_PER_US_GALLON, bath_cost, packs_needed
from trialkit.units import registry


def test_exact_unit_factors_nist_sp_811():
    # NIST SP 811: 1 US gallon = 3.785411784 L, 1 lb = 0.45359237 kg (exact)
    ureg = registry()
    assert LITRES_PER_US_GALLON == 3.785411784
    assert ureg.Quantity(1, "US_gallon").to("L").magnitude == pytest.approx(3.785411784,
                                                                           rel=1e-12)
    assert ureg.Quantity(1, "lb").to("kg").magnitude == pytest.approx(0.45359237, rel=1e-12)


def test_cost_per_litre_gallon_and_area():
    c = bath_cost([("a", 1.5, "EUR"), ("b", 0.5, "EUR")], 2.0, area_cm2=200.0)
    assert (c.total, c.per_l) == (pytest.approx(2.0), pytest.approx(1.0))
    assert c.per_us_gal == pytest.approx(3.785411784)
    assert c.per_m2 == pytest.approx(2.0 / 0.02)


def test_mixed_currencies_give_no_total():
    c = bath_cost([("a", 1.0, "EUR"), ("b", 1.0, "USD")], 1.0)
    assert c.total is None and c.currency == "mixed"


def test_packs():
    assert packs_needed(2100.0, 1000.0) == 3
    assert packs_needed(1000.0, 1000.0) == 1
