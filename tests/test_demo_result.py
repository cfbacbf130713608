"""Result objects of the demo (trialkit.demo.result), built by hand."""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest

from trialkit.demo.result import DemoResult, DemoStage, DemoTrial, plain_data
from trialkit.numbers import settings_text


def _result(tmp_path: Path) -> DemoResult:
    a = DemoTrial("sweep", tmp_path / "sweep", "A sweep (invented example)",
                  [DemoStage("plan", "done", "24 baths"),
                   DemoStage("recipes", "skipped: the trial file has no [bath] section")],
                  {"report": tmp_path / "sweep" / "report.html",
                   "figures": [tmp_path / "sweep" / "figures" / "01.png"]},
                  {"baths": 24, "values_stored": np.int64(954), "best": np.float64(5.1),
                   "bad": float("nan"), "recommended": {"chelator": 4.99},
                   "recommended_text": "chelator 4.99 % w/v"})
    b = DemoTrial("screen", tmp_path / "screen", "", [DemoStage("copy", "failed", "exists")])
    return DemoResult(tmp_path, [a, b])


def test_stage_done_only_when_done():
    assert DemoStage("plan", "done").done
    assert not DemoStage("plan", "failed").done
    assert not DemoStage("plan", "skipped: because").done


def test_to_dict_is_plain_json(tmp_path):
    d = _result(tmp_path).to_dict()
    text = json.dumps(d)  # raises on numpy scalars, paths or NaN objects
    back = json.loads(text)
    sweep = back["trials"][0]
    assert sweep["numbers"]["values_stored"] == 954 and sweep["numbers"]["bad"] is None
    assert sweep["paths"]["figures"] == [str(tmp_path / "sweep" / "figures" / "01.png")]
    assert sweep["stages"][1]["status"].startswith("skipped: ")


def test_summary_and_reprs_name_what_did_not_run(tmp_path):
    res = _result(tmp_path)
    s = res.summary
    assert list(s.columns) == ["trial", "baths", "values_stored", "stages_done", "skipped",
                               "recommended", "report"]
    assert s["stages_done"].tolist() == [1, 0]
    assert "recipes (skipped: the trial file has no [bath] section)" in s.loc[0, "skipped"]
    assert s.loc[0, "recommended"] == "chelator 4.99 % w/v"
    assert res.reports == [tmp_path / "sweep" / "report.html"]
    text = repr(res)
    assert "invented" in text and "recipes: skipped" in text and "no report" in text
    page = res._repr_html_()
    assert page.count("<tr") == 3 and "invented" in page
    assert res.trial("screen").stage("copy").status == "failed"


def test_lookups_raise_key_errors_naming_what_exists(tmp_path):
    res = _result(tmp_path)
    with pytest.raises(KeyError, match="sweep"):
        res.trial("surface")
    with pytest.raises(KeyError, match="plan"):
        res.trials[0].stage("report")


def test_plain_data_and_settings_text():
    assert plain_data({"a": (np.float32(1.5), math.inf), 2: Path("x")}) == \
        {"a": [1.5, None], "2": "x"}
    assert settings_text({"chelator": 5.6977, "ph": 6.227, "agitation": "periodic"},
                         {"chelator": "% w/v"}) == \
        "chelator 5.7 % w/v, pH 6.23, agitation = periodic"
    assert settings_text(None) == ""
