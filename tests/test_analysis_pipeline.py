"""The whole analysis of one response (trialkit.analysis.pipeline, .sources), including the
trial-folder route: real trial file, real plan, real response computation; only the record
log is replaced by invented readings (the record-log module lands separately)."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

import trialkit.responses
from trialkit.analysis.pipeline import analyze_table, default_model
from trialkit.cli import main
from trialkit.factors import Factor
from trialkit.plan import make_plan
from trialkit.trialfile import load_trial

STARTER = Path(__file__).resolve().parents[1] / "trialkit" / "data" / "starter_trial.toml"


def _readings(plan, seed=5):
    """Invented coupon readings (self-consistency only): removal rises with chelator."""
    rng = np.random.default_rng(seed)
    t = plan.table.copy()
    rows = []
    for r in t.itertuples():
        row = r._asdict()
        row.pop("Index")
        if pd.isna(r.chelator):  # control bath
            removal, loss = 5.0 + rng.normal(0, 1), 0.02
        else:
            removal = 40 + 4 * r.chelator + 6 * (r.ph - 6.5) + rng.normal(0, 2)
            loss = 0.2 + 0.02 * r.chelator
        row.update({"area_cm2": 28.0, "mass_initial_g": 20.0,
                    "immersion_start": "2026-12-01T09:00", "immersion_end": "2026-12-02T09:00"})
        if r.coupon_kind == "rusted":
            row.update({"mass_final_g": 20.0 - loss, "coverage_before_pct": 50.0,
                        "coverage_after_pct": 50.0 * (1 - min(removal, 99) / 100)})
        else:
            c = 0.0 if pd.isna(r.chelator) else r.chelator
            row.update({"mass_final_g": 20.0 - 0.002 - 0.0002 * c})
        rows.append(row)
    return pd.DataFrame(rows)


@pytest.fixture
def trial_folder(tmp_path, monkeypatch):
    folder = tmp_path / "trial"
    folder.mkdir()
    text = STARTER.read_text(encoding="utf-8") + (
        '\n[analysis]\nmodel = "chelator + ph + surfactant"\nanova_type = 3\n')
    (folder / "trial.toml").write_text(text, encoding="utf-8")
    trial = load_trial(folder)
    plan = make_plan(trial)
    plan.write(folder)
    readings = _readings(plan)

    def fake_load_responses(path, **kwargs):
        return trialkit.responses.compute_responses(readings, coupon_spec=trial.coupons)

    monkeypatch.setattr(trialkit.responses, "load_responses", fake_load_responses)
    return folder


def test_trial_folder_route_json(trial_folder, capsys):
    code = main(["analyze", str(trial_folder), "--json", "--bootstrap", "0"])
    cap = capsys.readouterr()
    assert code == 0, cap.err
    d = json.loads(cap.out)
    assert d["response"] == "removal_pct_mean"
    assert d["anova_type"] == 3  # from the [analysis] section
    assert [r["term"] for r in d["anova"]] == ["block", "chelator", "ph", "surfactant"]
    nat = {r["term"]: r for r in d["coefficients"]}
    # invented truth: +4 % removal per % w/v chelator, +6 per pH unit
    assert nat["chelator"]["ci_low"] < 4.0 < nat["chelator"]["ci_high"]
    assert nat["ph"]["ci_low"] < 6.0 < nat["ph"]["ci_high"]
    assert d["n_dropped"] == 2  # the untreated controls of the two blocks


def test_trial_folder_second_response_by_name(trial_folder, capsys):
    code = main(["analyze", str(trial_folder), "--response", "attack", "--model", "main",
                 "--bootstrap", "0"])
    cap = capsys.readouterr()
    assert code == 0, cap.err
    assert "corrosion_rate_mm_per_y_mean" in cap.out
    code = main(["analyze", str(trial_folder), "--response", "atack"])
    assert code == 2 and "did you mean 'attack'" in capsys.readouterr().err


def test_default_model_and_saturated_two_level_gets_lenth():
    """BHH pilot plant 2^3 (tests/reference/stats/lenth): saturated -> effects + Lenth."""
    ref = json.loads((Path(__file__).parent / "reference" / "stats" / "lenth" /
                      "lenth_pse_examples.json").read_text())["examples"][0]
    import itertools

    runs = [dict(zip("KCT", r, strict=True)) for r in itertools.product([-1, 1], repeat=3)]
    df = pd.DataFrame(runs)[["T", "C", "K"]]
    df["y"] = ref["y_standard_order"]
    fs = [Factor.continuous(n, -1, 1) for n in "TCK"]
    assert default_model(df, "y", fs) == "interactions"  # 7 coefficients, 8 runs: 1 df left
    res = analyze_table(df, "y", fs, model="T + C + K + T:C + T:K + C:K + T:C:K")
    assert res.fit.anova(2).test == "lenth"
    assert res.effects.lenth.pse == pytest.approx(2.25)
    d = res.to_dict()
    assert d["anova_test"] == "lenth" and all(r["F"] > 0 for r in d["anova"])
    assert "effects" in d and res.diagnostics is None
    assert "Lenth: PSE 2.25" in res.text()
