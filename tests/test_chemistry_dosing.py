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


def test_common_practice_citric_acid_brings_edta_bath_to_6_to_7():
    # common practice: citric acid buffers a 5 % tetrasodium EDTA bath to pH 6-7
    # with a dose of the order of 1-2 % w/v.
    lo = find_dose(EDTA_5, CITRIC, 7.0).g_per_l
    hi = find_dose(EDTA_5, CITRIC, 6.0).g_per_l
    assert 5 < lo < hi < 25


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
