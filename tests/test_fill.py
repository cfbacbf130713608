"""Filling exported recording sheets by program (trialkit.demo.fill).

Round trips through the sheets' own checked ingest: what the fill writes must come back
out of the record log unchanged.  Readings are the invented ones of the bundled
chelator-sweep example (invented data, not measurements).
"""

from __future__ import annotations

import dataclasses
import shutil
from pathlib import Path

import pandas as pd
import pytest

from trialkit.demo.fill import fill_sheet
from trialkit.exceptions import SheetError
from trialkit.planning.plan import make_plan
from trialkit.records.log import RecordLog
from trialkit.records.sheets import export_csv, export_xlsx, ingest_sheet, sheet_config
from trialkit.trial.file import load_trial

EXAMPLE = Path(__file__).resolve().parents[1] / "example_trials" / "chelator-sweep"
NUMBERS = ("mass_initial_g", "mass_final_g", "coverage_before_pct", "coverage_after_pct",
           "bath_ph", "bath_temperature_c")


@pytest.fixture(scope="module")
def trial_dir(tmp_path_factory):
    folder = tmp_path_factory.mktemp("fill") / "chelator-sweep"
    folder.mkdir()
    shutil.copy(EXAMPLE / "trial.toml", folder / "trial.toml")
    shutil.copytree(EXAMPLE / "readings", folder / "readings")
    return folder


@pytest.fixture(scope="module")
def plan(trial_dir):
    return make_plan(load_trial(trial_dir / "trial.toml"))


@pytest.fixture(scope="module")
def readings(trial_dir):
    return pd.read_csv(trial_dir / "readings" / "coupons.csv")


def _current(log: RecordLog, plan) -> pd.DataFrame:
    return log.current_values(plan=plan).set_index("coupon").sort_index()


def test_csv_fill_round_trips_through_ingest(tmp_path, trial_dir, plan, readings):
    sheet = export_csv(plan, tmp_path / "sheet.csv")
    res = fill_sheet(sheet, readings, tmp_path / "filled.csv")
    assert res.rows_filled == len(plan.table) and not res.missing
    assert sheet.read_bytes() != res.path.read_bytes()  # the original is left unchanged
    log = RecordLog(tmp_path / "log.sqlite")
    rep = ingest_sheet(res.path, plan, log=log)
    assert rep.ok, rep.refused
    got = _current(log, plan)
    want = readings.set_index("coupon").sort_index()
    for name in NUMBERS:
        pd.testing.assert_series_equal(got[name].astype(float), want[name].astype(float),
                                       check_names=False)
    assert (got["operator"] == want["operator"]).all()


def test_xlsx_fill_with_inspections_round_trips(tmp_path, trial_dir, plan, readings):
    tc = pd.read_csv(trial_dir / "readings" / "timecourse.csv")
    config = dataclasses.replace(sheet_config(plan.trial),
                                 inspections_h=tuple(sorted(tc["elapsed_h"].unique())))
    sheet = export_xlsx(plan, tmp_path / "sheet.xlsx", config=config)
    res = fill_sheet(sheet, readings, tmp_path / "filled.xlsx", timecourse=tc)
    # every rusted coupon's inspections are filled; witness rows have no inspections
    witness = int((plan.table["coupon_kind"] == "witness").sum())
    assert len(res.missing) == witness * len(config.inspections_h)
    log = RecordLog(tmp_path / "log.sqlite")
    rep = ingest_sheet(res.path, plan, log=log, config=config)
    assert rep.ok, rep.refused
    got = log.current_timecourse()
    cov = got[got["field"] == "coverage_pct"]
    assert len(cov) == len(tc)
    stored = dict(zip(zip(cov["coupon"], cov["inspection"].astype(int), strict=True),
                      cov["value"].astype(float), strict=True))
    first = tc.sort_values("elapsed_h").groupby("coupon").head(1)
    for row in first.itertuples():
        assert stored[(row.coupon, 1)] == pytest.approx(row.coverage_pct)


def test_fill_refuses_a_file_without_machine_names(tmp_path, readings):
    bad = tmp_path / "plain.csv"
    bad.write_text("a,b\n1,2\n", encoding="utf-8")
    with pytest.raises(SheetError, match="machine names"):
        fill_sheet(bad, readings, tmp_path / "out.csv")


def test_fill_refuses_readings_without_coupon_ids(tmp_path, plan):
    sheet = export_csv(plan, tmp_path / "sheet.csv")
    with pytest.raises(SheetError, match="'coupon' column"):
        fill_sheet(sheet, pd.DataFrame({"mass_initial_g": [1.0]}), tmp_path / "out.csv")


def test_fill_refuses_other_formats_and_missing_sheets(tmp_path, readings):
    odd = tmp_path / "sheet.ods"
    odd.write_bytes(b"not a sheet")
    with pytest.raises(SheetError, match=".ods"):
        fill_sheet(odd, readings, tmp_path / "out.ods")
    with pytest.raises(SheetError, match="not found"):
        fill_sheet(tmp_path / "nothing.xlsx", readings, tmp_path / "out.xlsx")
