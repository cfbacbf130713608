"""``trialkit report`` run as a real subprocess on files in tmp_path (invented data)."""

from __future__ import annotations

import html
import json

import report_trials as rt


def test_report_command_writes_html_and_markdown(tmp_path, cli):
    trial, plan, baths = rt.screening(tmp_path / "t", seed=1)
    baths[["bath", "removal", "attack"]].to_csv(tmp_path / "t" / "results.csv", index=False)
    out, md = tmp_path / "out" / "report.html", tmp_path / "out" / "notes.md"
    res = cli("report", str(tmp_path / "t"), "--out", str(out), "--markdown", str(md),
              "--bath-results", str(tmp_path / "t" / "results.csv"), "--json")
    assert res.returncode == 0, res.stderr
    data = json.loads(res.stdout)
    assert data["html"] == str(out) and out.exists() and md.exists()
    page = out.read_text(encoding="utf-8")
    assert page.startswith("<!DOCTYPE html>") and trial.title in page
    assert [s["key"] for s in data["sections"]][:4] == ["answer", "brief", "readings",
                                                        "matters"]
    chel = next(f for f in data["findings"] if f["term"] == "chelator"
                and f["response"] == "removal")
    assert chel["text"] in html.unescape(page)
    assert data["fingerprint"] == plan.fingerprint
    assert (tmp_path / "out" / "notes_figures" / "figure-01.png").exists()


def test_report_command_bad_input(tmp_path, cli):
    rt.write_trial(tmp_path / "t", rt.SCREENING)
    res = cli("report", str(tmp_path / "t"), "--out", str(tmp_path / "r.pdf"))
    assert res.returncode == 2 and "--out must name an .html file" in res.stderr
    assert "Traceback" not in res.stderr
    (tmp_path / "t" / "results.csv").write_text("bath,removal\nB99,50\n", encoding="utf-8")
    res = cli("report", str(tmp_path / "t"), "--out", str(tmp_path / "r.html"),
              "--bath-results", str(tmp_path / "t" / "results.csv"))
    assert res.returncode == 2 and "not in the plan: ['B99']" in res.stderr
    res = cli("report", str(tmp_path / "nowhere"), "--out", str(tmp_path / "r.html"))
    assert res.returncode == 2 and "Traceback" not in res.stderr
