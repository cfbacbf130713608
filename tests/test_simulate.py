"""Tests of trialkit.demo.simulate: invented readings drawn from a truth model.

External relations checked: ASTM G1 corrosion rate CR = K W / (A T D) with K = 8.76e4
for mm/y and carbon steel D = 7.86 g/cm³ (tests/reference/corrosion/); first-order decay
of coverage (the truth model's stated law); ASTM G1 repetitive cleaning (the cleaning
line extrapolated to zero cycles gives the mass before cleaning).
"""

from __future__ import annotations

import json
import math
from datetime import datetime
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from trialkit.demo.simulate import (
    DENSITY_G_PER_CM3,
    K_MM_PER_Y,
    base_metal_loss_g,
    confirmation_plan,
    plate_area_cm2,
    simulate_readings,
)
from trialkit.demo.truth_models import BathTruth, NoiseModel, SimulationError
from trialkit.planning.plan import make_plan
from trialkit.records.fields import COUPON_FIELDS, TIMECOURSE_FIELDS
from trialkit.trial.file import parse_trial_text

REF = Path(__file__).parent / "reference" / "corrosion" / "astm_g1_corrosion_rate.json"

TRIAL = """
[trial]
title = "Two-factor check"
seed = 5
[[factor]]
name = "chelator"
unit = "% w/v"
low = 2
high = 10
[[factor]]
name = "ph"
unit = "pH"
low = 4.5
high = 7.5
[design]
kind = "full-factorial"
[layout]
replicates = 2
blocks = 2
controls = ["untreated", "reference"]
coupons_per_bath = 2
witness_coupons = 1
[coupons]
shape = "plate"
length = 50
width = 25
thickness = 2
holes = [4]
{cycles}
"""


def _plan(cycles: int = 0):
    extra = f"cleaning_cycles = {cycles}" if cycles else ""
    return make_plan(parse_trial_text(TRIAL.format(cycles=extra)))


@pytest.fixture(scope="module")
def plan():
    return _plan()


QUIET = BathTruth().without_noise()


def _hours(row) -> float:
    start = datetime.fromisoformat(row["immersion_start"])
    end = datetime.fromisoformat(row["immersion_end"])
    return (end - start).total_seconds() / 3600.0


# -- ASTM G1 constants -------------------------------------------------------------------
def test_k_constant_and_density_match_astm_g1_reference():
    ref = json.loads(REF.read_text(encoding="utf-8"))
    k_mm = [k for k in ref["K_constants"] if k["unit"].startswith("millimetres")][0]["K"]
    steel = [d for d in ref["densities_table_X1_1"]["values_g_cm3"]
             if d["material"] == "carbon steel"][0]["density"]
    assert K_MM_PER_Y == k_mm == 10 * 8760  # ASTM G1: 10 mm/cm x 8760 h/y
    assert DENSITY_G_PER_CM3["carbon steel"] == steel


def test_base_metal_loss_inverts_the_astm_g1_worked_example():
    ref = json.loads(REF.read_text(encoding="utf-8"))["worked_example_derived"]
    x = ref["inputs"]
    w = base_metal_loss_g(ref["results"]["mm/y"], x["A_cm2"], x["T_h"], x["D_g_cm3"])
    assert w == pytest.approx(x["W_g"], rel=5e-4)  # the example's CR is rounded to 4 digits


def test_plate_area_counts_faces_edges_and_hole_bore():
    # plain geometry: 2*(50*25) - 2*pi*2^2 + 2*(50+25)*2 + pi*4*2 mm^2
    expected = (2 * 50 * 25 - 2 * math.pi * 4 + 2 * 75 * 2 + math.pi * 4 * 2) / 100
    assert plate_area_cm2(50, 25, 2, (4,)) == pytest.approx(expected, rel=1e-12)


# -- shape of the readings -----------------------------------------------------------------
def test_columns_follow_the_readings_contract_and_keep_the_plan(plan):
    sim = simulate_readings(plan, BathTruth(), seed=1, inspections_h=[2, 4])
    fields = [f.name for f in COUPON_FIELDS]
    assert list(sim.coupons.columns) == [*plan.table.columns, *fields]
    pd.testing.assert_frame_equal(sim.coupons[list(plan.table.columns)], plan.table)
    assert list(sim.timecourse.columns) == ["coupon", "bath",
                                            *[f.name for f in TIMECOURSE_FIELDS]]
    rusted = plan.table[plan.table["coupon_kind"] == "rusted"]
    assert len(sim.timecourse) == 2 * len(rusted)


def test_same_seed_same_readings_other_seed_other_readings(plan):
    a = simulate_readings(plan, BathTruth(), seed=42, inspections_h=[2, 8])
    b = simulate_readings(plan, BathTruth(), seed=42, inspections_h=[2, 8])
    c = simulate_readings(plan, BathTruth(), seed=43, inspections_h=[2, 8])
    pd.testing.assert_frame_equal(a.coupons, b.coupons)
    pd.testing.assert_frame_equal(a.timecourse, b.timecourse)
    assert not a.coupons["mass_initial_g"].equals(c.coupons["mass_initial_g"])


def test_inspections_do_not_change_the_coupon_readings(plan):
    a = simulate_readings(plan, BathTruth(), seed=9, immersion_h=24)
    b = simulate_readings(plan, BathTruth(), seed=9, immersion_h=24, inspections_h=[6, 24])
    pd.testing.assert_frame_equal(a.coupons, b.coupons)
    last = b.timecourse[b.timecourse["elapsed_h"] == 24].set_index("coupon")["coverage_pct"]
    after = b.coupons.set_index("coupon").loc[last.index, "coverage_after_pct"]
    assert (last == after).all()


def test_times_follow_blocks_and_immersion(plan):
    sim = simulate_readings(plan, BathTruth(), seed=2, immersion_h=30, start="2026-11-02T09:00")
    for row in sim.coupons.to_dict("records"):
        assert _hours(row) == 30.0
        day = datetime.fromisoformat(row["immersion_start"]).date()
        assert (day - datetime(2026, 11, 2).date()).days == row["block"] - 1


# -- physics without noise -----------------------------------------------------------------
def test_witness_loss_reproduces_the_true_corrosion_rate_astm_g1(plan):
    sim = simulate_readings(plan, QUIET, seed=3, immersion_h=24)
    true = sim.true_baths.set_index("bath")["corrosion_mm_per_y"]
    w = sim.coupons[sim.coupons["coupon_kind"] == "witness"]
    assert len(w) == plan.n_baths
    for row in w.to_dict("records"):
        loss = row["mass_initial_g"] - row["mass_final_g"]
        cr = K_MM_PER_Y * loss / (row["area_cm2"] * _hours(row) * 7.86)  # ASTM G1
        assert cr == pytest.approx(true[row["bath"]], rel=1e-9)
        if row["point"] not in ("control", "reference"):
            x = {"chelator": row["chelator"], "ph": row["ph"]}
            assert cr == pytest.approx(QUIET.corrosion_mm_per_y(x), rel=1e-9)


def test_rusted_loss_is_rust_removed_plus_base_metal(plan):
    sim = simulate_readings(plan, QUIET, seed=4, immersion_h=12)
    true = sim.true_baths.set_index("bath")
    for row in sim.coupons[sim.coupons["coupon_kind"] == "rusted"].to_dict("records"):
        a = row["area_cm2"]
        rust = ((row["coverage_before_pct"] - row["coverage_after_pct"]) / 100.0
                * QUIET.rust_g_per_m2 * a / 1e4)
        metal = true.loc[row["bath"], "corrosion_mm_per_y"] * a * 12 * 7.86 / K_MM_PER_Y
        assert row["mass_initial_g"] - row["mass_final_g"] == pytest.approx(rust + metal,
                                                                            rel=1e-9)


def test_coverage_decays_first_order_with_the_true_rate(plan):
    sim = simulate_readings(plan, QUIET, seed=5, inspections_h=[1, 3, 9, 27])
    rate = sim.true_baths.set_index("bath")["rate_per_h"]
    before = sim.coupons.set_index("coupon")["coverage_before_pct"]
    for coupon, g in sim.timecourse.groupby("coupon"):
        y = np.log(g["coverage_pct"].to_numpy() / before[coupon])
        slope = np.polyfit(g["elapsed_h"].to_numpy(), y, 1)[0]
        assert -slope == pytest.approx(rate[g["bath"].iloc[0]], rel=1e-9)
        assert np.all(np.diff(g["coverage_pct"].to_numpy()) < 0)


def test_controls_behave_as_the_truth_model_says(plan):
    # common practice: water removes almost nothing; the model's definition (invented):
    # the reference bath is reference_speedup times as fast as the best chelating bath
    sim = simulate_readings(plan, QUIET, seed=6, immersion_h=48)
    c = sim.coupons[sim.coupons["coupon_kind"] == "rusted"]
    removal = 100 * (1 - c["coverage_after_pct"] / c["coverage_before_pct"])
    assert removal[c["point"] == "control"].max() < 3.0
    tb = sim.true_baths.set_index("point")
    best = QUIET.time_to_90_h({"chelator": QUIET.chelator_optimum})
    assert tb.loc["reference", "time_to_90_h"].max() == pytest.approx(
        best / QUIET.reference_speedup, rel=1e-12)


def test_cleaning_cycles_extrapolate_back_to_the_uncleaned_mass():
    # ASTM G1 repetitive cleaning: once the residue is gone, mass falls linearly with the
    # cycles; the line extrapolated to zero cycles gives the corrected mass.
    truth = BathTruth(cleaning_removal_per_cycle=1.0).without_noise()
    with_cycles = simulate_readings(_plan(cycles=3), truth, seed=7)
    plain = simulate_readings(_plan(), truth, seed=7)
    cols = ["mass_cycle_1_g", "mass_cycle_2_g", "mass_cycle_3_g"]
    c = with_cycles.coupons
    assert cols == [n for n in c.columns if n.startswith("mass_cycle_")]
    assert (c["mass_final_g"] == c["mass_cycle_3_g"]).all()
    y = c[cols].to_numpy()
    slope, intercept = np.polyfit([1, 2, 3], y.T, 1)
    np.testing.assert_allclose(intercept, plain.coupons["mass_final_g"], rtol=1e-12)
    np.testing.assert_allclose(-slope, truth.cleaning_metal_loss_g_per_m2
                               * c["area_cm2"] / 1e4, rtol=1e-9)


# -- noise -----------------------------------------------------------------------------------
_SMALL_PLAN = make_plan(parse_trial_text("""
[trial]
title = "small"
seed = 1
[[factor]]
name = "chelator"
low = 2
high = 8
[design]
kind = "sweep"
count = 3
[layout]
controls = ["untreated"]
"""))


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(seed=st.integers(0, 2**32 - 1), sd=st.floats(0.0, 40.0))
def test_coverage_readings_stay_within_0_and_100(seed, sd):
    truth = BathTruth(noise=NoiseModel(coverage_reading_sd_pct=sd))
    sim = simulate_readings(_SMALL_PLAN, truth, seed=seed, inspections_h=[1, 5])
    for values in (sim.coupons["coverage_before_pct"], sim.coupons["coverage_after_pct"],
                   sim.timecourse["coverage_pct"]):
        assert values.between(0.0, 100.0).all()




def test_readings_are_rounded_to_the_stated_resolutions(plan):
    sim = simulate_readings(plan, BathTruth(), seed=8)
    c = sim.coupons
    np.testing.assert_allclose(c["mass_initial_g"] * 1e4, np.round(c["mass_initial_g"] * 1e4),
                               atol=1e-6)
    assert (c["coverage_after_pct"] == np.round(c["coverage_after_pct"])).all()


def test_confirmation_plan_has_one_recipe_on_the_next_day(plan):
    conf = confirmation_plan(plan, {"chelator": 5.0, "ph": 6.1}, baths=2)
    sim = simulate_readings(conf, QUIET, seed=1)
    assert set(sim.coupons["point"]) == {"confirmation"}
    assert set(sim.coupons["block"]) == {plan.n_blocks + 1}
    assert len(sim.coupons) == 2 * 3
    with pytest.raises(SimulationError, match="every factor"):
        confirmation_plan(plan, {"chelator": 5.0})


# -- bad input -------------------------------------------------------------------------------
def test_unknown_factor_is_refused():
    p = make_plan(parse_trial_text("""
[trial]
title = "t"
seed = 1
[[factor]]
name = "viscosity"
low = 1
high = 2
[design]
kind = "sweep"
count = 2
"""))
    with pytest.raises(SimulationError, match="viscosity"):
        simulate_readings(p, BathTruth(), seed=1)


def test_factor_in_another_unit_is_refused():
    p = make_plan(parse_trial_text("""
[trial]
title = "t"
seed = 1
[[factor]]
name = "chelator"
unit = "g/L"
low = 20
high = 80
[design]
kind = "sweep"
count = 2
"""))
    with pytest.raises(SimulationError, match="g/L"):
        simulate_readings(p, BathTruth(), seed=1)


@pytest.mark.parametrize("kwargs, match", [
    ({"seed": None}, "seed must be"),
    ({"seed": -1}, "seed must be"),
    ({"inspections_h": [0, 4]}, "above 0"),
    ({"inspections_h": [4, 30], "immersion_h": 24}, "last inspection"),
    ({"immersion_h": 1.0001}, "whole number of minutes"),
])
def test_bad_times_and_seeds_are_refused(plan, kwargs, match):
    kwargs = {"seed": 1, **kwargs}
    with pytest.raises(SimulationError, match=match):
        simulate_readings(plan, BathTruth(), **kwargs)


def test_area_can_be_left_for_the_responses(plan):
    sim = simulate_readings(plan, BathTruth(), seed=1, record_area=False)
    assert sim.coupons["area_cm2"].isna().all()
    assert sim.coupons["length_mm"].notna().all()


def test_result_object_is_plain_data(plan):
    sim = simulate_readings(plan, BathTruth(), seed=1, inspections_h=[4])
    d = json.loads(json.dumps(sim.to_dict()))
    assert d["truth"]["seed"] == 1 and d["truth"]["invented"] is True
    assert len(d["coupons"]) == plan.n_coupons
    assert "invented" in repr(sim) and "<table" in sim._repr_html_()
