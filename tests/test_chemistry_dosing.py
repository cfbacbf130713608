"""Acid dose search on PHREEQC titration curves."""

import numpy as np
import pytest

from trialkit.chemistry.dosing import find_dose, local_dose, titration_curve
from trialkit.exceptions import ChemistryError

CITRIC = {"Citrate": 0.995 / 192.1238}  # mol per g of citric acid (99.5 %)
EDTA_5 = {"Na": 4 * 0.13021, "Edta": 0.13021}  # 5 % w/v Na4EDTA at 99 % assay


def test_dose_reaches_the_target_and_is_the_smallest():
    d = find_dose(EDTA_5, CITRIC, 6.5)
    assert d.predicted_ph == pytest.approx(6.5, abs=0.01)
    curve = titration_curve(EDTA_5, CITRIC, np.linspace(0, d.g_per_l * 0.98, 12))
    assert np.all(curve.ph > 6.5)  # no smaller dose reaches the target


def _protons_bound(pkas, ph):
    """Mean protons bound per fully deprotonated base at ``ph`` (ideal solution)."""
    pks = sorted(pkas, reverse=True)
    log_beta = np.concatenate([[0.0], np.cumsum(pks)])
    j = np.arange(len(pks) + 1)
    w = 10.0 ** (log_beta - j * ph)
    return float((j * w).sum() / w.sum())


@pytest.mark.parametrize("ph", [6.0, 6.5, 7.0])
def test_citric_dose_agrees_with_a_proton_balance_from_handbook_pkas(ph):
    # Hand proton balance, ideal solution: the protons EDTA takes up from Y4- equal
    # those citric acid gives off.  pKa of EDTA 0.0, 1.5, 2.0, 2.69, 6.13, 10.37 (Harris,
    # Quantitative Chemical Analysis) and of citric acid 3.128, 4.761, 6.396 (Bates &
    # Pinching 1949), both in tests/reference/chem/acid_base_complexation_constants.json.
    # The model carries activity corrections at I ~ 0.8 mol/kg and sodium-EDTA ion
    # pairs, which the hand estimate ignores and which lower the dose; within a factor
    # of 1.6 of it is what such an estimate can promise.
    edta = EDTA_5["Edta"]
    citric_mol = edta * _protons_bound([0.0, 1.5, 2.0, 2.69, 6.13, 10.37], ph) \
        / (3.0 - _protons_bound([3.128, 4.761, 6.396], ph))
    hand_g_per_l = citric_mol / CITRIC["Citrate"]
    ratio = find_dose(EDTA_5, CITRIC, ph).g_per_l / hand_g_per_l
    assert 1 / 1.6 < ratio < 1.6


def test_more_acid_for_a_lower_target_ph():
    doses = [find_dose(EDTA_5, CITRIC, ph).g_per_l for ph in (7.0, 6.5, 6.0)]
    assert doses[0] < doses[1] < doses[2]


def test_unreachable_target_reports_the_reachable_range():
    naoh = {"Na": 0.98 / 39.997}
    with pytest.raises(ChemistryError, match=r"cannot be reached.*give pH 10\.\d\d to 1[34]"):
        find_dose(EDTA_5, naoh, 6.5, label="bath B03", adjuster="sodium hydroxide")


def test_weak_acid_cannot_reach_ph_1():
    vinegar = {"Acetate": 0.05 / 60.052}
    with pytest.raises(ChemistryError, match="pH 1 cannot be reached"):
        find_dose({"Na": 0.01}, vinegar, 1.0)


def test_local_search_agrees_with_full_search():
    full = find_dose(EDTA_5, CITRIC, 6.5, database="sit.dat")
    near = local_dose(EDTA_5, CITRIC, 6.5, full.g_per_l * 0.95, database="sit.dat")
    assert near.g_per_l == pytest.approx(full.g_per_l, rel=0.01)


def test_dose_is_steep_for_a_poorly_buffered_bath():
    # 1 mmol/L NaOH titrated with citric acid: no buffer near pH 8
    d = find_dose({"Na": 0.001}, CITRIC, 8.0)
    assert d.steep
