"""``trialkit responses DIR`` as a user runs it (real subprocess, record log in tmp_path).

Needs ``trialkit.records.log`` (the record log) and ``trialkit.planning.plan``.
Readings are invented data; expected values are hand-computed with the ASTM G1 formula.
"""

from __future__ import annotations

import json
import math

import pandas as pd
import pytest

from trialkit.planning.plan import load_plan

# starter trial of ``trialkit new``: plate 50 x 25 x 2 mm with one 4 mm hole; the hole
# takes 2*pi*2² = 8 pi mm² off the faces and its bore adds pi*4*2 = 8 pi: 2800 mm² = 28 cm²
AREA = 28.0
START, END = "2026-12-01T09:00:00", "2026-12-02T09:00:00"  # 24 h


def _trial(tmp_path, cli, *, skip_witness_of: str | None = None, timecourse: bool = False):
    from trialkit.records.log import RecordLog  # the record log (branch sheets until merged)

    folder = tmp_path / "t"
    assert cli("new", str(folder)).returncode == 0
    plan = load_plan(folder)
    rows = []
    for rec in plan.table.itertuples():
        if rec.coupon_kind == "witness" and rec.bath == skip_witness_of:
            continue
        final = 19.6 if rec.coupon_kind == "rusted" else 19.99
        rows += [(rec.coupon, 0, "mass_initial_g", 20.0), (rec.coupon, 0, "mass_final_g", final),
                 (rec.coupon, 0, "immersion_start", START), (rec.coupon, 0, "immersion_end", END)]
        if rec.coupon_kind == "rusted":
            rows += [(rec.coupon, 0, "coverage_before_pct", 50.0),
                     (rec.coupon, 0, "coverage_after_pct", 5.0)]
            if timecourse:
                for j, t in enumerate((0.0, 2.0, 4.0, 8.0, 16.0), start=1):
                    rows += [(rec.coupon, j, "elapsed_h", t),
                             (rec.coupon, j, "coverage_pct", 50.0 * math.exp(-0.3 * t))]
    log = RecordLog.for_folder(folder)
    log.add_readings(rows, source="invented.csv", sha256="1" * 64,
                     fingerprint=plan.fingerprint)
    return folder, plan


def test_responses_json_hand_computed(tmp_path, cli):
    folder, plan = _trial(tmp_path, cli, timecourse=True)
    result = cli("responses", str(folder), "--json")
    assert result.returncode == 0, result.stderr + result.stdout
    data = json.loads(result.stdout)
    assert len(data["coupons"]) == len(plan.table)
    assert len(data["baths"]) == plan.table["bath"].nunique()
    rusted = next(c for c in data["coupons"] if c["coupon_kind"] == "rusted")
    witness = next(c for c in data["coupons"] if c["coupon_kind"] == "witness")
    assert rusted["area_cm2"] == pytest.approx(AREA, rel=1e-12)
    assert rusted["mass_loss_g_per_m2"] == pytest.approx(0.4 / AREA * 1e4, rel=1e-9)
    assert rusted["removal_pct"] == pytest.approx(90.0, rel=1e-12)
    assert rusted["rust_grade"] == 4  # ASTM D610: 5 % lies in (3, 10]
    assert rusted["corrosion_rate_mm_per_y"] is None
    # ASTM G1: 8.76e4 * 0.01 / (28 * 24 * 7.86)
    assert witness["corrosion_rate_mm_per_y"] == pytest.approx(876 / 5281.92, rel=1e-6)
    assert witness["removal_pct"] is None
    bath = data["baths"][0]
    assert bath["rust_removed_g_per_m2_mean"] == pytest.approx((0.4 - 0.01) / AREA * 1e4,
                                                               rel=1e-6)
    assert bath["rust_removed_g_per_m2_n"] == 2 and bath["rust_removed_g_per_m2_sd"] == 0.0
    assert bath["time_to_90_h"] == pytest.approx(math.log(10) / 0.3, rel=1e-5)
    assert data["problems"] == []


def test_responses_missing_witness_listed_rest_computes(tmp_path, cli):
    folder, plan = _trial(tmp_path, cli, skip_witness_of="B01")
    result = cli("responses", str(folder))
    assert result.returncode == 1
    assert "B01: no witness coupon" in result.stdout
    assert "removal_pct_mean" in result.stdout
    data = json.loads(cli("responses", str(folder), "--json").stdout)
    baths = pd.DataFrame(data["baths"]).set_index("bath")
    assert baths["rust_removed_g_per_m2_n"].loc["B01"] == 0
    assert (baths.drop(index="B01")["rust_removed_g_per_m2_n"] == 2).all()
    strict = cli("responses", str(folder), "--strict")
    assert strict.returncode == 1 and "witness" in strict.stderr  # refused, problems listed


def test_responses_without_record_log(tmp_path, cli):
    folder = tmp_path / "t"
    cli("new", str(folder))
    result = cli("responses", str(folder))
    assert result.returncode == 2
    assert "no record log" in result.stderr and "trialkit ingest" in result.stderr
    assert not (folder / "record-log.sqlite").exists()  # reading never creates a log


def test_responses_with_an_empty_record_log(tmp_path, cli):
    # a log that holds no readings says so once, not one problem per bath
    from trialkit.records.log import RecordLog

    folder = tmp_path / "t"
    cli("new", str(folder))
    RecordLog.for_folder(folder)
    result = cli("responses", str(folder))
    assert result.returncode == 2
    assert "holds no readings yet" in result.stderr and "trialkit ingest" in result.stderr
    assert "witness" not in result.stdout + result.stderr
