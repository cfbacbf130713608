"""Responses modelled on the log or logit scale (``[[response]] scale``; issue 15).

Invented data only.  The claims checked: back-transformed predictions and intervals stay
inside the response's range; the interval of the fitted median covers its truth at the
stated rate over fresh simulated trials; sentences quote the response in its own unit;
the Box–Cox check judges the chosen scale; bad choices are refused in the trial file.
"""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest
import report_trials as rt
from scipy import special

from trialkit.analysis.diagnostics import diagnose
from trialkit.analysis.model import fit_model
from trialkit.analysis.response_scale import LOGIT_EDGE, ResponseScale
from trialkit.analysis.trial_analysis import analyze
from trialkit.exceptions import AnalysisError, TrialFileError
from trialkit.planning.plan import make_plan
from trialkit.report.findings import model_findings
from trialkit.trial.factors import Factor
from trialkit.trial.file import load_trial


def test_the_transforms_and_their_inverse():
    logit = ResponseScale.for_response("logit", (0.0, 100.0))
    z = logit.forward([0.0, 25.0, 100.0])
    # logit(u) = ln(u / (1 - u)) (scipy.special.logit as the reference)
    assert z == pytest.approx(special.logit([LOGIT_EDGE, 0.25, 1 - LOGIT_EDGE]))
    assert logit.back(logit.forward([3.0, 50.0, 97.0])) == pytest.approx([3.0, 50.0, 97.0])
    log = ResponseScale.for_response("log", (0.0, None))
    assert log.back(log.forward([0.02, 1.5])) == pytest.approx([0.02, 1.5])
    with pytest.raises(AnalysisError, match="log scale cannot take"):
        log.forward([0.0, 1.0], name="attack")
    with pytest.raises(AnalysisError, match="needs both bounds"):
        ResponseScale.for_response("logit", (0.0, None))
    with pytest.raises(AnalysisError, match="unknown scale"):
        ResponseScale.for_response("sqrt", (0.0, None))


def _near_complete_sweep(folder, *, seed: int, scale: str):
    """Invented truth: logit(removal / 100) = 1 + 0.45 (c - 2) - 0.01 (c - 2)^2 + N(0, 0.35);
    the top levels clean almost completely (truth 99.7 % at 20 % w/v)."""
    text = rt.SWEEP.replace('aim = "higher"\n', f'aim = "higher"\nscale = "{scale}"\n')
    rt.write_trial(folder, text)
    plan = make_plan(load_trial(folder / "trial.toml"))
    baths = plan.baths.copy()
    rng = np.random.default_rng(seed)
    c = baths.chelator.astype(float)
    eta = 1 + 0.45 * (c - 2) - 0.01 * (c - 2) ** 2 + rng.normal(0, 0.35, len(baths))
    baths["removal"] = np.round(100 * special.expit(eta), 0)     # read in whole percent
    return folder, baths


def _predictions(data) -> list[float]:
    """The predicted values and interval ends of removal the analysis JSON gives (the
    sweep's optimum and the recommendation; the coefficients are on the model's scale)."""
    out = json.loads(json.dumps(data.to_dict(), default=str))
    best = out["responses"]["removal"]["optimum"]
    values = [best[k] for k in ("predicted", "ci_low", "ci_high", "pi_low", "pi_high")
              if isinstance(best.get(k), (int, float))]
    for row in out["recommendation"]["predicted"]:
        values += [row["value"], row["low"], row["high"]]
    return [float(v) for v in values]


def test_a_logit_sweep_never_predicts_removal_outside_0_to_100(tmp_path):
    folder, baths = _near_complete_sweep(tmp_path / "logit", seed=101, scale="logit")
    data = analyze(folder, baths=baths)
    fit = data.fits["removal"]
    assert fit.transform.kind == "logit" and "logit scale" in fit.scale
    values = _predictions(data)
    grid = pd.DataFrame({"chelator": np.linspace(2, 20, 37)})
    cols = ["predicted", "ci_low", "ci_high", "pi_low", "pi_high"]
    values += fit.predict(grid)[cols].to_numpy().ravel().tolist()
    values += fit.profile("chelator")[cols].to_numpy().ravel().tolist()
    assert len(values) > 100 and all(0 <= v <= 100 for v in values), values
    # the same trial on the raw scale reaches past 100 % and is cut and flagged
    raw_folder, raw_baths = _near_complete_sweep(tmp_path / "raw", seed=101, scale="raw")
    raw = analyze(raw_folder, baths=raw_baths).fits["removal"]
    assert raw.predict(grid, clip=False)[["pi_high"]].to_numpy().max() > 100
    assert raw.predict(grid)["clipped"].any() and not fit.predict(grid)["clipped"].any()
    assert data.to_dict()["responses"]["removal"]["scale_kind"] == "logit"


def test_logit_interval_of_the_median_covers_at_its_stated_rate():
    # 300 fresh simulated sweeps (seeds 5000..5299, none picked): the 95 % confidence
    # interval of the fitted median at 8 % w/v covers the truth expit(eta(8)) between
    # 0.92 and 0.98 of the time (binomial SE about 0.013)
    f = Factor.continuous("c", 2, 20)
    c = np.repeat([2.0, 3.7, 5.9, 9.1, 13.9, 20.0], 3)
    truth = 100 * special.expit(1 + 0.5 * 6 - 0.03 * 36)
    hits = 0
    for seed in range(5000, 5300):
        rng = np.random.default_rng(seed)
        eta = 1 + 0.5 * (c - 2) - 0.03 * (c - 2) ** 2 + rng.normal(0, 0.35, len(c))
        table = pd.DataFrame({"c": c, "removal": 100 * special.expit(eta)})
        fit = fit_model(table, "removal", [f], "c + c^2", block=None, limits=(0, 100),
                        scale="logit")
        row = fit.predict(pd.DataFrame({"c": [8.0]})).iloc[0]
        hits += row.ci_low <= truth <= row.ci_high
    assert 0.92 <= hits / 300 <= 0.98, hits


def test_log_scale_sentences_speak_in_the_response_unit_and_stay_positive():
    # invented: attack (mm/yr) halves from low to high pH, multiplicative noise
    f = Factor.continuous("ph", 4.5, 7.5, unit="pH")
    rng = np.random.default_rng(7)
    x = np.repeat([4.5, 7.5], 6)
    attack = 0.4 * np.exp(-np.log(2) * (x - 4.5) / 3 + rng.normal(0, 0.1, len(x)))
    fit = fit_model(pd.DataFrame({"ph": x, "attack": attack}), "attack", [f], "ph",
                    block=None, limits=(0, None), scale="log")
    text = next(x.text for x in model_findings(fit, unit="mm/yr") if x.term == "ph")
    assert "lowered attack from 0." in text and "fitted on the log scale" in text
    grid = fit.predict(pd.DataFrame({"ph": np.linspace(4.5, 7.5, 7)}))
    assert (grid[["ci_low", "pi_low"]].to_numpy() > 0).all()
    lo, hi = fit.predict(pd.DataFrame({"ph": [7.5]})).iloc[0][["ci_low", "ci_high"]]
    assert lo < 0.2 < hi                                      # the truth at pH 7.5


def test_box_cox_judges_the_chosen_scale():
    # log-normal data with a large multiplicative effect, over 60 fresh seeds: the raw
    # scale is rejected in most trials, the log scale supported in about 95 % of them
    # (the Box–Cox profile-likelihood interval, Box and Cox 1964 — from memory)
    f = Factor.continuous("t", 20, 60)
    x = np.repeat([20.0, 30, 40, 50, 60], 4)
    log_ok = raw_rejected = 0
    for seed in range(7000, 7060):
        rng = np.random.default_rng(seed)
        y = np.exp(0.08 * x + rng.normal(0, 0.3, len(x)))
        table = pd.DataFrame({"t": x, "rate": y})
        raw = diagnose(fit_model(table, "rate", [f], "t", block=None, limits=(0, None)))
        log = diagnose(fit_model(table, "rate", [f], "t", block=None, limits=(0, None),
                                 scale="log"))
        raw_rejected += raw.box_cox["chosen_scale_supported"] is False
        log_ok += log.box_cox["chosen_scale_supported"] is True
        assert log.box_cox["chosen_scale"] == "log"
    assert raw_rejected >= 40 and log_ok >= 52, (raw_rejected, log_ok)


@pytest.mark.parametrize("entry, fragment", [
    ('scale = "sqrt"', "unknown scale"),
    ('scale = "logit"\nrange = [0, "none"]', "needs both ends"),
    ('scale = "log"\nrange = ["none", 10]', "needs a lower bound"),
])
def test_bad_scales_are_refused_in_the_trial_file(tmp_path, entry, fragment):
    text = rt.SWEEP.replace('aim = "higher"\n', f'aim = "higher"\n{entry}\n')
    rt.write_trial(tmp_path, text)
    with pytest.raises(TrialFileError) as info:
        load_trial(tmp_path / "trial.toml")
    assert fragment in str(info.value.problems) and "response" in str(info.value.problems)


def test_sentences_of_a_logit_sweep_stay_true_in_the_response_unit(tmp_path):
    from trialkit.report.build import build_report

    folder, baths = _near_complete_sweep(tmp_path / "s", seed=202, scale="logit")
    found = build_report(analyze(folder, baths=baths)).findings
    said = " ".join(f["text"] for f in found if f["response"] == "removal")
    assert "raised removal from " in said and "fitted on the logit scale" in said
    effect = next(f for f in found if f["kind"] == "effect" and f["term"] == "chelator")
    a, b = effect["numbers"]["ends"]
    assert 0 < a < b < 100
    # the truth rises across the whole range: no peak is claimed in the middle
    assert "higher in the middle" not in said


def test_a_bend_without_a_peak_is_not_called_a_peak():
    # raw scale, invented: y = 10 + 5 x - 0.15 x^2 on 0..10 rises all the way (vertex at
    # 16.7, beyond the range) — the square term is significant, the curve has no peak
    f = Factor.continuous("x", 0, 10)
    x = np.repeat(np.linspace(0, 10, 6), 3)
    rng = np.random.default_rng(3)
    y = 10 + 5 * x - 0.15 * x ** 2 + rng.normal(0, 0.3, len(x))
    fit = fit_model(pd.DataFrame({"x": x, "y": y}), "y", [f], "x + x^2", block=None)
    text = next(s.text for s in model_findings(fit) if s.kind == "curvature")
    assert "without a peak or a dip" in text and "high end" in text


def test_the_command_line_takes_the_scale_and_range_of_a_plain_table(tmp_path, capsys):
    """``trialkit analyze TABLE --scale logit --range 0,100``: the table's fit is on the
    logit scale inside 0-100; a removal_pct column is known to be a share without
    --range; a logit scale with no bounds is refused with the option to give."""
    from trialkit.cli import main

    _, baths = _near_complete_sweep(tmp_path / "t", seed=102, scale="raw")
    table = tmp_path / "baths.csv"
    baths[["chelator", "removal"]].to_csv(table, index=False)

    def fit_json(*extra):
        assert main(["analyze", str(table), "--response", "removal", "--factor",
                     "chelator", "--model", "quadratic", "--json", *extra]) == 0
        return json.loads(capsys.readouterr().out)

    plain = fit_json()
    assert plain["scale_kind"] == "raw" and plain["physical_range"] == [None, None]
    out = fit_json("--scale", "logit", "--range", "0,100")
    assert out["physical_range"] == [0.0, 100.0] and out["scale_kind"] == "logit"
    assert main(["analyze", str(table), "--response", "removal", "--factor", "chelator",
                 "--scale", "logit"]) == 2
    assert "--range 0,100" in capsys.readouterr().err
    assert main(["analyze", str(table), "--response", "removal", "--factor", "chelator",
                 "--range", "100,0"]) == 2
    assert "LOW below HIGH" in capsys.readouterr().err
    baths.rename(columns={"removal": "removal_pct"})[["chelator", "removal_pct"]].to_csv(
        table, index=False)
    assert main(["analyze", str(table), "--response", "removal_pct", "--factor",
                 "chelator", "--json"]) == 0
    assert json.loads(capsys.readouterr().out)["physical_range"] == [0.0, 100.0]


def test_parts_left_on_the_raw_scale_say_so(tmp_path):
    """A two-level screen whose removal is modelled on the logit scale: its effects by
    Lenth's method stay on the raw scale, and a note says so."""
    trial, plan, baths = rt.screening(tmp_path / "s", seed=4)
    path = tmp_path / "s" / "trial.toml"
    text = path.read_text(encoding="utf-8")
    path.write_text(text.replace('unit = "%"\naim = "higher"\n',
                                 'unit = "%"\naim = "higher"\nscale = "logit"\n'),
                    encoding="utf-8")
    data = analyze(tmp_path / "s", baths=baths)
    assert data.fits["removal"].transform.kind == "logit"
    assert "removal" in data.effects
    notes = " ".join(data.to_dict()["notes"]["analysis"])
    assert "removal: the effects by Lenth's method are on the raw scale" in notes, notes
    assert "attack: the effects" not in notes     # attack is on the raw scale anyway
