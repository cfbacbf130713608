"""``trialkit evaluate`` and ``trialkit compare`` as a user runs them (real subprocesses)."""

from __future__ import annotations

import json

import pytest
from scipy import stats
from trial_texts import trial_text

from trialkit.cli import main


def _write(tmp_path, name, replicates=2, extra="", title=None):
    folder = tmp_path / name
    folder.mkdir()
    path = folder / "trial.toml"
    path.write_text(trial_text("chelator", "ph", title=title or name, seed=4,
                               notes="invented example",
                               layout=f"replicates = {replicates}\ncontrols = [\"untreated\"]",
                               extra=extra), encoding="utf-8")
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


# in-process through trialkit.cli.main (the same entry point, without a new interpreter)
def test_evaluate_text_uses_the_evaluation_section(tmp_path, capsys):
    path = _write(tmp_path, "sec", extra='[evaluation]\nsd = 0.5\neffects = 1.0\n'
                  'model = "interactions"\n')
    assert main(["evaluate", str(path)]) == 0
    out = capsys.readouterr().out
    assert "chelator:ph" in out and "sd 0.5" in out
    assert "replicates" in out


@pytest.mark.parametrize("extra, message", [
    (["--effect", "chelator=lots"], "must be a number"),
    (["--effect", "2", "--effect", "ph=1"], "not both"),
    (["--model", "chelator + acid"], "acid"),
    (["--sd", "-1"], "sd must be a positive number"),
])
def test_evaluate_bad_options_exit_2(tmp_path, capsys, extra, message):
    path = _write(tmp_path, "bad")
    assert main(["evaluate", str(path), *extra]) == 2
    err = capsys.readouterr().err
    assert message in err and "Traceback" not in err


def test_compare_two_plans(tmp_path, cli):
    a = _write(tmp_path, "a", replicates=2, title="two replicates")
    b = _write(tmp_path, "b", replicates=3, title="three replicates")
    result = cli("compare", str(a), str(b), "--sd", "1", "--effect", "2", "--json")
    assert result.returncode == 0, result.stderr
    rows = json.loads(result.stdout)["plans"]
    assert [r["plan"] for r in rows] == ["two replicates", "three replicates"]
    assert [r["baths"] for r in rows] == [8, 12]
    assert rows[1]["power_chelator"] > rows[0]["power_chelator"]



def test_compare_text(tmp_path, capsys):
    a = _write(tmp_path, "a", replicates=2)
    b = _write(tmp_path, "b", replicates=3)
    assert main(["compare", str(a), str(b)]) == 0
    out = capsys.readouterr().out
    assert "d_efficiency" in out and "power_chelator" in out


def test_evaluate_without_an_effect_size_says_so_and_claims_no_replicate_count(tmp_path,
                                                                              capsys):
    # issue 12: no default signal-to-noise ratio; the output names what is missing
    path = _write(tmp_path, "plain")
    assert main(["evaluate", str(path)]) == 0
    out = capsys.readouterr().out
    assert "effects: none stated, power not computed" in out
    assert "sd not stated" in out and "detectable_effect" in out
    assert "copies of the plan" not in out


def test_compare_without_effects_tabulates_detectable_effects(tmp_path, cli):
    a = _write(tmp_path, "a", replicates=2)
    b = _write(tmp_path, "b", replicates=4)
    result = cli("compare", str(a), str(b), "--sd", "1", "--json")
    assert result.returncode == 0, result.stderr
    rows = json.loads(result.stdout)["plans"]
    assert [r["effects"] for r in rows] == ["none", "none"]
    # twice the replicates: the detectable effect shrinks (more residual df, n doubled)
    assert rows[1]["detectable_chelator"] < rows[0]["detectable_chelator"]
