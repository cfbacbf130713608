"""``trialkit evaluate`` and ``trialkit compare`` as a user runs them (real subprocesses)."""

from __future__ import annotations

import json

import pytest
from scipy import stats

TRIAL = """
[trial]
title = "{title}"
seed = 4
notes = "invented example"
[[factor]]
name = "chelator"
unit = "% w/v"
low = 2
high = 10
[[factor]]
name = "ph"
low = 5.5
high = 7.5
[design]
kind = "full-factorial"
[layout]
replicates = {replicates}
controls = ["untreated"]
{extra}
"""


def _write(tmp_path, name, replicates=2, extra="", title=None):
    folder = tmp_path / name
    folder.mkdir()
    path = folder / "trial.toml"
    path.write_text(TRIAL.format(title=title or name, replicates=replicates, extra=extra),
                    encoding="utf-8")
    return path


def test_evaluate_json_power_per_term(tmp_path, cli):
    path = _write(tmp_path, "two-reps")
    result = cli("evaluate", str(path), "--sd", "0.5", "--effect", "chelator=1.0",
                 "--effect", "ph=0.5", "--json")
    assert result.returncode == 0, result.stderr
    data = json.loads(result.stdout)
    for key in ("power", "d_efficiency", "i_efficiency", "max_vif", "baths"):
        assert key in data
    assert data["baths"] == 8                  # the untreated controls are left out
    power = {p["term"]: p for p in data["power"]}
    # 2^2 x 2, main effects: lambda = n (d/2)^2 / sd^2, F(1, 5) (factorial algebra)
    fcrit = stats.f.isf(0.05, 1, 5)
    assert power["chelator"]["power"] == pytest.approx(stats.ncf.sf(fcrit, 1, 5, 8.0), 1e-9)
    assert power["ph"]["power"] == pytest.approx(stats.ncf.sf(fcrit, 1, 5, 2.0), 1e-9)
    assert data["d_efficiency"] == pytest.approx(100.0, abs=1e-9)


def test_evaluate_text_uses_the_evaluation_section(tmp_path, cli):
    path = _write(tmp_path, "sec", extra='[evaluation]\nsd = 0.5\neffects = 1.0\n'
                  'model = "interactions"\n')
    result = cli("evaluate", str(path))
    assert result.returncode == 0, result.stderr
    assert "chelator:ph" in result.stdout and "sd 0.5" in result.stdout
    assert "replicates" in result.stdout


def test_evaluate_bad_effect_and_bad_model_exit_2(tmp_path, cli):
    path = _write(tmp_path, "bad")
    result = cli("evaluate", str(path), "--effect", "chelator=lots")
    assert result.returncode == 2 and "must be a number" in result.stderr
    result = cli("evaluate", str(path), "--model", "chelator + acid")
    assert result.returncode == 2 and "acid" in result.stderr
    assert "Traceback" not in result.stderr


def test_compare_two_plans(tmp_path, cli):
    a = _write(tmp_path, "a", replicates=2, title="two replicates")
    b = _write(tmp_path, "b", replicates=3, title="three replicates")
    result = cli("compare", str(a), str(b), "--sd", "1", "--effect", "2", "--json")
    assert result.returncode == 0, result.stderr
    rows = json.loads(result.stdout)["plans"]
    assert [r["plan"] for r in rows] == ["two replicates", "three replicates"]
    assert [r["baths"] for r in rows] == [8, 12]
    assert rows[1]["power_chelator"] > rows[0]["power_chelator"]
    text = cli("compare", str(a), str(b))
    assert text.returncode == 0 and "d_efficiency" in text.stdout
