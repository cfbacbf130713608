"""The end-to-end demo (trialkit.demo.run and ``trialkit demo``) on the bundled examples.

The example trials and their readings are invented (``example_trials/``).  The full demo
runs once per module, as the real command in a subprocess from a temporary folder; a
second, library run up to the responses checks that plans and numbers repeat.
"""

from __future__ import annotations

import json
import os
import re
import subprocess
import sys
from pathlib import Path

import pandas as pd
import pytest

import trialkit
from trialkit.demo.run import STAGES, DemoError, DemoResult, bundled_trials, run_demo

REPO = Path(__file__).resolve().parents[1]
EXAMPLES = REPO / "example_trials"
pytestmark = pytest.mark.slow  # the whole loop / a kernel per notebook


@pytest.fixture(scope="module")
def cli_run(tmp_path_factory):
    """``python -m trialkit demo --out DIR`` run once from a temporary folder."""
    cwd = tmp_path_factory.mktemp("demo-cwd")
    out = cwd / "out"
    env = {**os.environ, "PYTHONPATH": str(REPO), "MPLBACKEND": "Agg"}
    proc = subprocess.run([sys.executable, "-m", "trialkit", "demo", "--out", str(out)],
                          cwd=cwd, env=env, capture_output=True, text=True, timeout=600)
    return proc, out


@pytest.fixture(scope="module")
def second_run(tmp_path_factory):
    """The same demo again through the library, up to the responses."""
    return run_demo(tmp_path_factory.mktemp("demo-again") / "out", until="responses")


def test_cli_demo_writes_a_report_per_bundled_trial(cli_run):
    proc, out = cli_run
    assert proc.returncode == 0, proc.stderr[-3000:]
    names = bundled_trials()
    assert len(names) >= 3
    for name in names:
        report = out / name / "report.html"
        assert report.is_file()
        page = report.read_text(encoding="utf-8")
        title = re.search(r'^title = "(.*)"', (EXAMPLES / name / "trial.toml").read_text(
            encoding="utf-8"), re.M).group(1)
        assert title in page
        # the report was built from ingested readings, not from an empty log
        assert "no readings recorded yet" not in page
        assert f"report: {report}" in proc.stdout


def test_cli_demo_prints_progress_for_every_stage(cli_run):
    proc, _ = cli_run
    for name in bundled_trials():
        for stage in STAGES:
            assert re.search(rf"^\[{re.escape(name)}\] {stage}: (done|skipped: .+)",
                             proc.stderr, re.M), (name, stage)
    assert "invented" in proc.stdout


def test_demo_plans_equal_the_bundled_plans(cli_run):
    # The bundled plan.csv was written by the examples' generator scripts from the same
    # trial files and seeds; the demo's fresh plans must be byte for byte the same.
    _, out = cli_run
    for name in bundled_trials():
        assert (out / name / "plan.csv").read_bytes() == \
            (EXAMPLES / name / "plan.csv").read_bytes()


def test_record_log_holds_the_invented_readings(cli_run):
    # Every coupon reading of the example went sheet -> ingest -> log unchanged.
    from trialkit.planning.plan import load_plan
    from trialkit.records.log import RecordLog

    _, out = cli_run
    for name in bundled_trials():
        folder = out / name
        plan = load_plan(folder)
        got = RecordLog.for_folder(folder).current_values(plan=plan).set_index("coupon")
        want = pd.read_csv(folder / "readings" / "coupons.csv").set_index("coupon")
        for col in ("mass_initial_g", "mass_final_g", "coverage_after_pct"):
            pd.testing.assert_series_equal(got.loc[want.index, col].astype(float),
                                           want[col].astype(float), check_names=False)


def test_baths_with_a_bath_section_get_a_mixing_sheet(cli_run):
    # a trial file with [bath] must get its mixing sheet; one without says why not
    proc, out = cli_run
    for name in bundled_trials():
        has_bath = re.search(r"^\[bath\]", (EXAMPLES / name / "trial.toml").read_text(
            encoding="utf-8"), re.M) is not None
        assert (out / name / "mixing_sheet.html").is_file() == has_bath, name
        line = re.search(rf"^\[{re.escape(name)}\] recipes: (.*)$", proc.stderr, re.M)
        assert line.group(1).startswith("done" if has_bath else "skipped: ")


def test_demo_analysis_json_agrees_with_the_invented_truth(cli_run):
    from trialkit.demo.truth_models import EXAMPLES as TRUTHS

    _, out = cli_run
    screen = json.loads((out / "five-factor-screen" / "analysis.json").read_text())
    real = TRUTHS["five-factor-screen"].truth.real_effects(
        list(screen["removal"]["p_values"]))["removal"]
    assert sorted(screen["removal"]["active"]) == sorted(real)
    sweep = json.loads((out / "chelator-sweep" / "analysis.json").read_text())
    lo, hi = sweep["time_to_clean"]["interval"]
    assert lo < TRUTHS["chelator-sweep"].truth.chelator_optimum < hi


def test_demo_figures_are_png_files(cli_run):
    _, out = cli_run
    for name in bundled_trials():
        figs = sorted((out / name / "figures").glob("*.png"))
        assert figs
        assert all(p.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n" for p in figs)


def test_second_run_gives_the_same_plans_and_responses(cli_run, second_run):
    _, out = cli_run
    assert [t.name for t in second_run.trials] == bundled_trials()
    for t in second_run.trials:
        assert t.stage("responses").done, t.stages
        assert len(t.stages) == STAGES.index("responses") + 1
        first = out / t.name
        assert (t.folder / "plan.csv").read_bytes() == (first / "plan.csv").read_bytes()
        a = pd.read_csv(first / "responses_by_bath.csv")
        b = pd.read_csv(t.folder / "responses_by_bath.csv")
        pd.testing.assert_frame_equal(a, b)


def test_demo_result_reprs_and_dict(second_run):
    d = second_run.to_dict()
    json.dumps(d)  # plain data
    assert [t["name"] for t in d["trials"]] == bundled_trials()
    assert all(t["numbers"]["fingerprint"] for t in d["trials"])
    text = repr(second_run)
    assert "invented" in text and all(n in text for n in bundled_trials())
    page = second_run._repr_html_()
    assert "<table" in page and "chelator-sweep" in page
    summary = second_run.summary
    assert list(summary.columns)[:3] == ["trial", "baths", "values_stored"]
    assert (summary["values_stored"] > 0).all()


def test_progress_callback_hears_every_stage_run(tmp_path):
    heard = []
    res = run_demo(tmp_path / "out", trials=["chelator-sweep"], until="sheets",
                   progress=lambda *a: heard.append(a))
    assert [h[1] for h in heard] == list(STAGES[:STAGES.index("sheets") + 1])
    assert all(h[0] == "chelator-sweep" for h in heard)
    assert isinstance(res, DemoResult) and res.trials[0].stage("sheets").done


def test_recipes_stage_says_why_it_is_skipped_without_a_bath_section(tmp_path):
    src = tmp_path / "no-bath"
    src.mkdir()
    text = (EXAMPLES / "chelator-sweep" / "trial.toml").read_text(encoding="utf-8")
    # keep the trial, drop any [bath] / [[ingredient]] sections
    kept, skip = [], False
    for line in text.splitlines():
        if re.match(r"^\[\[?(\w+)", line):
            skip = re.match(r"^\[\[?(\w+)", line).group(1) in ("bath", "ingredient")
        if not skip:
            kept.append(line)
    (src / "trial.toml").write_text("\n".join(kept) + "\n", encoding="utf-8")
    res = run_demo(tmp_path / "out", trials=[src], until="recipes")
    stage = res.trials[0].stage("recipes")
    assert stage.status.startswith("skipped: ") and "[bath]" in stage.status
    # a skipped recipe does not stop the loop: the stage was recorded, nothing faked
    assert "mixing_sheet" not in res.trials[0].paths


def test_existing_trial_folder_fails_the_copy_and_skips_the_rest(tmp_path):
    out = tmp_path / "out"
    (out / "chelator-sweep").mkdir(parents=True)
    (out / "chelator-sweep" / "old.txt").write_text("x", encoding="utf-8")
    res = run_demo(out, trials=["chelator-sweep"], until="plan")
    t = res.trials[0]
    assert t.stage("copy").status == "failed" and "already exists" in t.stage("copy").detail
    assert t.stage("plan").status.startswith("skipped: ")


def test_bad_arguments_raise_demo_error(tmp_path):
    with pytest.raises(DemoError, match="no example trial 'no-such-trial'"):
        run_demo(tmp_path / "a", trials=["no-such-trial"])
    with pytest.raises(DemoError, match="until must be one of"):
        run_demo(tmp_path / "b", until="everything")


def test_missing_bundled_trials_say_what_to_do(tmp_path, monkeypatch):
    fake = tmp_path / "site" / "trialkit" / "__init__.py"
    fake.parent.mkdir(parents=True)
    fake.write_text("", encoding="utf-8")
    monkeypatch.setattr(trialkit, "__file__", str(fake))
    with pytest.raises(DemoError, match=r"pip install -e \.") as info:
        run_demo(tmp_path / "out")
    assert str(tmp_path / "site" / "example_trials") in str(info.value)


#: A decimal number as printed (not part of a date, a time, a hex digest or a name).
_DECIMAL = re.compile(r"(?<![\w.:-])-?(\d+)\.(\d+)(?![\w.:])")
_REPR_OR_EXPONENT = re.compile(r"\b\d(?:\.\d+)?e[+-]\d+\b|np\.(?:float|int)\d+\(|\{'|"
                               r"\b[A-Z]\w+\(\w+=|\w+=np\.|\w='")


@pytest.mark.parametrize("command", ["analyze", "responses", "recipe", "evaluate", "plan"])
def test_command_line_text_reads_like_a_lab_report(cli_run, command):
    # issue 17 (numbers for people): the text outputs a user reads, run inside each demo
    # trial folder with no arguments: no Python reprs, no exponent notation, and no more
    # than four significant digits (trialkit.numbers' rule; recorded values, shown as
    # entered by 'history', are left out)
    _, out = cli_run
    env = {**os.environ, "PYTHONPATH": str(REPO), "MPLBACKEND": "Agg"}
    for name in bundled_trials():
        proc = subprocess.run([sys.executable, "-m", "trialkit", command], cwd=out / name,
                              env=env, capture_output=True, text=True, timeout=300)
        assert proc.returncode == 0, (name, proc.stderr[-2000:])
        text = proc.stdout
        assert len(text.splitlines()) > 3, (name, text)
        assert not _REPR_OR_EXPONENT.findall(text), (name, _REPR_OR_EXPONENT.findall(text))
        long = [m.group(0) for m in _DECIMAL.finditer(text)
                if len((m.group(1) + m.group(2)).lstrip("0")) > 4]
        assert not long, (name, long[:10])
        if command == "analyze":      # the answer first, with its cautions
            assert text.splitlines()[2] == "The answer" and "Recommended: " in text
            assert "Safety cautions" in text and "safety data sheet" in text


def test_the_text_checks_can_fail():
    assert _REPR_OR_EXPONENT.findall("Responses(metal='steel') p = 1.2e-08 np.float64(3")
    assert _REPR_OR_EXPONENT.findall("Responses(63 coupons, metal='carbon steel')")
    long = [m.group(0) for m in _DECIMAL.finditer("19.1913 g at 2026-11-05T09:20:00.5, 0.03959")
            if len((m.group(1) + m.group(2)).lstrip("0")) > 4]
    assert long == ["19.1913"]
