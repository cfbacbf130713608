"""The whole analysis of one response (trialkit.analysis.pipeline, .sources), including the
trial-folder route: real trial file, plan, record log (invented readings written through
trialkit.records.log) and response computation."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from trialkit.analysis.pipeline import analyze_table, default_model
from trialkit.cli import main
from trialkit.planning.plan import make_plan
from trialkit.records.log import RecordLog
from trialkit.trial.factors import Factor
from trialkit.trial.file import load_trial

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
def trial_folder(tmp_path):
    folder = tmp_path / "trial"
    folder.mkdir()
    text = STARTER.read_text(encoding="utf-8").replace(
        'measure = "removal_pct"',
        'measure = "removal_pct"\nunacceptable = 40\nsatisfactory = 95').replace(
        'measure = "corrosion_rate_mm_per_y"',
        'measure = "corrosion_rate_mm_per_y"\nsatisfactory = 0.0\nunacceptable = 1.0') + (
        '\n[analysis]\nmodel = "chelator + ph + surfactant"\nanova_type = 3\n')
    (folder / "trial.toml").write_text(text, encoding="utf-8")
    trial = load_trial(folder)
    plan = make_plan(trial)
    plan.write(folder)
    readings = _readings(plan)
    fields = ["area_cm2", "mass_initial_g", "mass_final_g", "coverage_before_pct",
              "coverage_after_pct", "immersion_start", "immersion_end"]
    values = [(r["coupon"], 0, f, r[f]) for r in readings.to_dict("records") for f in fields
              if not pd.isna(r.get(f))]
    RecordLog.for_folder(folder).add_readings(values, source="invented readings",
                                              sha256="0" * 64, fingerprint=plan.fingerprint)
    return folder


def test_folder_route_as_subprocess(trial_folder):
    """The real command on a real trial folder (plan.csv, record log) in a subprocess."""
    import os
    import subprocess
    import sys

    env = dict(os.environ, PYTHONPATH=str(STARTER.parents[2]))
    out = subprocess.run([sys.executable, "-m", "trialkit", "analyze", str(trial_folder),
                          "--response", "removal", "--json", "--bootstrap", "0"],
                         capture_output=True, text=True, env=env, timeout=300)
    assert out.returncode == 0, out.stderr
    d = json.loads(out.stdout)
    assert d["n"] == 20 and d["residual"]["df"] == 20 - 5


def test_trial_folder_route_json(trial_folder, capsys):
    code = main(["analyze", str(trial_folder), "--response", "removal", "--json",
                 "--bootstrap", "0"])
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


def test_result_objects_have_summary_html_and_json():
    """Every result object: summary DataFrame, HTML repr, readable repr, JSON-ready dict."""
    import itertools

    from trialkit.analysis.confirm import confirm
    from trialkit.analysis.desirability import Aim, optimize_desirability
    from trialkit.analysis.effects import two_level_effects
    from trialkit.analysis.model import fit_model
    from trialkit.analysis.reduction import reduce_model
    from trialkit.analysis.sweep import fit_sweep

    rng = np.random.default_rng(17)
    pts = list(itertools.product([2.0, 6.0, 10.0], [5.5, 6.5, 7.5])) * 2
    df = pd.DataFrame(pts, columns=["chelator", "ph"])
    df["removal"] = 80 - (df.chelator - 5) ** 2 - 12 * (df.ph - 6.5) ** 2 + rng.normal(0, 1, 18)
    df["attack"] = 0.1 + 0.02 * df.chelator + rng.normal(0, 0.005, 18)
    fs = [Factor.continuous("chelator", 2, 10), Factor.continuous("ph", 5.5, 7.5)]
    res = analyze_table(df, "removal", fs, model="quadratic", n_boot=100)
    fits = {"removal": res.fit, "attack": fit_model(df, "attack", fs, "main", block=None)}
    corners = df[(df.chelator != 6.0) & (df.ph != 6.5)].drop_duplicates(["chelator", "ph"])
    objects = [res, res.fit, res.fit.anova(1), res.surface, res.diagnostics,
               reduce_model(res.fit),
               fit_sweep(df[df.ph == 6.5], "removal", fs[0], n_boot=50),
               optimize_desirability(fits, [Aim("removal", "higher", 60, 80),
                                            Aim("attack", "lower", 0.4, 0.1)],
                                     n_tries=2),
               confirm(res.fit, res.optimum["settings"], [79.0, 80.5]),
               two_level_effects(corners, "removal", fs)]
    for obj in objects:
        assert isinstance(obj.summary, pd.DataFrame) and len(obj.summary)
        assert obj._repr_html_().lstrip().startswith("<")
        assert type(obj).__name__[:4] in repr(obj) or "Response" in repr(obj)
        json.dumps(obj.to_dict(), allow_nan=False, default=float)


def test_trial_folder_compromise(trial_folder, capsys):
    """Best compromise of removal (maximize) and attack (minimize) from the trial's limits."""
    code = main(["analyze", str(trial_folder), "--compromise", "--json"])
    cap = capsys.readouterr()
    assert code == 0, cap.err
    d = json.loads(cap.out)
    assert {r["response"] for r in d["responses"]} == {"removal_pct_mean",
                                                       "corrosion_rate_mm_per_y_mean"}
    assert 0 < d["overall_desirability"] <= 1
    for r in d["responses"]:
        assert r["pi_low"] < r["predicted"] < r["pi_high"]
    # overall = geometric mean of the individual desirabilities weighted by priority
    # (Derringer & Suich 1980); the starter file gives removal priority 2, attack 1
    trial = load_trial(trial_folder)
    weight = {f"{r.measure}_mean": r.priority for r in trial.responses}
    assert weight == {"removal_pct_mean": 2.0, "corrosion_rate_mm_per_y_mean": 1.0}
    num = sum(weight[r["response"]] * np.log(r["desirability"]) for r in d["responses"])
    expected = np.exp(num / sum(weight[r["response"]] for r in d["responses"]))
    assert d["overall_desirability"] == pytest.approx(expected, rel=1e-9)
    assert d["settings"]["surfactant"] in ("none", "added")


def test_package_exports_resolve():
    import trialkit.analysis as ta

    for name in ta.__all__:
        assert getattr(ta, name).__name__ == name
