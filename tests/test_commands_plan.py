"""``trialkit new`` and ``trialkit plan`` as a user runs them (real subprocesses)."""

from __future__ import annotations

import json

import pandas as pd


def test_new_then_plan_writes_plan_beside_trial(tmp_path, cli):
    folder = tmp_path / "my-trial"
    result = cli("new", str(folder))
    assert result.returncode == 0, result.stderr
    trial = folder / "trial.toml"
    assert trial.exists() and "seed" in trial.read_text()
    again = cli("new", str(folder))
    assert again.returncode == 2 and "--force" in again.stderr  # never overwrites silently

    result = cli("plan", str(trial))
    assert result.returncode == 0, result.stderr
    plan = pd.read_csv(folder / "plan.csv")
    assert plan.columns[:6].tolist() == ["run", "bath", "coupon", "coupon_kind", "block",
                                         "point"]
    assert "fingerprint" in result.stdout


def test_plan_json_and_out_folder(tmp_path, cli):
    folder = tmp_path / "t"
    cli("new", str(folder))
    out = tmp_path / "elsewhere"
    result = cli("plan", str(folder / "trial.toml"), "--out", str(out), "--json")
    assert result.returncode == 0, result.stderr
    data = json.loads(result.stdout)
    for key in ("baths", "coupons", "blocks", "seed", "fingerprint", "design", "factors"):
        assert key in data
    assert data["seed"] == 20261201
    table = pd.read_csv(out / "plan.csv")
    assert len(table) == data["coupons"]
    assert table["bath"].nunique() == data["baths"]
    assert not (folder / "plan.csv").exists()


def test_help_lists_every_command(cli):
    result = cli("--help")
    assert result.returncode == 0
    for name in ("new", "plan", "recipe", "sheet", "ingest", "analyze", "report", "demo"):
        assert name in result.stdout


def test_a_coupon_metal_without_a_density_is_refused_before_anything_is_written(tmp_path,
                                                                                cli):
    from pathlib import Path

    src = Path(__file__).resolve().parents[1] / "example_trials" / "tank-split-plot"
    text = (src / "trial.toml").read_text(encoding="utf-8")
    assert 'metal = "carbon steel"' in text and "corrosion_rate_mm_per_y" in text
    folder = tmp_path / "trial"
    folder.mkdir()
    (folder / "trial.toml").write_text(text.replace('metal = "carbon steel"',
                                                    'metal = "carbon steal"'), "utf-8")
    result = cli("plan", str(folder))
    assert result.returncode != 0
    assert "coupons.metal" in result.stderr and "'carbon steel'" in result.stderr
    assert "needed by attack" in result.stderr and "nothing was written" in result.stderr
    assert not (folder / "plan.csv").exists()
    # without a response that needs the density, the metal's name is the user's to choose
    no_rate = text.replace('metal = "carbon steel"', 'metal = "carbon steal"')
    start = no_rate.index('[[response]]\nname = "attack"')
    end = no_rate.index("[bath]")
    (folder / "trial.toml").write_text(no_rate[:start] + no_rate[end:], "utf-8")
    result = cli("plan", str(folder))
    assert result.returncode == 0, result.stderr
