"""Start-up guard: commands that only read a trial file, a plan or the record log do not
import the heavy libraries of later stages.

What it guards (issue 18, "Start-up"): pyDOE3 (whose import pulls in scipy.stats),
scipy.stats, matplotlib, jinja2 and statsmodels each cost from a few tenths of a second to
seconds on a cold start, and none of them is needed to lay out a two-level factorial, print
the trial-file reference, list the record log or check its hash chain.  An import at the
top of a module on these paths (instead of at first use, inside the function that needs
it) fails this test, naming the command and the module.

Each command runs in a fresh interpreter (a subprocess), so what earlier tests imported
does not count; the test asserts on ``sys.modules`` after the command ran, never on time
(speed is measured by ``benchmarks/bench_design.py --only startup``).
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest
from malformed_sheets.make_corpus import fill_csv, good_readings, make_test_plan

from trialkit.records.sheets import export_csv, ingest_sheet

REPO = Path(__file__).resolve().parents[1]

#: Libraries a reading command must not import (the top-level name or the subpackage).
GUARDED = ("pyDOE3", "scipy.stats", "matplotlib", "jinja2", "statsmodels")

#: Runs the command in-process through trialkit.cli.main, then reports its exit code and
#: which guarded modules ended up in sys.modules.
PROBE = """
import contextlib, io, json, sys
from trialkit.cli import main
out = io.StringIO()
with contextlib.redirect_stdout(out):
    code = main(sys.argv[1:])
guarded = json.loads({guarded!r})
print(json.dumps({{"code": code, "stdout": out.getvalue(),
                  "loaded": [m for m in guarded if m in sys.modules]}}))
"""

SMALL_FACTORIAL = """
[trial]
title = "Invented start-up check: 2^3 factorial"
seed = 18

[[factor]]
name = "chelator"
unit = "% w/v"
low = 2
high = 10

[[factor]]
name = "ph"
unit = "pH"
low = 5.5
high = 7.5

[[factor]]
name = "temperature"
unit = "degC"
low = 20
high = 40

[design]
kind = "{kind}"
{options}

[layout]
replicates = 2
center_points = 2
coupons_per_bath = 2
witness_coupons = 1

[coupons]
shape = "plate"
length = 50
width = 25
thickness = 2
metal = "carbon steel"

[[response]]
name = "removal"
unit = "%"
aim = "higher"
measure = "removal_pct"
"""


def _probe(*args: str, cwd: Path) -> dict:
    env = dict(os.environ, PYTHONPATH=str(REPO) + os.pathsep + os.environ.get("PYTHONPATH", ""))
    code = PROBE.format(guarded=json.dumps(GUARDED))
    proc = subprocess.run([sys.executable, "-c", code, *args], cwd=cwd, env=env,
                          capture_output=True, text=True, timeout=300)
    assert proc.returncode == 0, proc.stderr[-2000:]
    return json.loads(proc.stdout.strip().splitlines()[-1])


def _trial(folder: Path, kind: str, options: str = "") -> Path:
    folder.mkdir(parents=True, exist_ok=True)
    (folder / "trial.toml").write_text(SMALL_FACTORIAL.format(kind=kind, options=options),
                                       encoding="utf-8")
    return folder


@pytest.mark.parametrize(("kind", "options", "points"), [
    ("full-factorial", "", 8),
    ("fractional-factorial", 'generators = ["C = -AB"]', 4),
    ("fractional-factorial", "resolution = 3", 4),
])
def test_plan_of_a_two_level_trial_imports_no_heavy_library(tmp_path, kind, options, points):
    folder = _trial(tmp_path / "trial", kind, options)
    res = _probe("plan", str(folder), "--json", cwd=tmp_path)
    assert res["code"] == 0
    summary = json.loads(res["stdout"])
    assert summary["design"]["kind"] == kind and summary["design"]["points"] == points
    assert (folder / "plan.csv").is_file()
    assert res["loaded"] == [], f"trialkit plan ({kind}) imported {res['loaded']}"


def test_trial_file_reference_imports_no_heavy_library(tmp_path):
    res = _probe("new", "--explain", cwd=tmp_path)
    assert res["code"] == 0 and "[design]" in res["stdout"]
    assert res["loaded"] == [], f"trialkit new --explain imported {res['loaded']}"


def test_csv_sheet_export_imports_no_heavy_library(tmp_path):
    folder = _trial(tmp_path / "trial", "full-factorial")
    out = tmp_path / "sheet.csv"
    res = _probe("sheet", str(folder), "--format", "csv", "--out", str(out), cwd=tmp_path)
    assert res["code"] == 0 and out.is_file()
    assert res["loaded"] == [], f"trialkit sheet --format csv imported {res['loaded']}"


def test_history_and_verify_of_a_record_log_import_no_heavy_library(tmp_path):
    plan = make_test_plan(tmp_path / "logged")
    blank = export_csv(plan, tmp_path / "blank.csv")
    assert ingest_sheet(fill_csv(blank, tmp_path / "day1.csv", good_readings()), plan).ok
    folder = str(plan.trial.folder)
    history = _probe("history", folder, "--coupon", "B01-R1", cwd=tmp_path)
    assert history["code"] == 0 and "day1.csv" in history["stdout"]
    assert history["loaded"] == [], f"trialkit history imported {history['loaded']}"
    verify = _probe("verify", folder, cwd=tmp_path)
    assert verify["code"] == 0 and "intact" in verify["stdout"]
    assert verify["loaded"] == [], f"trialkit verify imported {verify['loaded']}"
