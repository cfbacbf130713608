"""Photo coverages into the record log: source, SHA-256, beside the hand estimate, and
refusals that leave the log unchanged (invented test trial of tests/malformed_sheets)."""

from __future__ import annotations

import hashlib

import numpy as np
import pytest
from malformed_sheets.make_corpus import fill_csv, make_test_plan
from PIL import Image

from trialkit.demo.photo_scenes import render
from trialkit.exceptions import PhotoError
from trialkit.photos.record import photo_target, record_photos, target_of
from trialkit.records.log import RecordLog
from trialkit.records.sheets import export_csv, ingest_sheet

SMALL = (240, 320)


def _photo(folder, name, pct, seed):
    scene = render(pct, seed=seed, size=SMALL)
    p = folder / name
    Image.fromarray(scene.rgb).save(p)
    return p, scene.truth_pct


def _log_state(folder):
    # every stored value with its source, and the hash chain's head file
    hist = RecordLog.for_folder(folder).history().to_dict("records")
    return hist, (folder / "record-log.sqlite.head").read_text()


def test_file_names_name_coupon_and_moment():
    assert photo_target("B01-R1_before.JPG") == ("B01-R1", 0, "coverage_before_photo_pct")
    assert photo_target("B01_R1_i12.png") == ("B01_R1", 12, "coverage_photo_pct")
    assert photo_target("holiday.jpg") is None
    assert target_of("B02-R2", "after") == ("B02-R2", 0, "coverage_after_photo_pct")
    with pytest.raises(PhotoError, match="before, after or i<n>"):
        target_of("B02-R2", "later")


def test_photo_values_stored_beside_hand_values_with_their_source(tmp_path):
    plan = make_test_plan(tmp_path / "trial")
    folder = plan.trial.folder
    sheet = fill_csv(export_csv(plan, tmp_path / "blank.csv"), tmp_path / "day1.csv",
                     {"B01-R1": {"mass_initial_g": 25.0, "coverage_before_pct": 80.0,
                                 "coverage_after_pct": 5.0}})
    assert ingest_sheet(sheet, plan).ok
    before, t_before = _photo(tmp_path, "B01-R1_before.png", 75, 1)
    after, t_after = _photo(tmp_path, "B01-R1_after.png", 4, 2)
    batch = record_photos(folder, [before, after])
    assert list(batch.table.status) == ["accepted", "accepted"]
    hist = RecordLog.for_folder(folder).history("B01-R1")
    photo_rows = hist[hist.field.str.contains("photo")]
    assert set(photo_rows.field) == {"coverage_before_photo_pct", "coverage_after_photo_pct"}
    row = photo_rows[photo_rows.field == "coverage_after_photo_pct"].iloc[0]
    photo_hash = hashlib.sha256(after.read_bytes()).hexdigest()
    m = batch.measurements[1]
    # the source names the photo, its own SHA-256 and the method; the ingest key is the
    # hash of the photo's hash and the method line
    assert row.source.startswith("photo B01-R1_after.png: ") and "otsu" in row.source
    assert row.source.endswith(f"; photo sha256 {photo_hash}")
    assert row.sha256 == hashlib.sha256(f"{photo_hash}\n{m.method_text()}".encode()
                                        ).hexdigest()
    from trialkit.photos.record import photo_readings

    table = photo_readings(RecordLog.for_folder(folder).history(), folder)
    assert photo_hash in set(table.sha256)
    assert abs(row.value - t_after) <= 2.0
    cur = RecordLog.for_folder(folder).current_values(plan).set_index("coupon")
    assert cur.at["B01-R1", "coverage_after_pct"] == 5.0  # the hand estimate is kept
    assert abs(cur.at["B01-R1", "coverage_before_photo_pct"] - t_before) <= 2.0
    overlay = folder / "photo-overlays" / f"B01-R1_after-{row.sha256[:10]}.png"
    assert overlay.exists() and Image.open(overlay).size[0] <= 320
    # the same photo again changes nothing
    n = RecordLog.for_folder(folder).count()
    again = record_photos(folder, [after])
    assert list(again.table.status) == ["already_ingested"]
    assert RecordLog.for_folder(folder).count() == n
    # the same photo measured with other settings is a new measurement, kept beside the
    # first, with an overlay of its own
    from dataclasses import replace

    other = record_photos(folder, [after], settings=replace(m.settings, smoothing=2.0))
    assert list(other.table.status) != ["already_ingested"]
    rows = photo_readings(RecordLog.for_folder(folder).history(), folder)
    rows = rows[rows.reading == "coverage_after_photo_pct"]
    assert len(rows) == 2 and set(rows.sha256) == {photo_hash}
    assert rows.method.str.contains("smoothing 2").sum() == 1
    assert rows.overlay.nunique() == 2 and all(rows.overlay != "")


def test_inspection_photo_goes_to_the_time_course(tmp_path):
    plan = make_test_plan(tmp_path / "trial")
    p, truth = _photo(tmp_path, "B02-R2_i2.png", 30, 3)
    record_photos(plan.trial.folder, [p])
    tc = RecordLog.for_folder(plan.trial.folder).current_timecourse()
    assert tc.iloc[0][["coupon", "inspection", "field"]].tolist() == [
        "B02-R2", 2, "coverage_photo_pct"]
    assert abs(tc.iloc[0].value - truth) <= 2.0


@pytest.mark.parametrize("spoil", ["not_an_image", "empty_file", "empty_image",
                                   "no_coupon", "unknown_coupon", "unplanned_inspection",
                                   "unnamed", "inspection_zero"])
def test_one_bad_photo_refuses_the_batch_and_the_log_is_unchanged(tmp_path, spoil):
    plan = make_test_plan(tmp_path / "trial")
    folder = plan.trial.folder
    good, _ = _photo(tmp_path, "B01-R1_before.png", 50, 4)
    record_photos(folder, [good])
    state = _log_state(folder)
    count = RecordLog.for_folder(folder).count()
    ok, _ = _photo(tmp_path, "B01-R2_before.png", 40, 5)
    name = {"unknown_coupon": "Z99-R9_after.png", "unplanned_inspection": "B01-R1_i7.png",
            "unnamed": "IMG_0001.png", "inspection_zero": "B01-R1_i0.png"}.get(
                spoil, "B01-R1_after.png")
    bad = tmp_path / name
    if spoil == "not_an_image":
        bad.write_text("coupon list\nB01-R1\n")
    elif spoil == "empty_file":
        bad.write_bytes(b"")
    elif spoil == "empty_image":
        Image.fromarray(np.full((80, 80, 3), 200, np.uint8)).save(bad)
    elif spoil == "no_coupon":
        Image.fromarray((np.random.default_rng(1).normal(0.5, 0.01, (80, 80, 3)) * 255)
                        .clip(0, 255).astype(np.uint8)).save(bad)
    else:
        _photo(tmp_path, name, 20, 6)
    with pytest.raises(PhotoError, match=name) as err:
        record_photos(folder, [ok, bad])
    assert "nothing was recorded" in str(err.value)
    assert RecordLog.for_folder(folder).count() == count
    assert _log_state(folder) == state
    assert not (folder / "photo-overlays" / "B01-R2_before").exists()
    assert len(list((folder / "photo-overlays").iterdir())) == 1


def test_the_trial_files_photo_settings_are_used(tmp_path):
    # the card box is given once for the series in [photos]; the photo has an amber cast
    scene = render(35, seed=9, size=SMALL, cast=(1.2, 1.0, 0.75), card=True)
    box = ", ".join(map(str, scene.card))
    plan = make_test_plan(tmp_path / "trial", extra=f"\n[photos]\ncard = [{box}]\n")
    p = tmp_path / "B01-R1_after.png"
    Image.fromarray(scene.rgb).save(p)
    batch = record_photos(plan.trial.folder, [p])
    m = batch.measurements[0]
    assert m.white_balance == "grey card" and m.settings.card == scene.card
    assert abs(m.rust_pct - scene.truth_pct) <= 3.0
    source = RecordLog.for_folder(plan.trial.folder).history().source.iloc[0]
    assert "white balance from the grey card" in source
