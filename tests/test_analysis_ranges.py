"""Physical ranges of responses (issue 15, item 1): no prediction or interval of a
percentage leaves 0-100, no rate or time interval goes below 0, the optimum's intervals
stay in the factors' ranges, and the JSON states the range and the scale.

The bundled examples' readings are invented (``trialkit/demo``); they go through the real
record log (``run_demo(..., until="responses")``) and the real command line."""

from __future__ import annotations

import json
import math

import numpy as np
import pandas as pd
import pytest

from trialkit.analysis.model import fit_model
from trialkit.analysis.pipeline import analyze_table
from trialkit.responses.definitions import RANGES, physical_range
from trialkit.trial.factors import Factor

EXAMPLES = ("chelator-sweep", "five-factor-screen", "surface-follow-up")
VALUE_KEYS = ("predicted", "ci_low", "ci_high", "pi_low", "pi_high", "pi3_low", "pi3_high")


@pytest.fixture(scope="module")
def example_json(tmp_path_factory):
    from conftest import run_cli

    from trialkit.demo.run import run_demo

    out = tmp_path_factory.mktemp("ranges")
    run_demo(out, trials=list(EXAMPLES), until="responses")
    result = {}
    for name in EXAMPLES:
        proc = run_cli("analyze", str(out / name), "--all", "--json")
        assert proc.returncode == 0, proc.stderr
        result[name] = json.loads(proc.stdout)
    return result


def _values(block: dict) -> list[float]:
    return [block[k] for k in VALUE_KEYS if block.get(k) is not None]


@pytest.mark.parametrize("name", EXAMPLES)
def test_examples_keep_every_prediction_in_its_physical_range(example_json, name):
    data = example_json[name]
    checked = 0
    for response, res in data["responses"].items():
        lo, hi = res["physical_range"]
        # raw scale cut to the range, or a censored time on the log scale (issue 15)
        assert res["scale"].startswith(("raw scale", "log scale"))
        blocks = [res.get("optimum") or {}]
        if res.get("surface"):
            blocks.append(res["surface"]["optimum"])
        blocks += [p for p in data["recommendation"]["predictions"]
                   if p["response"] == response]
        for b in blocks:
            for v in _values(b):
                checked += 1
                assert lo is None or v >= lo, (response, b)
                assert hi is None or v <= hi, (response, b)
    assert checked > 20


def test_example_ranges_are_the_measures_ranges(example_json):
    res = example_json["chelator-sweep"]["responses"]
    assert res["removal"]["physical_range"] == [0.0, 100.0]
    assert res["attack"]["physical_range"] == [0.0, None]   # a corrosion rate
    assert res["time_to_clean"]["physical_range"] == [0.0, None]
    # the sweep's optimum intervals stay in the swept range (1-9 % w/v)
    sw = res["time_to_clean"]["sweep"]
    assert 1.0 <= sw["fieller_low"] <= sw["best"] <= sw["fieller_high"] <= 9.0
    assert sw["swept_range"] == [1.0, 9.0]


def test_sweep_that_cleans_almost_completely_stays_under_100():
    # invented sweep: removal climbs to about 99.5 % at the top levels, SD 1.5 %
    rng = np.random.default_rng(12)
    x = np.repeat([1.0, 3, 5, 7, 9], 3)
    y = np.minimum(100.0, 100 - 40 * np.exp(-0.6 * x) + rng.normal(0, 1.5, x.size))
    f = Factor.continuous("chelator", 1, 9)
    res = analyze_table(pd.DataFrame({"chelator": x, "removal": y}), "removal", [f],
                        sweep="chelator", aim="higher", n_boot=200, block=None,
                        limits=physical_range("removal_pct"))
    grid = res.sweep.grid()
    cols = ["predicted", "ci_low", "ci_high", "pi_low", "pi_high"]
    assert grid[cols].to_numpy().max() <= 100.0 and grid[cols].to_numpy().min() >= 0.0
    assert grid["clipped"].any()  # the raw quadratic went above 100 and was cut, flagged
    opt = res.sweep.optimum
    assert opt["pi_high"] <= 100.0 and opt["clipped"]
    out = res.to_dict()
    assert out["physical_range"] == [0.0, 100.0] and "cut to the physical range" in out["scale"]


def test_rate_interval_never_below_zero():
    # invented: a rate near zero with a wide raw interval
    rng = np.random.default_rng(4)
    x = np.repeat([-1.0, 0.0, 1.0], 3)
    y = np.abs(0.01 + 0.005 * x + rng.normal(0, 0.02, x.size))
    fit = fit_model(pd.DataFrame({"a": x, "k": y}), "k", [Factor.continuous("a", -1, 1)],
                    "a", block=None, limits=RANGES["rate_constant_per_h"])
    p = fit.predict(pd.DataFrame({"a": np.linspace(-1, 1, 21)}))
    assert (p[["ci_low", "pi_low"]] >= 0).all().all() and p["clipped"].any()
    raw = fit.predict(pd.DataFrame({"a": np.linspace(-1, 1, 21)}), clip=False)
    assert (raw["pi_low"] < 0).any() and not raw["clipped"].any()


def test_unknown_measure_in_percent_is_a_share():
    assert physical_range("anything", "%") == (0.0, 100.0)
    assert physical_range("cost_per_l", "EUR/L") == (None, None)
    assert all(lo is None or hi is None or lo < hi for lo, hi in RANGES.values())
    assert not math.isnan(RANGES["removal_pct"][1])


RANGE_TRIAL = '''
[trial]
title = "Gloss check (invented)"
seed = 1
[[factor]]
name = "chelator"
unit = "% w/v"
low = 2
high = 6
[design]
kind = "full-factorial"
[[response]]
name = "gloss"
unit = "GU"
aim = "higher"
measure = "gloss_units"
{range}
'''


def test_a_user_response_declares_its_range_and_the_analysis_keeps_to_it():
    from trialkit.analysis.trial_analysis import response_limits as _limits
    from trialkit.trial.file import parse_trial_text

    spec = parse_trial_text(RANGE_TRIAL.format(range='range = [0, "none"]')).responses[0]
    assert spec.range == (0.0, None) and _limits(spec) == (0.0, None)
    spec = parse_trial_text(RANGE_TRIAL.format(range="range = [0, 100]")).responses[0]
    assert _limits(spec) == (0.0, 100.0)
    # without the key an unknown measure in GU has no bound
    assert _limits(parse_trial_text(RANGE_TRIAL.format(range="")).responses[0]) == \
        (None, None)


@pytest.mark.parametrize("bad, said", [
    ("range = [100, 0]", "low end of range must be below"),
    ("range = [0]", "two values"),
    ('range = ["zero", 100]', "must be a number"),
    ("range = 5", "two values"),
])
def test_a_bad_range_is_refused_with_the_fix(bad, said):
    from trialkit.exceptions import TrialFileError
    from trialkit.trial.file import parse_trial_text

    with pytest.raises(TrialFileError) as err:
        parse_trial_text(RANGE_TRIAL.format(range=bad))
    assert said in str(err.value) and "response" in str(err.value) and "range" in str(err.value)
