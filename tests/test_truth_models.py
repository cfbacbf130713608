"""Tests of trialkit.demo.truth_models: the invented truth behind the example readings.

External references: the gas constant from scipy.constants (CODATA) for the Arrhenius
factor; Derringer & Suich (1980) one-sided desirability with exponent 1 (a linear ramp).
The model is invented: most checks here hold it to its own documented definition; the
one trade shape it follows (acid attack on iron) is cited from memory.
"""

from __future__ import annotations

import math
from pathlib import Path

import pytest
from scipy import constants, optimize

from trialkit.demo.truth_models import (
    EXAMPLES,
    GAS_CONSTANT,
    BathTruth,
    NoiseModel,
    SimulationError,
    one_sided_desirability,
    surface_desirability,
)

ROOT = Path(__file__).resolve().parents[1] / "example_trials"
T = BathTruth()


def test_gas_constant_is_codata():
    assert GAS_CONSTANT == pytest.approx(constants.R, rel=1e-12)  # scipy.constants, CODATA


def test_removal_peaks_at_the_chelator_optimum():
    # the model's definition (invented): the rate peaks at chelator_optimum
    res = optimize.minimize_scalar(lambda c: -T.rate_per_h({"chelator": c}),
                                   bounds=(1.0, 20.0), method="bounded",
                                   options={"xatol": 1e-9})
    assert res.x == pytest.approx(T.chelator_optimum, abs=1e-6)
    half = T.chelator_optimum + T.chelator_width * math.sqrt(2)
    assert T.rate_per_h({"chelator": half}) == pytest.approx(T.peak_rate_per_h / 2, rel=1e-12)
    # long tails: four widths out, 1 / (1 + 16/2) of the peak
    far = T.chelator_optimum + 4 * T.chelator_width
    assert T.rate_per_h({"chelator": far}) == pytest.approx(T.peak_rate_per_h / 9, rel=1e-12)


def test_gaussian_peak_has_short_tails_and_a_parabolic_log_time():
    g = EXAMPLES["chelator-sweep"].truth
    assert g.chelator_peak == "gaussian"
    base = {"ph": g.model_ph, "temperature": g.model_temperature_c}
    peak = g.rate_per_h({**base, "chelator": g.chelator_optimum})
    assert peak == pytest.approx(g.peak_rate_per_h, rel=1e-12)
    half = g.chelator_optimum + g.chelator_width * math.sqrt(2 * math.log(2))
    assert g.rate_per_h({**base, "chelator": half}) == pytest.approx(peak / 2, rel=1e-12)
    # ln(time to 90 %) is exactly quadratic in chelator: second differences constant
    c = [1.0, 3.0, 5.0, 7.0, 9.0]
    lt = [math.log(g.time_to_90_h({**base, "chelator": x})) for x in c]
    second = [lt[i + 1] - 2 * lt[i] + lt[i - 1] for i in range(1, 4)]
    assert second == pytest.approx([4.0 / g.chelator_width ** 2] * 3, rel=1e-9)
    with pytest.raises(SimulationError, match="chelator_peak"):
        BathTruth(chelator_peak="triangle").rate_per_h({})


def test_temperature_follows_arrhenius_with_codata_r():
    ratio = T.rate_per_h({"temperature": 40.0}) / T.rate_per_h({"temperature": 20.0})
    expected = math.exp(40e3 / constants.R * (1 / 293.15 - 1 / 313.15))
    assert ratio == pytest.approx(expected, rel=1e-12)


def test_acid_attack_and_neutral_baths():
    # iron in aerated water corrodes slowly near neutral and much faster in acid (the
    # corrosion-rate-against-pH curve of Whitman, Russell & Altieri 1924, from memory)
    assert T.corrosion_mm_per_y({"ph": 6.5}) < 0.06
    assert T.corrosion_mm_per_y({"ph": 4.5}) > 10 * T.corrosion_mm_per_y({"ph": 7.0})
    acid_half = T.corrosion_mm_per_y({"ph": T.acid_ph_half}) - T.base_corrosion_mm_per_y
    assert acid_half == pytest.approx(T.acid_corrosion_mm_per_y / 2, rel=1e-12)
    assert T.corrosion_mm_per_y({"chelator": 2}) == T.corrosion_mm_per_y({"chelator": 9})


def test_reference_bath_speed_is_the_scenarios_own_and_water_barely_works():
    # the model's definition (invented): reference rate = speed-up x the best bath's rate
    for sc in EXAMPLES.values():
        t = sc.truth
        rate, _ = t.control("reference")
        assert rate == pytest.approx(
            t.reference_speedup * t.rate_per_h({"chelator": t.chelator_optimum}), rel=1e-12)
    rate, _ = T.control("untreated")
    assert 100 * (1 - math.exp(-rate * 48)) < 3.0
    with pytest.raises(SimulationError, match="untreated"):
        T.control("water")


def test_time_to_90_is_ln10_over_k():
    x = {"chelator": 3.0, "ph": 6.0}
    assert T.removal_pct(x, T.time_to_90_h(x)) == pytest.approx(90.0, rel=1e-12)


def test_real_effects_of_the_screen():
    t = EXAMPLES["five-factor-screen"].truth
    names = ["chelator", "ph", "temperature", "surfactant", "agitation"]
    assert t.real_effects(names) == {
        "removal": ["chelator", "ph", "temperature", "agitation"],
        "corrosion": ["ph", "temperature", "agitation"]}
    assert t.rate_per_h({"surfactant": "added"}) == t.rate_per_h({"surfactant": "none"})


@pytest.mark.parametrize("values, match", [
    ({"viscosity": 2.0}, "viscosity"),
    ({"chelator": 0.0}, "above 0"),
    ({"agitation": "stirred"}, "agitation"),
])
def test_bad_conditions_are_refused(values, match):
    with pytest.raises(SimulationError, match=match):
        T.rate_per_h(values)


def test_one_sided_desirability_is_the_linear_ramp():
    # Derringer & Suich (1980), exponent 1: d = (y - L)/(U - L) for maximise, clipped to 0..1
    assert one_sided_desirability(70, 50, 90, "higher") == pytest.approx(0.5)
    assert one_sided_desirability(40, 50, 90, "higher") == 0.0
    assert one_sided_desirability(0.10, 0.05, 0.30, "lower") == pytest.approx(0.8)
    assert one_sided_desirability(0.5, 0.05, 0.30, "lower") == 0.0
    with pytest.raises(SimulationError):
        one_sided_desirability(1, 0, 2, "target")


def test_surface_optimum_on_the_grid_matches_a_continuous_search():
    sc = EXAMPLES["surface-follow-up"]
    grid = sc.truth.best_on_grid({"chelator": (3, 7), "ph": (4.5, 7.5)}, surface_desirability,
                                 points=201)
    res = optimize.minimize_scalar(
        lambda p: -surface_desirability(sc.truth, {"chelator": 5.0, "ph": p}),
        bounds=(4.5, 7.5), method="bounded", options={"xatol": 1e-8})
    assert grid["conditions"]["chelator"] == pytest.approx(5.0, abs=1e-12)
    assert grid["conditions"]["ph"] == pytest.approx(res.x, abs=3.0 / 200)  # one grid step
    assert sc.confirmation_recipe["ph"] == pytest.approx(res.x, abs=0.05)


def test_noise_off_and_examples_exist():
    off = NoiseModel.off()
    assert all(v == 0.0 for v in off.__dict__.values())
    assert T.without_noise().noise == off
    for name, sc in EXAMPLES.items():
        assert sc.folder == name and (ROOT / name / "trial.toml").exists()
        assert "invented" in sc.truth.name
