"""Editing the trial file after readings are recorded never re-labels them: re-planning is
refused with the reason, and the analysis says why it does not use the readings."""

from __future__ import annotations

import hashlib

import pytest
from trial_texts import trial_text

from trialkit.analysis.trial_analysis import analyze
from trialkit.cli import main
from trialkit.planning.plan import load_plan
from trialkit.records.log import LOG_FILE, RecordLog

TEXT = trial_text("chelator", "temperature", layout="replicates = 2",
                  extra='[[response]]\nname = "removal"\nunit = "%"\naim = "higher"\n'
                        'measure = "removal_pct"\n')


def _recorded(tmp_path):
    folder = tmp_path / "trial"
    folder.mkdir()
    (folder / "trial.toml").write_text(TEXT, encoding="utf-8")
    assert main(["plan", str(folder)]) == 0
    plan = load_plan(folder)
    rows = [(c, 0, "mass_initial_g", 10.0 + i / 100) for i, c in enumerate(plan.table.coupon)]
    RecordLog.for_folder(folder).add_readings(rows, source="day1.csv", sha256="d" * 64,
                                              fingerprint=plan.fingerprint)
    return folder, plan


def _digest(path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def test_replanning_an_edited_trial_with_readings_is_refused(tmp_path, capsys):
    folder, plan = _recorded(tmp_path)
    (folder / "trial.toml").write_text(TEXT.replace("high = 40", "high = 45"),
                                       encoding="utf-8")   # 40 degC baths would become 45
    log, csv = folder / LOG_FILE, folder / "plan.csv"
    before = (_digest(log), _digest(csv))
    capsys.readouterr()
    assert main(["plan", str(folder)]) == 2
    err = capsys.readouterr().err
    assert f"recorded against plan {plan.fingerprint}" in err
    assert "Nothing was changed and nothing is re-labelled" in err
    assert (_digest(log), _digest(csv)) == before
    # the responses refuse too, and the analysis says why it does not use the readings
    assert main(["responses", str(folder)]) == 2
    assert "edited after readings were recorded" in capsys.readouterr().err
    result = analyze(folder)
    said = " ".join(sum(result.notes.values(), []))
    assert "edited after readings were recorded" in said
    assert result.baths is None and result.recommendation is None
    assert (_digest(log), _digest(csv)) == before


def test_the_same_trial_plans_again_beside_its_readings(tmp_path):
    folder, plan = _recorded(tmp_path)
    assert main(["plan", str(folder)]) == 0          # unchanged: same plan, allowed
    assert RecordLog.for_folder(folder).plan_fingerprint() == plan.fingerprint


BATH = """
[bath]
adjust_with = "citric acid"
target_ph = 6.5
set_by = { temperature = "temperature" }
[[bath.ingredient]]
name = "tetrasodium EDTA"
factor = "chelator"
"""


def test_a_bath_recorded_off_its_planned_temperature_is_listed(tmp_path):
    # issue 16: the bath pH and temperature recorded at the bench are compared with the plan
    from trialkit.report.build import build_report

    folder = tmp_path / "trial"
    folder.mkdir()
    (folder / "trial.toml").write_text(TEXT + BATH, encoding="utf-8")
    plan = load_plan(folder)
    hot = plan.baths[plan.baths.temperature == 40].bath.iloc[0]
    rows = []
    for r in plan.table.itertuples():
        t = float(r.temperature) + (5.0 if r.bath == hot else 0.4)
        rows += [(r.coupon, 0, "bath_temperature_c", t), (r.coupon, 0, "bath_ph", 6.55)]
    RecordLog.for_folder(folder).add_readings(rows, source="day1.csv", sha256="e" * 64,
                                              fingerprint=plan.fingerprint)
    result = analyze(folder)
    off = result.bench
    assert list(off.bath) == [hot] and off.quantity.iloc[0] == "temperature"
    assert off.difference.iloc[0] == pytest.approx(5.0) and off.planned.iloc[0] == 40
    assert result.to_dict()["bench_deviations"][0]["bath"] == hot
    quality = build_report(result).section("readings")
    assert any(b.kind == "table" and b.text.startswith("Bath conditions off the plan")
               for b in quality.blocks)


def test_the_report_carries_the_head_of_the_record_logs_hash_chain(tmp_path):
    # issue 14: the head is kept in a second place, and on every exported report
    import sqlite3

    from trialkit.records.chain import verify_log
    from trialkit.report.build import build_report

    folder, _ = _recorded(tmp_path)
    head = verify_log(folder / LOG_FILE).head
    pairs = dict(build_report(analyze(folder)).section("reproduce").blocks[0].items)
    assert pairs["Record log"].startswith("intact: 1 ingest(s)") and head in \
        pairs["Record log"]
    con = sqlite3.connect(folder / LOG_FILE)          # an edit made outside trialkit
    con.execute("DROP TRIGGER IF EXISTS readings_no_update")
    con.execute("UPDATE readings SET value_num = 99 WHERE id = 1")
    con.commit()
    con.close()
    result = analyze(folder)
    assert result.to_dict()["record_log"]["ok"] is False
    pairs = dict(build_report(result).section("reproduce").blocks[0].items)
    assert pairs["Record log"].startswith("BROKEN: ")
