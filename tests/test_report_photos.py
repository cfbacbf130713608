"""Photos in the analysis and the report: agreement of photo measurements with hand
estimates, and each photo's overlay in the data-quality section (invented test trial and
invented photos; the hand estimates are the photos' truth plus invented eye errors)."""

from __future__ import annotations

import base64

import numpy as np
import pytest
from malformed_sheets.make_corpus import fill_csv, make_test_plan
from PIL import Image

from trialkit.analysis.agreement import bland_altman
from trialkit.analysis.trial_analysis import analyze
from trialkit.demo.photo_scenes import render
from trialkit.photos.record import record_photos
from trialkit.records.sheets import export_csv, ingest_sheet
from trialkit.report.build import build_report

pytestmark = pytest.mark.filterwarnings("ignore::trialkit.exceptions.TrialkitWarning")

COUPONS = ["B01-R1", "B01-R2", "B02-R1", "B02-R2"]
BEFORE = [70.0, 55.0, 85.0, 40.0]  # invented truths
AFTER = [8.0, 20.0, 3.0, 12.0]


@pytest.fixture(scope="module")
def trial(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("photos")
    plan = make_test_plan(tmp / "trial")
    eye = np.random.default_rng(20).normal(0, 4, size=(4, 2))  # invented eye error
    hand = {c: {"mass_initial_g": 25.0, "coverage_before_pct": round(float(b + e[0]), 1),
                "coverage_after_pct": round(float(max(0.0, a + e[1])), 1)}
            for c, b, a, e in zip(COUPONS, BEFORE, AFTER, eye, strict=True)}
    sheet = fill_csv(export_csv(plan, tmp / "blank.csv"), tmp / "s.csv", hand)
    assert ingest_sheet(sheet, plan).ok
    photos = []
    for i, (c, b, a) in enumerate(zip(COUPONS, BEFORE, AFTER, strict=True)):
        for when, pct in (("before", b), ("after", a)):
            p = tmp / f"{c}_{when}.png"
            Image.fromarray(render(pct, seed=300 + i * 2 + (when == "after"),
                                   size=(200, 260)).rgb).save(p)
            photos.append(p)
    record_photos(plan.trial.folder, photos)
    return plan.trial.folder


def test_analysis_reports_agreement_of_photos_with_hand(trial):
    data = analyze(trial)
    assert data.coverage_source == "hand"
    assert len(data.photos) == 8 and (data.photos.overlay != "").all()
    agr = data.agreement
    pairs = agr.pairs
    assert agr.n == 8
    ref = bland_altman(pairs.hand_pct, pairs.photo_pct)
    assert agr.bias == pytest.approx(ref["bias"]) and agr.upper == pytest.approx(ref["upper"])
    # photos are within 2 points of the truth, hands within their invented error
    assert abs(agr.bias) < 6.0 and 0.9 < agr.icc <= 1.0
    d = data.to_dict()
    assert d["coverage_agreement"]["n"] == 8 and len(d["photos"]) == 8


def test_report_shows_agreement_and_overlays(trial):
    data = analyze(trial)
    section = build_report(data).section("readings")
    figures = [b for b in section.blocks if b.kind == "figure"]
    assert len(figures) == 8
    png = base64.b64decode(figures[0].png_base64)
    assert png[:8] == b"\x89PNG\r\n\x1a\n"
    texts = " ".join(b.text for b in section.blocks)
    assert "Bland–Altman" in texts and "ICC(A,1)" in texts
    pairs = dict(next(b for b in section.blocks if b.kind == "pairs").items)
    n = len(data.history)
    assert pairs["Values in the record log"] == f"{n} from 1 sheet(s) and 8 photo(s)"
    html = build_report(data).to_html()
    assert html.count("data:image/png;base64,") >= 8


def test_photo_source_in_the_analysis_and_the_report(trial, tmp_path):
    import shutil

    folder = tmp_path / "photo-source"
    shutil.copytree(trial, folder)
    with (folder / "trial.toml").open("a", encoding="utf-8") as fh:
        fh.write('\n[photos]\ncoverage_from = "photo"\n')
    data = analyze(folder)
    assert data.coverage_source == "photo"
    cur = data.current.set_index("coupon")
    got = data.responses.coupons.set_index("coupon")
    for c in COUPONS:  # removal from the photo values, not the hand ones
        b, a = cur.at[c, "coverage_before_photo_pct"], cur.at[c, "coverage_after_photo_pct"]
        assert got.at[c, "removal_pct"] == pytest.approx((b - a) / b * 100)
    texts = " ".join(b.text for b in build_report(data).section("readings").blocks)
    assert 'coverage_from = "photo"' in texts
    missing = next(b for b in build_report(data).section("readings").blocks
                   if b.kind == "table" and b.text == "Readings still missing")
    assert "coverage_after_photo_pct" in set(missing.table["reading"])


def test_analyze_json_carries_the_agreement(cli, trial):
    import json

    res = cli("analyze", str(trial), "--json")
    assert res.returncode == 0, res.stderr
    out = json.loads(res.stdout)
    assert out["coverage_source"] == "hand" and out["coverage_agreement"]["n"] == 8
    assert out["coverage_agreement"]["icc_form"].startswith("ICC(A,1)")
    assert {p["photo"] for p in out["photos"]} == {f"{c}_{w}.png" for c in COUPONS
                                                    for w in ("before", "after")}


def test_overlays_load_and_show_in_chromium(trial, tmp_path):
    # one page load in headless Chromium (tests/test_report_browser.py's checking script):
    # every overlay image decodes to its file's width, is drawn, not hidden and not covered
    from test_report_browser import check_page, chromium

    chromium()
    data = analyze(trial)
    page = build_report(data).write(tmp_path / "photos-report.html")
    result, console = check_page(page, tmp_path)
    overlays = [i for i in result["shown"] if i["alt"].startswith("photo ")]
    assert len(overlays) == 8 and result["broken"] == []
    want = {f"photo {r.photo} of coupon {r.coupon}": Image.open(r.overlay).size[0]
            for r in data.photos.itertuples()}
    for img in overlays:
        key = next(k for k in want if img["alt"].startswith(k + " "))
        assert img["natural_width"] == want[key] > 0, img
        assert img["section"] == "readings", img
        assert img["width"] > 50 and img["height"] > 50, img
        assert img["styled_visible"] and img["on_top"], img
    assert console == [], console
