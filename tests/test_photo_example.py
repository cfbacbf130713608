"""The photo example: invented photos drawn from an example trial's invented readings go
through ``trialkit photos`` into a copy of the trial and come back within 3 points of
their truth (a warm cast corrected by the grey card: issue 20's check)."""

from __future__ import annotations

import json
import shutil
import subprocess
import sys
from pathlib import Path

from trialkit.records.log import RecordLog

ROOT = Path(__file__).resolve().parents[1]


def test_photos_from_the_example_truth_through_the_command(cli, tmp_path):
    done = subprocess.run([sys.executable, str(ROOT / "example_trials/photos_from_truth.py"),
                           str(tmp_path / "out"), "--coupons", "4"],
                          capture_output=True, text=True, timeout=300)
    assert done.returncode == 0, done.stderr
    truth = json.loads((tmp_path / "out/truth.json").read_text())
    trial = tmp_path / "trial"
    trial.mkdir()
    shutil.copy(ROOT / "example_trials/chelator-sweep/trial.toml", trial / "trial.toml")
    photos = sorted(str(p) for p in (tmp_path / "out/photos").glob("*.png"))
    res = cli("photos", *photos, "--trial", str(trial), "--card",
              ",".join(map(str, truth["card"])), "--json")
    assert res.returncode == 0, res.stderr
    rows = json.loads(res.stdout)["photos"]
    assert len(rows) == len(truth["photos"]) == 8
    for row in rows:
        t = truth["photos"][row["photo"]]
        assert abs(row["rust_pct"] - t["rust_pct"]) <= 3.0, (row["photo"], row["rust_pct"])
        assert row["coupon"] == t["coupon"] and row["status"] == "accepted"
    hist = RecordLog.for_folder(trial).history()
    assert len(hist) == 8 and hist.source.str.startswith("photo ").all()
    # the example folder itself is untouched: it has no record log or overlays
    assert not (ROOT / "example_trials/chelator-sweep/record-log.sqlite").exists()
