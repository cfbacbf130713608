"""The ``trialkit demo`` command in-process (the full run as a subprocess is in
tests/test_demo.py).  The loop is cut short after the sheets to keep this fast; the
example trials are invented.
"""

from __future__ import annotations

import json
import re

import pytest

import trialkit.demo.run
from trialkit.cli import main


@pytest.fixture
def short_demo(monkeypatch):
    real = trialkit.demo.run.run_demo

    def run(*args, **kw):
        return real(*args, until="sheets", **kw)

    monkeypatch.setattr(trialkit.demo.run, "run_demo", run)


def test_json_output_lists_each_trial(short_demo, tmp_path, capsys):
    assert main(["demo", "--out", str(tmp_path / "o"), "--trial", "chelator-sweep",
                 "--json"]) == 0
    out, err = capsys.readouterr()
    data = json.loads(out)
    assert [t["name"] for t in data["trials"]] == ["chelator-sweep"]
    stages = [s["name"] for s in data["trials"][0]["stages"]]
    assert stages == ["copy", "plan", "recipes", "sheets"]
    assert re.search(r"^\[chelator-sweep\] sheets: done", err, re.M)


def test_summary_names_the_plan_and_what_did_not_run(short_demo, tmp_path, capsys):
    out_dir = tmp_path / "o"
    (out_dir / "chelator-sweep").mkdir(parents=True)
    (out_dir / "chelator-sweep" / "x").write_text("", encoding="utf-8")
    assert main(["demo", "--out", str(out_dir), "--trial", "chelator-sweep",
                 "--trial", "five-factor-screen"]) == 0
    out, err = capsys.readouterr()
    assert "all data are invented" in out
    # the occupied folder fails its copy and the rest is skipped, and says so
    assert re.search(r"^  copy: failed \(.*already exists", out, re.M)
    assert "plan: skipped: the copy stage failed" in out
    assert re.search(r"five-factor-screen: .*\n  plan [0-9a-f]{12}: 22 baths", out)
    assert "writing into" in err


def test_unknown_trial_exits_with_a_message(tmp_path, capsys):
    assert main(["demo", "--out", str(tmp_path / "o"), "--trial", "nope"]) != 0
    _, err = capsys.readouterr()
    assert "no example trial 'nope'" in err
