"""Bath volume from coupon area (ASTM G31 ratio)."""

import json
from pathlib import Path

import pytest

from trialkit.chemistry.volume import ASTM_G31_ML_PER_CM2, bath_volume
from trialkit.exceptions import ChemistryError

REF = Path(__file__).parent / "reference" / "chem"


def test_default_ratio_is_astm_g31_minimum():
    # ASTM G31-72 "Volume of Test Solution": 0.20 mL/mm2 (= 20 mL/cm2) minimum
    # (tests/reference/chem/immersion_test_guidance.json, marked there from memory)
    guide = json.loads((REF / "immersion_test_guidance.json").read_text())
    text = guide["solution_volume_to_area"][0]["value"]
    assert text.startswith("0.20 mL/mm2")
    assert ASTM_G31_ML_PER_CM2 == pytest.approx(0.20 * 100)


def test_rounds_up_to_a_container():
    v = bath_volume(3 * 29.0)  # three 29 cm2 coupons -> 1.74 L -> 2 L container
    assert v.required_l == pytest.approx(1.74)
    assert v.volume_l == 2.0


def test_custom_containers_and_too_small_containers():
    assert bath_volume(10.0, 20.0, (0.15, 0.3)).volume_l == 0.3
    with pytest.raises(ChemistryError, match="largest container"):
        bath_volume(1000.0, 20.0, (1.0, 5.0))


def test_zero_area_refused():
    with pytest.raises(ChemistryError, match="above 0"):
        bath_volume(0.0)
