"""The recommendation answers the trial's question: stated limits are kept (and the
passed-over recipe named), other responses flagged, levels and controls compared.

Invented salts trial (not measurements): four chelating salts, three baths each, plus
untreated and reference baths; one salt removes the most rust but attacks the steel
about twenty times more than the others."""

from __future__ import annotations

import json
from types import SimpleNamespace

import numpy as np
import pandas as pd
import pytest

from trialkit.analysis.config import AnalysisConfig
from trialkit.analysis.model import fit_model
from trialkit.analysis.recommend import _equivalence_text, clearly_better_setting, limit_shortfall
from trialkit.analysis.trial_analysis import analyze
from trialkit.cli import main
from trialkit.planning.plan import make_plan
from trialkit.trial.factors import Factor
from trialkit.trial.file import load_trial
from trialkit.trial.spec import ResponseSpec

SALTS = """
[trial]
title = "Which chelating salt, invented example"
question = "Which salt removes rust fastest without attacking the steel?"
seed = 12
[[factor]]
name = "salt"
levels = ["tetrasodium EDTA", "disodium EDTA", "sodium citrate", "strong salt"]
[design]
kind = "full-factorial"
[layout]
replicates = 3
controls = ["untreated", "reference"]
[[response]]
name = "removal"
unit = "%"
aim = "higher"
measure = "removal_pct"
[[response]]
name = "attack"
unit = "mm/yr"
aim = "lower"
{attack_limits}
measure = "corrosion_rate_mm_per_y"
"""
MEANS = {"tetrasodium EDTA": (78.0, 0.05), "disodium EDTA": (70.0, 0.06),
         "sodium citrate": (60.0, 0.04), "strong salt": (92.0, 1.1),
         "control": (3.0, 0.08), "reference": (97.0, 2.5)}


def _trial(tmp_path, limits: str):
    folder = tmp_path / "salts"
    folder.mkdir()
    (folder / "trial.toml").write_text(SALTS.format(attack_limits=limits), encoding="utf-8")
    plan = make_plan(load_trial(folder))
    rng = np.random.default_rng(5)
    baths = plan.baths.copy()
    keys = [s if p not in ("control", "reference") else p
            for s, p in zip(baths["salt"], baths["point"], strict=True)]
    baths["removal"] = [MEANS[k][0] + rng.normal(0, 2.5) for k in keys]
    baths["attack"] = [MEANS[k][1] * np.exp(rng.normal(0, 0.08)) for k in keys]
    return folder, baths


def test_a_stated_attack_limit_is_kept_and_the_fastest_salt_passed_over(tmp_path):
    folder, baths = _trial(tmp_path, "satisfactory = 0.05\nunacceptable = 0.3")
    rec = analyze(folder, baths=baths).to_dict()["recommendation"]
    assert rec["settings"] == {"salt": "tetrasodium EDTA"}
    assert rec["limits_met"] is True
    why = " ".join(rec["reasons"])
    assert "Passed over salt = strong salt" in why and "attack is predicted" in why
    # the best bath that keeps the limit is the comparison, so removal is not flagged
    assert not any(r.startswith("removal is predicted") for r in rec["reasons"])
    assert "beyond its unacceptable value 0.3 mm/yr" in why
    attack = next(p for p in rec["predicted"] if p["response"] == "attack")
    assert attack["value"] <= 0.3


def test_without_limits_the_attack_is_flagged_not_hidden(tmp_path):
    folder, baths = _trial(tmp_path, "")
    rec = analyze(folder, baths=baths).to_dict()["recommendation"]
    assert rec["settings"] == {"salt": "strong salt"}   # fastest, and nothing forbids it
    flagged = [r for r in rec["reasons"] if r.startswith("Attack is predicted")]
    assert flagged and "clearly worse than at another of the trial's settings" in flagged[0]
    assert "at salt = " in flagged[0]
    assert {p["response"] for p in rec["predicted"]} == {"removal", "attack"}


def test_output_contract_of_analyze_on_a_trial_folder(tmp_path, capsys):
    folder, baths = _trial(tmp_path, "satisfactory = 0.05\nunacceptable = 0.3")
    table = tmp_path / "baths.csv"
    baths.to_csv(table, index=False)
    data = analyze(folder, baths=baths).to_dict()
    assert set(data) >= {"recommendation", "comparisons", "versus_controls", "responses"}
    rec = data["recommendation"]
    assert set(rec) >= {"settings", "predicted", "limits_met", "reasons"}
    assert all(set(p) >= {"response", "value", "low", "high"} for p in rec["predicted"])
    pairs = [c for c in data["comparisons"] if c["response"] == "removal"]
    assert len(pairs) == 6                       # 4 levels: every pair, Tukey
    assert set(pairs[0]) >= {"factor", "response", "level_a", "level_b", "difference",
                             "low", "high", "p_adjusted", "method"}
    strong = next(c for c in pairs if {c["level_a"], c["level_b"]} ==
                  {"strong salt", "sodium citrate"})
    assert strong["p_adjusted"] < 0.01
    vs = [v for v in data["versus_controls"] if v["response"] == "removal"]
    assert {v["control"] for v in vs} == {"untreated", "reference"}
    assert len(vs) == 8                          # 4 salts x 2 control kinds
    assert all(v["low"] > 0 for v in vs if v["control"] == "untreated")
    assert json.loads(json.dumps(data, default=str))  # plain data


def test_the_command_line_prints_the_same_object(tmp_path, capsys):
    # a trial folder and no --response: the whole trial (readings come from the log,
    # so this folder without one says so instead of failing)
    folder, _ = _trial(tmp_path, "")
    assert main(["analyze", str(folder), "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["recommendation"] is None and "readings" in data["notes"]


@pytest.mark.parametrize("aim, limit, value, short", [
    ("higher", 50.0, 40.0, 10.0), ("higher", 50.0, 60.0, 0.0),
    ("lower", 0.3, 0.5, 0.2), ("lower", 0.3, 0.1, 0.0),
    ("on-target", (6.0, 7.5), 8.0, 0.5), ("on-target", (6.0, 7.5), 5.0, 1.0),
])
def test_limit_shortfall(aim, limit, value, short):
    spec = ResponseSpec("r", aim=aim, unacceptable=limit)
    assert limit_shortfall(spec, value) == pytest.approx(short)
    assert limit_shortfall(ResponseSpec("r", aim=aim), value) == 0.0
    assert limit_shortfall(spec, float("nan")) == 0.0


# -- "either setting will do" only inside the practical margin (issue 15) ------
FS = [Factor.continuous("a", -1, 1), Factor.continuous("b", -1, 1)]


def _data(sd, margin=None):
    pts = [(a, b) for a in (-1.0, 1.0) for b in (-1.0, 1.0)] * 4
    df = pd.DataFrame(pts, columns=["a", "b"])
    df["y"] = 100 + 10 * df.a + np.random.default_rng(4).normal(0, sd, len(df))
    fit = fit_model(df, "y", FS, "main", block=None)
    trial = SimpleNamespace(factors=FS, sections={"analysis": AnalysisConfig()})
    return SimpleNamespace(fits={"y": fit}, trial=trial,
                           specs={"y": ResponseSpec("y", margin=margin)})


def test_either_setting_only_inside_the_practical_margin():
    # margin: relative_tolerance 0.05 x |prediction| ~ 5.5; b has no effect
    precise = _equivalence_text(_data(0.5), "y", {"a": 1.0, "b": 0.0}, ["b"])
    assert "either setting will do" in precise and "cannot say" not in precise
    noisy = _equivalence_text(_data(12.0), "y", {"a": 1.0, "b": 0.0}, ["b"])
    assert "cannot say that either setting will do" in noisy


def test_a_responses_own_margin_decides_either_setting():
    # the same precise data: a margin of 0.2 units is narrower than the interval of the
    # change of b (about ±0.5), a margin of 30 is wider than the noisy one (about ±12)
    tight = _equivalence_text(_data(0.5, margin=0.2), "y", {"a": 1.0, "b": 0.0}, ["b"])
    assert "cannot say" in tight and "±0.2" in tight
    wide = _equivalence_text(_data(12.0, margin=30.0), "y", {"a": 1.0, "b": 0.0}, ["b"])
    assert "either setting will do" in wide and "cannot say" not in wide and "±30" in wide


@pytest.mark.parametrize("bad", ["0", "-2", '"five"'])
def test_a_bad_margin_is_refused_with_the_fix(tmp_path, bad, capsys):
    folder = tmp_path / "m"
    folder.mkdir()
    text = SALTS.format(attack_limits="").replace('measure = "removal_pct"',
                                                  f'measure = "removal_pct"\nmargin = {bad}')
    (folder / "trial.toml").write_text(text, encoding="utf-8")
    assert main(["plan", str(folder)]) == 1          # refused, the problem listed
    err = capsys.readouterr()
    said = err.out + err.err
    assert "(removal).margin: margin must be" in said and "->" in said
    assert not (folder / "plan.csv").exists()


def test_the_worse_flag_keeps_its_error_rate_under_a_flat_truth():
    """Simulation over 400 fresh seeds: with no true difference between the four salts,
    a response is flagged 'clearly worse' at most alpha = 5 % of the time (the Bonferroni
    bound of clearly_better_setting).  The comparison it replaced (the best single bath
    observed against the confidence interval here) flagged about two in three of these
    flat trials (4,000 simulations when it was replaced).  With a true difference of
    5 SE it is flagged in most trials."""
    salts = ["a", "b", "c", "d"]
    factor = [Factor.categorical("salt", salts)]
    others = pd.DataFrame({"salt": salts})
    here = pd.DataFrame({"salt": ["a"]})
    seeds = np.random.SeedSequence().spawn(400)
    flat = shifted = 0
    for seed in seeds:
        rng = np.random.default_rng(seed)
        x = np.repeat(salts, 3)
        noise = rng.normal(0, 1, x.size)
        flat += clearly_better_setting(fit_model(pd.DataFrame({"salt": x, "y": noise}), "y",
                                                 factor, "main"), others, here,
                                       "lower") is not None
        y = noise + np.where(x == "a", 5 * np.sqrt(2 / 3), 0.0)  # "a" worse by 5 SE
        shifted += clearly_better_setting(fit_model(pd.DataFrame({"salt": x, "y": y}), "y",
                                                    factor, "main"), others, here,
                                          "lower") is not None
    assert flat / 400 <= 0.05 + 3 * np.sqrt(0.05 * 0.95 / 400), flat
    assert shifted / 400 >= 0.8, shifted
