"""``trialkit photos``: --json per photo, recording into a trial, exit codes (real command,
files in tmp_path; invented photos of tests/photo_scenes.py)."""

from __future__ import annotations

import json

from malformed_sheets.make_corpus import make_test_plan
from PIL import Image

from trialkit.demo.photo_scenes import render
from trialkit.records.log import RecordLog


def _photo(folder, name, pct, seed, **kw):
    scene = render(pct, seed=seed, size=(240, 320), **kw)
    p = folder / name
    Image.fromarray(scene.rgb).save(p)
    return p, scene


def test_json_prints_the_share_per_photo(cli, tmp_path):
    a, sa = _photo(tmp_path, "a.png", 10, 1)
    b, sb = _photo(tmp_path, "b.png", 60, 2, cast=(1.2, 1.0, 0.75), card=True)
    res = cli("photos", str(a), str(b), "--card", ",".join(map(str, sb.card)), "--json")
    assert res.returncode == 0, res.stderr
    rows = json.loads(res.stdout)["photos"]
    assert [r["photo"] for r in rows] == ["a.png", "b.png"]
    assert abs(rows[0]["rust_pct"] - sa.truth_pct) <= 3.0  # a's card box holds steel/paper
    assert abs(rows[1]["rust_pct"] - sb.truth_pct) <= 3.0
    assert "CIELAB" in rows[1]["method"]


def test_text_output_and_overlays(cli, tmp_path):
    a, scene = _photo(tmp_path, "a.png", 25, 3)
    res = cli("photos", str(a), "--overlays", str(tmp_path / "ov"))
    assert res.returncode == 0, res.stderr
    assert "a.png: " in res.stdout and "ASTM D610 grade 2;" in res.stdout
    assert len(list((tmp_path / "ov").glob("a-*.png"))) == 1


def test_records_into_the_trial_and_history_shows_the_source(cli, tmp_path):
    plan = make_test_plan(tmp_path / "trial")
    folder = plan.trial.folder
    p, _ = _photo(tmp_path, "IMG_0042.png", 30, 4)
    res = cli("photos", str(p), "--trial", str(folder), "--coupon", "B01-R1",
              "--when", "after")
    assert res.returncode == 0, res.stderr
    assert "B01-R1 coverage_after_photo_pct: accepted" in res.stdout
    hist = cli("history", str(folder), "--coupon", "B01-R1", "--json")
    rows = json.loads(hist.stdout)
    assert rows[0]["source"].startswith("photo IMG_0042.png:")
    assert rows[0]["field"] == "coverage_after_photo_pct"


def test_refusals_exit_codes_and_nothing_recorded(cli, tmp_path):
    plan = make_test_plan(tmp_path / "trial")
    folder = plan.trial.folder
    text = tmp_path / "B01-R1_after.png"
    text.write_text("not a picture")
    res = cli("photos", str(text), "--trial", str(folder))
    assert res.returncode == 2 and "B01-R1_after.png is not an image" in res.stderr
    assert "Traceback" not in res.stderr
    blank = tmp_path / "B01-R1_before.png"
    Image.new("RGB", (64, 64), (210, 200, 190)).save(blank)
    res = cli("photos", str(blank), "--trial", str(folder))
    assert res.returncode == 1 and "B01-R1_before.png: no coupon found" in res.stderr
    assert not (folder / "record-log.sqlite").exists() or \
        RecordLog.for_folder(folder).count() == 0
    res = cli("photos", str(blank), "--region", "5,5,1,1")
    assert res.returncode == 2 and "X0 < X1" in res.stderr
    res = cli("photos", str(tmp_path / "missing.png"))
    assert res.returncode == 2 and "missing.png" in res.stderr


def test_auto_card_with_no_card_refuses_the_batch_and_records_nothing(cli, tmp_path):
    plan = make_test_plan(tmp_path / "trial")
    folder = plan.trial.folder
    with_card, _ = _photo(tmp_path, "B01-R1_before.png", 60, 5, cast=(1.0, 0.83, 0.62),
                          card=True)
    without, _ = _photo(tmp_path, "B01-R1_after.png", 10, 6, cast=(1.0, 0.83, 0.62))
    res = cli("photos", str(with_card), str(without), "--trial", str(folder),
              "--card", "auto")
    assert res.returncode == 1, res.stderr
    assert "no card found in" in res.stderr and "B01-R1_after.png; give card = [x0, y0, " \
        "x1, y1]" in res.stderr
    assert "B01-R1_before.png" not in res.stderr.split("could not be measured")[1]
    assert not (folder / "record-log.sqlite").exists() or \
        RecordLog.for_folder(folder).count() == 0
