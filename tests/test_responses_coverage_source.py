"""The responses use the coverage source the trial file names ([photos] coverage_from):
hand estimates by default, photo measurements when asked; both stay in the record log."""

from __future__ import annotations

import pytest
from malformed_sheets.make_corpus import fill_csv, make_test_plan, write_trial
from PIL import Image

from trialkit.demo.photo_scenes import render
from trialkit.exceptions import TrialFileError
from trialkit.photos.record import record_photos
from trialkit.records.log import RecordLog
from trialkit.records.sheets import export_csv, ingest_sheet
from trialkit.responses.compute import load_responses
from trialkit.responses.coverage_source import use_coverage_long
from trialkit.trial.file import load_trial

pytestmark = pytest.mark.filterwarnings("ignore::trialkit.exceptions.TrialkitWarning")

HAND = {"B01-R1": {"mass_initial_g": 25.0, "coverage_before_pct": 80.0,
                   "coverage_after_pct": 5.0}}


def _trial(tmp_path, extra=""):
    plan = make_test_plan(tmp_path / "trial", extra=extra)
    sheet = fill_csv(export_csv(plan, tmp_path / "blank.csv"), tmp_path / "s.csv", HAND)
    assert ingest_sheet(sheet, plan).ok
    photos = []
    for name, pct, seed in [("B01-R1_before.png", 60, 1), ("B01-R1_after.png", 12, 2),
                            ("B01-R1_i1.png", 30, 3)]:
        p = tmp_path / name
        Image.fromarray(render(pct, seed=seed, size=(240, 320)).rgb).save(p)
        photos.append(p)
    record_photos(plan.trial.folder, photos)
    return plan.trial.folder


def _removal(before, after):
    return (before - after) / before * 100.0  # removal_pct as defined in responses


def _coupon(responses, coupon):
    return responses.coupons.set_index("coupon").loc[coupon]


def test_default_is_the_hand_estimate(tmp_path):
    folder = _trial(tmp_path)
    r = _coupon(load_responses(folder), "B01-R1")
    assert r.removal_pct == pytest.approx(_removal(80.0, 5.0))
    assert r.coverage_after_pct == 5.0


def test_photo_source_uses_the_photo_measurements(tmp_path):
    folder = _trial(tmp_path, extra='\n[photos]\ncoverage_from = "photo"\n')
    cur = RecordLog.for_folder(folder).current_values().set_index("coupon").loc["B01-R1"]
    r = _coupon(load_responses(folder), "B01-R1")
    assert r.removal_pct == pytest.approx(_removal(cur.coverage_before_photo_pct,
                                                   cur.coverage_after_photo_pct))
    assert r.coverage_after_pct == pytest.approx(cur.coverage_after_photo_pct)
    assert cur.coverage_after_pct == 5.0  # the hand estimate is still in the log


def test_time_course_takes_the_named_source(tmp_path):
    folder = _trial(tmp_path)
    long = RecordLog.for_folder(folder).current_timecourse()
    photo = long[long.field == "coverage_photo_pct"].value.iloc[0]
    got = use_coverage_long(long, "photo")
    assert got[got.field == "coverage_pct"].value.tolist() == [photo]
    assert "coverage_photo_pct" not in set(use_coverage_long(long, "hand").field)


def test_unknown_source_is_refused_by_the_trial_file(tmp_path):
    folder = write_trial(tmp_path / "t", extra='\n[photos]\ncoverage_from = "eyes"\n')
    with pytest.raises(TrialFileError, match="coverage_from must be one of hand, photo"):
        load_trial(folder)
