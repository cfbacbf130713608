"""Iron capacity of a chelating bath."""

import pytest

from trialkit.chemistry.capacity import capacity_from_moles


def test_one_to_one_capacity_in_iron_and_rust():
    # IUPAC atomic weights: Fe 55.845, Fe2O3 159.688, FeOOH 88.852
    # (tests/reference/chem/molar_masses.json)
    c = capacity_from_moles(0.1315, volume_l=2.0, rust_mg_per_cm2=5.0)
    assert c.g_fe_per_l == pytest.approx(0.1315 * 55.845, rel=1e-4)
    assert c.g_fe2o3_per_l == pytest.approx(0.1315 * 159.6882 / 2, rel=1e-4)
    assert c.g_feooh_per_l == pytest.approx(0.1315 * 88.8518, rel=1e-4)
    # strip area: g FeOOH per bath / (5 mg/cm2)
    assert c.strip_area_cm2 == pytest.approx(c.g_feooh_per_l * 2.0 * 1000 / 5.0)
