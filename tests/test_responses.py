"""Responses from coupon readings: hand-computed baths (ASTM G1 formula), the JSON
contract of issue 5 and bad input (readings are invented data for these checks)."""

from __future__ import annotations

import json
import math
import statistics

import numpy as np
import pandas as pd
import pytest

from trialkit.exceptions import ResponseError, TrialkitWarning
from trialkit.responses.compute import compute_responses
from trialkit.responses.kinetics import first_order

SPEC = {"shape": "plate", "length_mm": 50, "width_mm": 25, "thickness_mm": 2, "holes": [],
        "metal": "carbon steel", "cleaning_cycles": 0}
AREA = 28.0  # hand computation: 2(50*25 + 50*2 + 25*2) mm² = 28.00 cm²


def _row(bath, coupon, kind, m0, m1, before=None, after=None, start="2026-12-01 09:00",
         end="2026-12-02 09:00", **extra):
    row = {"run": int(bath[1:]), "bath": bath, "coupon": coupon, "coupon_kind": kind,
           "block": 1, "point": "factorial", "edta_g_l": 10.0 * int(bath[1:]),
           "replicate": 1, "std_order": int(bath[1:]), "mass_initial_g": m0,
           "mass_final_g": m1, "coverage_before_pct": before, "coverage_after_pct": after,
           "immersion_start": start, "immersion_end": end}
    row.update(extra)
    return row


def _readings():
    return pd.DataFrame([
        _row("B01", "B01-R1", "rusted", 20.0, 19.5, 60.0, 3.0),
        _row("B01", "B01-R2", "rusted", 20.1, 19.7, 50.0, 0.005),
        _row("B01", "B01-W1", "witness", 20.0, 19.99),
        _row("B02", "B02-R1", "rusted", 20.0, 19.6, 40.0, 20.0),
        _row("B02", "B02-W1", "witness", 20.0, 19.98),
    ])


def _coupon(resp, coupon):
    return resp.coupons.set_index("coupon").loc[coupon]


def test_hand_computed_bath():
    r = compute_responses(_readings(), coupon_spec=SPEC)
    assert not r.problems
    w = _coupon(r, "B01-W1")
    # ASTM G1: CR = 8.76e4 * 0.01 / (28 * 24 * 7.86) = 876 / 5281.92 mm/y
    assert w["corrosion_rate_mm_per_y"] == pytest.approx(876 / 5281.92, rel=1e-9)
    assert w["base_metal_loss_g_per_m2"] == pytest.approx(0.01 / AREA * 1e4, rel=1e-9)
    c = _coupon(r, "B01-R1")
    assert c["area_cm2"] == pytest.approx(AREA)
    assert c["exposure_h"] == pytest.approx(24.0)
    assert c["mass_loss_g_per_m2"] == pytest.approx(0.5 / AREA * 1e4, rel=1e-9)
    # rust removed = (0.5 - 0.01) g / 28 cm² = 175.0 g/m² (same area, same time)
    assert c["rust_removed_g_per_m2"] == pytest.approx(175.0, rel=1e-9)
    assert c["removal_pct"] == pytest.approx(95.0, rel=1e-12)
    assert c["rust_grade"] == 5  # ASTM D610 Table 1: 3 % lies in (1, 3]
    assert _coupon(r, "B01-R2")["rust_grade"] == 10  # 0.005 % <= 0.01 %
    assert math.isnan(c["corrosion_rate_mm_per_y"])  # rate only on witness coupons
    assert math.isnan(w["removal_pct"])


def test_bath_summary_mean_sd_n():
    r = compute_responses(_readings(), coupon_spec=SPEC)
    b1 = r.baths.set_index("bath").loc["B01"]
    per_m2 = [0.5 / AREA * 1e4, 0.4 / AREA * 1e4]
    assert b1["mass_loss_g_per_m2_mean"] == pytest.approx(statistics.mean(per_m2))
    assert b1["mass_loss_g_per_m2_sd"] == pytest.approx(statistics.stdev(per_m2))  # stdlib
    assert b1["mass_loss_g_per_m2_n"] == 2
    assert b1["corrosion_rate_mm_per_y_n"] == 1
    assert b1["edta_g_l"] == 10.0 and b1["coupons_rusted"] == 2
    assert r.bath_values("removal_pct").loc["B02"] == pytest.approx(50.0)


def test_witness_loss_scaled_to_immersion_time():
    # witness 48 h, rusted coupon 24 h: base-metal estimate is half the witness's per area
    df = pd.DataFrame([
        _row("B01", "B01-R1", "rusted", 20.0, 19.5, 60.0, 3.0),
        _row("B01", "B01-W1", "witness", 20.0, 19.98, end="2026-12-03 09:00"),
    ])
    r = compute_responses(df, coupon_spec=SPEC)
    est = 0.02 / AREA * 1e4 / 2
    assert _coupon(r, "B01-R1")["base_metal_loss_g_per_m2"] == pytest.approx(est, rel=1e-9)


def test_cleaning_cycle_correction_from_sheet_columns():
    # ASTM G1 Fig. 1 procedure on the reference file's hand-computed line (intercept 0.606 g)
    losses = [0.41, 0.56, 0.612, 0.614, 0.616, 0.618]
    extra = {f"mass_cycle_{i}_g": 20.0 - x for i, x in enumerate(losses, start=1)}
    df = pd.DataFrame([_row("B01", "B01-R1", "rusted", 20.0, math.nan, 60.0, 0.0, **extra),
                       _row("B01", "B01-W1", "witness", 20.0, 19.99)])
    r = compute_responses(df, coupon_spec={**SPEC, "cleaning_cycles": 6})
    c = _coupon(r, "B01-R1")
    assert c["cleaning_correction"] == "cycles"
    assert c["corrected_mass_loss_g"] == pytest.approx(0.606, abs=1e-9)
    assert c["mass_loss_g"] == pytest.approx(0.618, abs=1e-9)  # last cycle as final mass
    assert "mass_cycle_1_g" not in r.coupons.columns


def test_blank_correction():
    # ASTM G1 blank: subtract its loss per area times the coupon's area: 10 g/m² * 28 cm²
    r = compute_responses(_readings(), coupon_spec=SPEC, blank_loss_g_per_m2=10.0)
    c = _coupon(r, "B01-R1")
    assert c["cleaning_correction"] == "blank"
    assert c["corrected_mass_loss_g"] == pytest.approx(0.5 - 10.0 * AREA / 1e4, rel=1e-12)


def test_recorded_dimensions_and_area_override_the_spec():
    df = _readings()
    df["width_mm"] = [20.0, np.nan, np.nan, np.nan, np.nan]
    df["area_cm2"] = [np.nan, 30.0, np.nan, np.nan, np.nan]
    r = compute_responses(df, coupon_spec=SPEC)
    # 2(50*20 + 50*2 + 20*2) = 2280 mm²
    assert r.coupons["area_cm2"].tolist()[:3] == pytest.approx([22.8, 30.0, 28.0])


def test_timestamps_and_timecourse():
    df = _readings()
    df["immersion_start"] = pd.Timestamp("2026-12-01 09:00")
    df["immersion_end"] = pd.Timestamp("2026-12-01 21:00")
    t = np.array([0.0, 1, 2, 4, 8, 12])
    tc = pd.DataFrame([{"coupon": f"{b}-R1", "bath": b, "elapsed_h": ti,
                        "coverage_pct": float(first_order(ti, 60.0, k)), "mass_g": np.nan}
                       for b, k in (("B01", 0.4), ("B02", 0.05)) for ti in t])
    r = compute_responses(df, coupon_spec=SPEC, timecourse=tc)
    assert r.coupons["exposure_h"].iloc[0] == pytest.approx(12.0)
    b = r.baths.set_index("bath")
    assert b.loc["B01", "time_to_90_h"] == pytest.approx(math.log(10) / 0.4, rel=1e-6)
    assert math.isnan(b.loc["B02", "time_to_90_h"])  # 46 h > 12 h of readings
    assert not b.loc["B02", "reached_90"]
    assert any("B02: 90 % removal not reached" in w for w in r.warnings)
    assert "time_to_90_h" in r.measures()
    # exact curves: t40 ratio = k_B01 / k_B02 = 0.4 / 0.05 = 8 (B02 reaches 40 % at 10.2 h)
    ratio = r.time_ratio("B02", "B01", level_pct=40)
    assert ratio.ratio == pytest.approx(8.0, rel=1e-5)
    with pytest.raises(ResponseError, match="does not reach 90 %"):
        r.time_ratio("B02", "B01")
    with pytest.raises(ResponseError, match="no fitted removal curve"):
        r.time_ratio("B09", "B01")


def test_json_contract():
    r = compute_responses(_readings(), coupon_spec=SPEC)
    data = json.loads(json.dumps(r.to_dict(), allow_nan=False))
    need = {"coupon", "bath", "coupon_kind", "area_cm2", "mass_loss_g", "mass_loss_g_per_m2",
            "corrosion_rate_mm_per_y", "removal_pct", "rust_grade"}
    assert all(need <= set(c) for c in data["coupons"])
    rusted = next(c for c in data["coupons"] if c["coupon"] == "B01-R1")
    witness = next(c for c in data["coupons"] if c["coupon"] == "B01-W1")
    assert rusted["corrosion_rate_mm_per_y"] is None and rusted["rust_grade"] == 5
    assert witness["removal_pct"] is None and witness["rust_grade"] is None
    bath = data["baths"][0]
    for name in ("removal_pct", "rust_removed_g_per_m2", "corrosion_rate_mm_per_y"):
        assert {f"{name}_mean", f"{name}_sd", f"{name}_n"} <= set(bath)
    assert data["methods"]["corrosion_rate_mm_per_y"]["unit"] == "mm/y"
    assert "7.86" in data["methods"]["corrosion_rate_mm_per_y"]["method"]
    assert "B01" in r._repr_html_() and "5 coupons" in repr(r)


def test_bad_readings_file_all_problems_listed_rest_computes(tmp_path):
    # a malformed readings CSV: every kind of bad value of issue 5 in one file
    path = tmp_path / "readings.csv"
    path.write_text(
        "run,bath,coupon,coupon_kind,area_cm2,mass_initial_g,mass_final_g,"
        "coverage_before_pct,coverage_after_pct,immersion_start,immersion_end\n"
        "1,B01,B01-R1,rusted,28,20.0,19.5,60,3,2026-12-01 09:00,2026-12-02 09:00\n"
        "1,B01,B01-W1,witness,28,20.0,19.99,,,2026-12-01 09:00,2026-12-02 09:00\n"
        "2,B02,B02-R1,rusted,-4,20.0,19.5,60,3,2026-12-01 09:00,2026-12-02 09:00\n"
        "2,B02,B02-R2,rusted,0,20.0,19.5,60,3,2026-12-01 09:00,2026-12-02 09:00\n"
        "3,B03,B03-R1,rusted,28,20.0,19.5,60,3,2026-12-02 09:00,2026-12-01 09:00\n"
        "3,B03,B03-W1,witness,28,5.0,-1.0,,,2026-12-01 09:00,2026-12-02 09:00\n"
        "4,B04,B04-R1,rusted,28,20.0,19.5,160,-3,2026-12-01 09:00,2026-12-02 09:00\n",
        encoding="utf-8")
    df = pd.read_csv(path)
    with pytest.warns(TrialkitWarning, match="problem"):
        r = compute_responses(df)
    checks = r.problems.checks()
    for code in ("area_not_positive", "end_before_start", "mass_loss_exceeds_mass",
                 "coverage_out_of_range", "witness_missing"):
        assert code in checks, code
    assert checks.count("area_not_positive") == 2
    assert checks.count("coverage_out_of_range") == 2
    wheres = {p.where for p in r.problems if p.check == "witness_missing"}
    assert wheres == {"B02", "B03", "B04"}  # B03's witness has an impossible mass
    # the good bath still computes
    assert _coupon(r, "B01-R1")["rust_removed_g_per_m2"] == pytest.approx(
        (0.5 - 0.01) / 28 * 1e4, rel=1e-9)
    assert math.isnan(_coupon(r, "B02-R1")["area_cm2"])
    text = str(r.problems)
    assert "B02-R1" in text and "got -4" in text and "->" in text
    with pytest.raises(ResponseError, match="witness coupon") as info:
        compute_responses(df, strict=True)
    assert len(info.value.problems) == len(r.problems)


def test_missing_plan_columns_and_unknown_metal():
    with pytest.raises(ResponseError, match="coupon_kind"):
        compute_responses(pd.DataFrame({"coupon": ["B01-R1"], "bath": ["B01"]}))
    with pytest.warns(TrialkitWarning):
        r = compute_responses(_readings(), coupon_spec=SPEC, metal="unobtainium")
    assert r.problems.checks() == ["unknown_metal"]
    assert r.coupons["corrosion_rate_mm_per_y"].isna().all()
    assert r.coupons["removal_pct"].notna().sum() == 3  # the rest computes
    r2 = compute_responses(_readings(), coupon_spec=SPEC, metal="unobtainium",
                           density_g_cm3=7.86)
    assert not r2.problems
    assert _coupon(r2, "B01-W1")["corrosion_rate_mm_per_y"] == pytest.approx(876 / 5281.92)
