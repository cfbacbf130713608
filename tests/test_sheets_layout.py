"""Columns and rows of the recording sheets."""

from __future__ import annotations

import pytest
from malformed_sheets.make_corpus import make_test_plan

from trialkit.records.config import sheet_config
from trialkit.records.sheets.layout import (
    coupon_layout,
    inspection_layout,
    plan_rows,
    sheet_metadata,
    split_heading,
)


@pytest.fixture
def plan(tmp_path):
    return make_test_plan(tmp_path)


def test_coupon_layout_columns(plan):
    lay = coupon_layout(plan)
    names = [c.name for c in lay.columns]
    assert names[:8] == ["run", "bath", "coupon", "coupon_kind", "block", "point",
                         "chelator", "surfactant"]
    assert "std_order" not in names
    assert lay.column("chelator").heading == "chelator (% w/v)"
    entry = [c.name for c in lay.entry_columns]
    assert entry[entry.index("mass_final_g") + 1] == "mass_cycle_1_g"
    assert "surface_finish" in entry


def test_rows_follow_run_order_one_per_coupon(plan):
    rows = plan_rows(plan, coupon_layout(plan))
    assert len(rows) == len(plan.table) == 15
    assert rows["run"].is_monotonic_increasing
    assert set(rows["coupon"]) == set(plan.table["coupon"])


def test_inspection_rows(plan):
    lay = inspection_layout(plan)
    rows = plan_rows(plan, lay, sheet_config(plan.trial))
    assert len(rows) == 15 * 2
    assert rows.groupby("coupon")["planned_h"].apply(list).iloc[0] == [2.0, 24.0]
    assert lay.keys == ("coupon", "inspection")


def test_metadata_has_fingerprint_seed_title(plan):
    meta = sheet_metadata(plan, coupon_layout(plan))
    assert meta["fingerprint"] == plan.fingerprint
    assert meta["seed"] == "4242"
    assert meta["title"] == plan.trial.title


@pytest.mark.parametrize("heading, expected", [
    ("Mass before immersion (g)", ("mass before immersion", "g")),
    ("  Rust   coverage (% of  area) ", ("rust coverage", "% of area")),
    ("Operator", ("operator", None)),
])
def test_split_heading(heading, expected):
    assert split_heading(heading) == expected
