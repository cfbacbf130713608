"""Printable bench sheet and coupon labels."""

from __future__ import annotations

import re

import pytest
from malformed_sheets.make_corpus import make_test_plan

from trialkit.exceptions import SheetError
from trialkit.records.fields import COUPON_FIELDS, TIMECOURSE_FIELDS
from trialkit.records.sheets.export_html import export_html, html_text


@pytest.fixture
def plan(tmp_path):
    return make_test_plan(tmp_path / "t", title="<script>alert(1)</script> & trial")


def test_user_text_is_escaped(plan):
    page = html_text(plan)
    assert "<script>" not in page
    assert "&lt;script&gt;alert(1)&lt;/script&gt; &amp; trial" in page


def test_labels_one_per_coupon_with_bath_run_block(plan):
    page = html_text(plan)
    labels = re.findall(r'<div class="label"><div class="id">([^<]+)</div>\s*bath (\S+) '
                        r'&middot; run (\d+) &middot; block (\d+)', page)
    assert len(labels) == len(plan.table)
    row = plan.table.set_index("coupon").loc[labels[0][0]]
    assert (labels[0][1], int(labels[0][2]), int(labels[0][3])) == (row.bath, row.run,
                                                                    row.block)


def test_paper_sizes(plan, tmp_path):
    assert "size: A4 landscape" in html_text(plan)
    letter = export_html(plan, tmp_path / "b.html", paper="Letter").read_text("utf-8")
    assert "size: letter landscape" in letter
    with pytest.raises(SheetError, match="A5"):
        html_text(plan, paper="A5")


def test_both_sheets_and_fingerprint(plan):
    page = html_text(plan)
    assert page.count('<table class="sheet">') == 2
    assert page.count(plan.fingerprint) == 3
    # 15 coupons x (all coupon fields + 2 cleaning cycles + 1 rating); 30 inspection rows
    n_coupon = len(COUPON_FIELDS) + 2 + 1
    assert page.count('<td class="entry">') == 15 * n_coupon + 30 * len(TIMECOURSE_FIELDS)
