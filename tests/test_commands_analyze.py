"""The ``trialkit analyze`` command, run as a real subprocess on files in tmp_path."""

from __future__ import annotations

import json
import os
import subprocess
import sys
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from trialkit.cli import main

ROOT = Path(__file__).resolve().parents[1]


def _run(*args, cwd=None):
    """The real command as a subprocess."""
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    return subprocess.run([sys.executable, "-m", "trialkit", "analyze", *map(str, args)],
                          capture_output=True, text=True, env=env, cwd=cwd, timeout=300)


@dataclass
class _Out:
    returncode: int
    stdout: str
    stderr: str


def _main(capsys, *args):
    """The same entry point in-process (faster; subprocess runs cover the real process)."""
    code = main(["analyze", *map(str, args)])
    cap = capsys.readouterr()
    return _Out(code, cap.out, cap.err)


def _table(tmp_path, name="baths.csv"):
    """Invented 3^2 trial with replicates (self-consistency only)."""
    rng = np.random.default_rng(42)
    rows = []
    for rep in (1, 2):
        for c in (2.0, 6.0, 10.0):
            for ph in (5.5, 6.5, 7.5):
                y = 80 - (c - 5) ** 2 - 12 * (ph - 6.5) ** 2 + rng.normal(0, 1.0)
                rows.append({"bath": f"B{len(rows) + 1:02d}", "block": rep, "chelator": c,
                             "ph": ph, "surfactant": "none" if len(rows) % 2 else "added",
                             "removal": round(y, 3)})
    df = pd.DataFrame(rows)
    path = tmp_path / name
    df.to_csv(path, index=False)
    return path, df


def test_json_contract_on_plain_table(tmp_path):
    path, df = _table(tmp_path)
    out = _run(path, "--response", "removal", "--factor", "chelator", "--factor", "ph",
               "--model", "quadratic", "--type", "3", "--bootstrap", "200", "--json")
    assert out.returncode == 0, out.stderr
    d = json.loads(out.stdout)
    assert [r["term"] for r in d["anova"]] == ["block", "chelator", "ph", "chelator:ph",
                                                "chelator^2", "ph^2"]
    for row in d["anova"]:
        assert set(row) == {"term", "df", "sum_sq", "mean_sq", "F", "p", "error_stratum",
                            "error_df"}
        # every term of a completely randomised trial is tested against the bath residual
        assert (row["error_stratum"], row["error_df"]) == ("residual (baths)", 18 - 7)
    assert set(d["residual"]) == {"df", "sum_sq", "mean_sq"}
    assert d["residual"]["df"] == 18 - 7
    for key in ("r_squared", "adj_r_squared", "pred_r_squared"):
        assert 0 < d[key] <= 1
    assert set(d["coefficients"][0]) == {"term", "estimate", "std_error", "ci_low", "ci_high"}
    nat = {r["term"]: r["estimate"] for r in d["coefficients"]}
    # invented truth: chelator^2 coefficient -1, ph^2 coefficient -12 in natural units
    assert nat["chelator^2"] == pytest.approx(-1.0, abs=0.3)
    assert nat["ph^2"] == pytest.approx(-12.0, abs=4.0)
    assert {r["term"] for r in d["coded_coefficients"]} >= {"intercept", "chelator", "ph^2"}
    opt = d["optimum"]
    assert set(opt) == {"settings", "predicted", "pi_low", "pi_high"}
    assert opt["pi_low"] < opt["predicted"] < opt["pi_high"]
    assert opt["settings"]["chelator"] == pytest.approx(5.0, abs=1.0)
    # full precision: numbers are not rounded for printing
    assert len(repr(d["anova"][1]["sum_sq"])) > 10


def test_console_summary_and_categorical_factor(tmp_path, capsys):
    path, _ = _table(tmp_path)
    out = _main(capsys, path, "--response", "removal", "--factor", "chelator", "--factor",
               "surfactant:categorical", "--model", "chelator + surfactant")
    assert out.returncode == 0, out.stderr
    assert "ANOVA (type 2)" in out.stdout and "surfactant" in out.stdout
    assert "coefficients (factors' own units)" in out.stdout


def test_sweep_on_plain_table(tmp_path, capsys):
    x = np.repeat([2.0, 3.5, 5.0, 7.5, 10.0, 15.0, 20.0], 2)
    y = 85 - 0.25 * (x - 5) ** 2 + np.tile([0.4, -0.4], 7)
    path = tmp_path / "sweep.csv"
    pd.DataFrame({"chelator": x, "removal": y}).to_csv(path, index=False)
    out = _main(capsys, path, "--response", "removal", "--factor", "chelator", "--sweep",
                "chelator",
               "--bootstrap", "300", "--json")
    assert out.returncode == 0, out.stderr
    d = json.loads(out.stdout)
    assert d["optimum"]["settings"]["chelator"] == pytest.approx(5.0, abs=0.1)
    assert d["sweep"]["falls_off"] is True
    assert d["sweep"]["fieller_low"] < 5.0 < d["sweep"]["fieller_high"]


def _bad(tmp_path, change):
    path, df = _table(tmp_path)
    args = ["--response", "removal", "--factor", "chelator", "--factor", "ph"]
    if change == "text":
        df["removal"] = df.removal.astype(object)
        df.loc[4, "removal"] = "lost"
    elif change == "one_level":
        df["ph"] = 6.5
    elif change == "unknown":
        args += ["--model", "chelator + temperature"]
    elif change == "too_many":
        df = df.iloc[:5]
        args += ["--model", "quadratic"]
    elif change == "inject":
        args += ["--model", "__import__('os').system('touch pwned')"]
    df.to_csv(path, index=False)
    return path, args


BAD = [("text", "must hold numbers"), ("one_level", "only one level"),
       ("unknown", "unknown factor 'temperature'"),
       ("too_many", "coefficients but only 5 baths"), ("inject", "unexpected")]


@pytest.mark.parametrize("change, fragment", [BAD[0], BAD[4]])
def test_bad_input_subprocess_clear_error_without_traceback(tmp_path, change, fragment):
    path, args = _bad(tmp_path, change)
    out = _run(path, *args, cwd=tmp_path)
    assert out.returncode == 2
    assert fragment in out.stderr
    assert "Traceback" not in out.stderr and out.stdout == ""
    assert not (tmp_path / "pwned").exists()


@pytest.mark.parametrize("change, fragment", BAD)
def test_bad_input_clear_error(tmp_path, capsys, monkeypatch, change, fragment):
    monkeypatch.chdir(tmp_path)
    path, args = _bad(tmp_path, change)
    out = _main(capsys, path, *args)
    assert out.returncode == 2 and fragment in out.stderr and out.stdout == ""
    assert not (tmp_path / "pwned").exists()


def test_missing_file_and_wrong_suffix(tmp_path, capsys):
    out = _main(capsys, tmp_path / "nope.csv", "--response", "y", "--factor", "a")
    assert out.returncode == 2 and "no such file" in out.stderr
    bad = tmp_path / "table.dat"
    bad.write_text("a,y\n1,2\n")
    out = _main(capsys, bad, "--response", "y", "--factor", "a")
    assert out.returncode == 2 and ".csv or .xlsx" in out.stderr


def test_xlsx_table_gives_same_anova_as_csv(tmp_path, capsys):
    path, df = _table(tmp_path)
    xlsx = tmp_path / "baths.xlsx"
    df.to_excel(xlsx, index=False)
    args = ["--response", "removal", "--factor", "chelator", "--factor", "ph", "--model",
            "main", "--json"]
    a = json.loads(_main(capsys, path, *args).stdout)
    b = json.loads(_main(capsys, xlsx, *args).stdout)
    assert [r["sum_sq"] for r in a["anova"]] == pytest.approx([r["sum_sq"] for r in b["anova"]],
                                                              rel=1e-12)


def test_whole_trial_is_the_object_the_report_renders(tmp_path, capsys):
    # issue 13: one analysis of the whole trial, read by the CLI, the demo and the report
    from trialkit.analysis.trial_analysis import analyze
    from trialkit.demo.findings import demo_findings
    from trialkit.demo.run import run_demo
    from trialkit.report.build import build_report

    run_demo(tmp_path, trials=["chelator-sweep"], until="responses")  # a real record log
    folder = tmp_path / "chelator-sweep"
    out = _main(capsys, folder, "--all", "--json")
    assert out.returncode == 0, out.stderr
    data = json.loads(out.stdout)
    same = analyze(folder)
    assert data["fingerprint"] == same.plan.fingerprint
    assert set(data["responses"]) == {r.name for r in same.trial.responses}
    best = data["responses"]["time_to_clean"]["sweep"]["best"]
    assert best == pytest.approx(demo_findings(same)["time_to_clean"]["best"], rel=1e-12)
    report = build_report(same)
    assert report.data["recommendation"]["settings"] == data["recommendation"]["settings"]
    text = _main(capsys, folder, "--all").stdout
    # the text is the report's answer: the same recommended settings, in words
    from trialkit.report.answer import settings_phrase

    words = settings_phrase(data["recommendation"]["settings"], same.trial)
    assert text.startswith(same.trial.title) and f"Recommended: {words}." in text
    bad = _main(capsys, tmp_path / "nope.csv", "--all")
    assert bad.returncode == 2 and "needs a trial folder" in bad.stderr


# -- analysis input: clear refusals, never a traceback (issue: hardening) ---------------
def _xy_table(tmp_path, y, name="t.csv"):
    import numpy as np

    x = np.repeat([1.0, 3, 5, 7, 9], 3)
    path = tmp_path / name
    pd.DataFrame({"x": x, "y": y if not callable(y) else y(x)}).to_csv(path, index=False)
    return path


def _run_in_process(*args):
    import contextlib
    import io

    from trialkit.cli import main

    err = io.StringIO()
    with contextlib.redirect_stdout(io.StringIO()), contextlib.redirect_stderr(err):
        code = main(["analyze", *map(str, args)])
    return code, err.getvalue()


@pytest.mark.parametrize("y, extra, fragment", [
    (lambda x: 5.0 + 0 * x, [], "is constant (every value is 5)"),
    (lambda x: (10 + 2 * x + (x % 3)) * 1e300, [], "give it in another unit"),
    (lambda x: (10 + 2 * x + (x % 3)) * 1e-300, ["--sweep", "x"], "give it in another unit"),
    (lambda x: 10 + 2 * x + (x % 3), ["--bootstrap", "-5", "--sweep", "x"],
     "--bootstrap must be a whole number from 0"),
    (lambda x: 10 + 2 * x + (x % 3), ["--model", ""], "--model is empty"),
    (lambda x: 10 + 2 * x + (x % 3), ["--alpha", "5"], "--alpha must lie between 0 and 1"),
])
def test_unusable_analysis_input_is_refused(tmp_path, y, extra, fragment):
    code, err = _run_in_process(_xy_table(tmp_path, y), "--factor", "x", "--response", "y", *extra)
    assert code == 2 and fragment in err and "Traceback" not in err


@pytest.mark.parametrize("scale", [1e-90, 1e90])
def test_analysis_is_scale_invariant_within_the_range(tmp_path, scale):
    """Multiplying the response by a constant leaves F, p and R² as they were."""
    import contextlib
    import io

    from trialkit.cli import main

    got = []
    for k, name in ((1.0, "a.csv"), (scale, "b.csv")):
        path = _xy_table(tmp_path, lambda x, k=k: (10 + 2 * x - 0.2 * x**2 + (x % 3)) * k, name)
        out = io.StringIO()
        with contextlib.redirect_stdout(out):
            assert main(["analyze", str(path), "--factor", "x", "--response", "y",
                         "--json"]) == 0
        data = json.loads(out.getvalue())
        got.append([(r["term"], r["F"], r["p"]) for r in data["anova"]]
                   + [data["r_squared"]])
    assert got[1][-1] == pytest.approx(got[0][-1], rel=1e-9)
    for (t0, f0, p0), (t1, f1, p1) in zip(got[0][:-1], got[1][:-1], strict=True):
        assert t0 == t1 and f1 == pytest.approx(f0, rel=1e-6) and p1 == pytest.approx(p0,
                                                                                     rel=1e-6)
