"""Removal kinetics: agreement with scipy.optimize.curve_fit (reference library) and
interval coverage on simulated data (invented data, seeded)."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from scipy.optimize import curve_fit

from trialkit.exceptions import ResponseError
from trialkit.responses.bath_kinetics import fit_baths
from trialkit.responses.kinetics import (
    first_order,
    fit_removal,
    lag_plateau,
    time_ratio,
)

TIMES = np.array([0.0, 1, 2, 4, 6, 8, 12, 24])


def _noisy(seed, fun, *params, sd=2.0, t=TIMES):
    rng = np.random.default_rng(seed)  # invented data for self-consistency checks
    return np.clip(fun(t, *params) + rng.normal(0.0, sd, t.size), 0.0, 100.0)


@pytest.mark.parametrize("seed", [11, 12, 13])
def test_first_order_agrees_with_curve_fit(seed):
    # reference library: scipy.optimize.curve_fit on the same data (invented, seeded)
    y = _noisy(seed, first_order, 80.0, 0.25)
    fit = fit_removal(TIMES, y, model="first_order")
    popt, pcov = curve_fit(first_order, TIMES, y, p0=[50.0, 0.1], xtol=1e-14, ftol=1e-14)
    assert fit.params["c0"] == pytest.approx(popt[0], rel=1e-6)
    assert fit.k_per_h == pytest.approx(popt[1], rel=1e-6)
    assert fit.k_se == pytest.approx(math.sqrt(pcov[1, 1]), rel=1e-4)


def test_lag_plateau_agrees_with_curve_fit():
    # curve_fit started from the true values (not ours) must land on the same optimum
    truth = (85.0, 10.0, 0.4, 3.0)
    y = _noisy(21, lag_plateau, *truth, sd=1.0)
    fit = fit_removal(TIMES, y, model="lag_plateau")
    popt, _ = curve_fit(lag_plateau, TIMES, y, p0=list(truth), xtol=1e-14, ftol=1e-14)
    got = [fit.params[k] for k in ("c0", "c_inf", "k", "lag")]
    assert got == pytest.approx(list(popt), rel=1e-6)


def test_aic_picks_the_model_that_made_the_data():
    lagged = _noisy(31, lag_plateau, 85.0, 10.0, 0.4, 3.0, sd=1.0)
    plain = _noisy(32, first_order, 80.0, 0.25, sd=1.0)
    assert fit_removal(TIMES, lagged).model == "lag_plateau"
    assert fit_removal(TIMES, plain).model == "first_order"


def test_rate_constant_interval_covers_truth_in_200_simulations():
    # invented data: 200 seeded simulations, k = 0.2 /h, noise SD 2 % coverage;
    # a 95 % interval must contain the true k in >= 90 % of them (issue 5 check)
    hits = 0
    for seed in range(200):
        y = _noisy(1000 + seed, first_order, 80.0, 0.2)
        fit = fit_removal(TIMES, y, model="first_order")
        hits += fit.k_lower <= 0.2 <= fit.k_upper
    assert hits >= 180


def test_half_life_of_exact_first_order_curve():
    # textbook first-order kinetics: t50 = ln 2 / k, t90 = ln 10 / k
    fit = fit_removal(TIMES, first_order(TIMES, 70.0, 0.3))
    assert fit.time_to_50_h == pytest.approx(math.log(2) / 0.3, rel=1e-8)
    assert fit.time_to_90_h == pytest.approx(math.log(10) / 0.3, rel=1e-8)
    assert fit.reached_90 and fit.notes == []


def test_ninety_percent_not_reached_is_said_not_extrapolated():
    t = np.array([0.0, 1, 2, 3, 4])  # k = 0.1: t90 = 23 h, far beyond the last reading
    fit = fit_removal(t, first_order(t, 60.0, 0.1))
    assert fit.reached_50 is False and fit.reached_90 is False
    assert math.isnan(fit.time_to_90_h)
    assert fit.time_to_90_model_h == pytest.approx(math.log(10) / 0.1, rel=1e-8)
    assert any("90 % removal not reached" in n for n in fit.notes)


def test_plateau_above_ten_percent_never_reaches_90():
    y = lag_plateau(TIMES, 80.0, 20.0, 0.5, 1.0)
    fit = fit_removal(TIMES, y, model="lag_plateau")
    assert math.isinf(fit.time_to_90_model_h) and not fit.reached_90
    assert "levels off" in " ".join(fit.notes)


def test_time_ratio_exact_and_interval():
    # exact curves: t90 ratio = k_ref / k = 0.3 / 0.15 = 2
    fast = fit_removal(TIMES, first_order(TIMES, 80.0, 0.3) + 1e-9 * TIMES)
    slow_t = np.array([0.0, 2, 4, 8, 16, 24, 32])
    slow = fit_removal(slow_t, first_order(slow_t, 80.0, 0.15) + 1e-9 * slow_t)
    r = time_ratio(slow, fast, bath="B02", reference_name="B01")
    assert r.ratio == pytest.approx(2.0, rel=1e-6)
    assert "B02 takes 2x as long as B01" in r.text
    noisy_fast = fit_removal(TIMES, _noisy(41, first_order, 80.0, 0.3))
    noisy_slow = fit_removal(slow_t, _noisy(42, first_order, 80.0, 0.15, t=slow_t))
    rn = time_ratio(noisy_slow, noisy_fast)
    assert rn.lower < 2.0 < rn.upper and rn.lower < rn.ratio < rn.upper


def test_time_ratio_refuses_unreached_level():
    t = np.array([0.0, 1, 2, 3, 4])
    slow = fit_removal(t, first_order(t, 60.0, 0.1))
    fast = fit_removal(TIMES, first_order(TIMES, 60.0, 0.3))
    with pytest.raises(ResponseError, match="does not reach 90 %"):
        time_ratio(slow, fast)


def test_fit_baths_pools_coupons_and_reports_failures():
    rows = []
    for bath, k in (("B01", 0.3), ("B02", 0.15)):
        for coupon in ("R1", "R2"):
            for ti in TIMES:
                rows.append({"bath": bath, "coupon": f"{bath}-{coupon}", "elapsed_h": ti,
                             "coverage_pct": float(first_order(ti, 75.0, k))})
    rows.append({"bath": "B03", "coupon": "B03-R1", "elapsed_h": 0.0, "coverage_pct": 50.0})
    table, fits, failed = fit_baths(pd.DataFrame(rows))
    assert list(table["bath"]) == ["B01", "B02"]
    assert table["rate_constant_per_h"].tolist() == pytest.approx([0.3, 0.15], rel=1e-8)
    assert table["timecourse_n"].tolist() == [16, 16]
    assert failed and failed[0][0] == "B03" and "3 or more times" in failed[0][1]


@pytest.mark.parametrize(
    "t, y, words",
    [
        ([0, 1, -2, 3], [50, 40, 30, 20], "elapsed_h >= 0"),
        ([0, 1, 2, 3], [50, 140, 30, 20], "within 0-100"),
        ([0, 1, 1], [50, 40, 30], "3 or more times"),
    ],
)
def test_bad_timecourse_input(t, y, words):
    with pytest.raises(ResponseError, match=words):
        fit_removal(t, y)


def _coupon_trial(seed, times, k_base, coupons=2, baths=8):
    """Invented trial (self-consistency): each bath its own rate, each coupon its own
    start and a rate scattered 8 % about the bath's, readings as the demo draws them."""
    rng = np.random.default_rng(seed)
    rows, truth = [], {}
    for b in range(baths):
        kb = k_base * math.exp(rng.normal(0, 0.3))
        truth[f"B{b}"] = kb
        for j in range(coupons):
            kc, c0 = kb * math.exp(0.08 * rng.normal()), rng.uniform(70, 95)
            for ti in times:
                c = c0 * math.exp(-kc * ti)
                c += 2.0 * math.sqrt(c * (100 - c)) / 50 * rng.normal()
                rows.append({"bath": f"B{b}", "coupon": f"B{b}-{j}", "elapsed_h": ti,
                             "coverage_pct": round(min(100.0, max(0.0, c)))})
    return pd.DataFrame(rows), truth


@pytest.mark.parametrize("times, k_base, reps", [
    ((4.0, 8, 16, 24, 48, 72), 0.08, 100),   # the sweep example's inspections
    ((1.0, 2, 4, 8), 0.35, 150),             # the surface example's inspections
])
def test_coupons_as_replicates_give_intervals_that_cover(times, k_base, reps):
    # invented data, fresh seeds: bath rate constants and time ratios (50 % removal,
    # against bath B0) must cover their truth 0.93-0.97 (issue 15; one-curve intervals
    # with a normal quantile covered 0.84-0.91 here)
    hk = nk = hr = nr = 0
    for seed in range(reps):
        table, truth = _coupon_trial(40_000 + seed, times, k_base)
        _, fits, _ = fit_baths(table, model="first_order")
        for bath, f in fits.items():
            nk += 1
            hk += f.k_lower <= truth[bath] <= f.k_upper
            assert f.coupons == 2 and f.df == 8 and f.k_lower > 0
        for bath in ("B1", "B2", "B3"):
            r = time_ratio(fits[bath], fits["B0"], level_pct=50)
            nr += 1
            hr += r.lower <= truth["B0"] / truth[bath] <= r.upper
    assert 0.93 <= hk / nk <= 0.97
    assert 0.93 <= hr / nr <= 0.97


def test_loosened_lag_fit_tolerances_leave_k_and_the_lag_where_they_were():
    # issue 18: the Nelder-Mead tolerances of the lag fit are loosened for speed; on every
    # coupon of two bundled examples (invented readings) k and the lag agree with the old
    # tight fit (xatol 1e-10, fatol 1e-14) within 1e-6 relative
    import pandas as pd

    from trialkit.responses import kinetics as kn

    root = Path(__file__).resolve().parents[1] / "example_trials"
    n = 0
    for name in ("chelator-sweep", "five-factor-screen"):
        tc = pd.read_csv(root / name / "readings" / "timecourse.csv")
        before = pd.read_csv(root / name / "readings" / "coupons.csv").set_index("coupon")
        for coupon, g in tc.groupby("coupon"):
            t = np.concatenate([[0.0], g.elapsed_h.to_numpy(float)])
            y = np.concatenate([[before.loc[coupon, "coverage_before_pct"]],
                                g.coverage_pct.to_numpy(float)])
            loose, tight = kn._profile_lag(t, y), kn._profile_lag(t, y, 1e-10, 1e-14)
            assert loose["k"] == pytest.approx(tight["k"], rel=1e-6)
            assert abs(loose["lag"] - tight["lag"]) <= 1e-6 * max(1.0, tight["lag"])
            n += 1
    assert n > 50


def test_lag_fit_tolerances_keep_k_and_the_lag_on_fresh_simulated_curves():
    # issue 18: the loosened Nelder-Mead tolerances (kinetics.LAG_XATOL / LAG_FATOL) against
    # a tight fit (xatol 1e-10, fatol 1e-14) on lag-plateau curves with reading noise
    # (invented, self-consistency), each from a fresh seed; k and the lag within 1e-6
    # relative. A dry run of 200 such curves at xatol 1e-6 / fatol 1e-9 came within
    # 5.9e-7 (too close to the bound to test on fresh seeds); at the kept 1e-7 / 1e-10
    # within 7.6e-8.
    from trialkit.responses import kinetics as kn

    seeds = np.random.SeedSequence()
    for child in seeds.spawn(12):
        rng = np.random.default_rng(child)
        c0, c_inf = rng.uniform(60, 95), rng.uniform(0, 15)
        k, lag = rng.uniform(0.05, 0.8), rng.uniform(0, 4)
        y = np.clip(lag_plateau(TIMES, c0, c_inf, k, lag) + rng.normal(0, 2, TIMES.size),
                    0, 100)
        loose, tight = kn._profile_lag(TIMES, y), kn._profile_lag(TIMES, y, 1e-10, 1e-14)
        where = f"entropy {seeds.entropy}, child {child.spawn_key}"
        assert loose["k"] == pytest.approx(tight["k"], rel=1e-6), where
        assert abs(loose["lag"] - tight["lag"]) <= 1e-6 * max(1.0, tight["lag"]), where
