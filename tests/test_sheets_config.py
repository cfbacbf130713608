"""The [sheet] section of the trial file."""

from __future__ import annotations

import pytest

from trialkit.problems import ProblemReport
from trialkit.records.config import SheetConfig, parse_sheet_section, sheet_config
from trialkit.records.fields import COUPON_FIELDS


def parse(raw):
    problems = ProblemReport("trial.toml")
    return parse_sheet_section(raw, None, problems, "sheet"), problems


def test_defaults_are_all_coupon_fields():
    cfg, problems = parse({})
    assert not problems
    assert cfg.coupon_fields == COUPON_FIELDS
    assert not cfg.has_timecourse


def test_full_section():
    cfg, problems = parse({
        "fields": ["mass_initial_g", "mass_final_g", "coverage_after_pct", "notes"],
        "cleaning_cycles": 2, "inspections_h": [1, 4, 24], "required": ["mass_initial_g"],
        "ranges": {"mass_initial_g": [1, 500], "coverage_pct": [0, 50]},
        "ratings": {"surface_finish": ["bright", "dark"]}, "paper": "Letter"})
    assert not problems, str(problems)
    assert [f.name for f in cfg.coupon_fields] == [
        "mass_initial_g", "mass_final_g", "mass_cycle_1_g", "mass_cycle_2_g",
        "coverage_after_pct", "surface_finish", "notes"]
    assert cfg.field("mass_initial_g").minimum == 1.0
    assert cfg.field("mass_initial_g").maximum == 500.0
    assert cfg.field("coverage_pct").maximum == 50.0
    assert cfg.field("surface_finish").choices == ("bright", "dark")
    assert cfg.inspections_h == (1.0, 4.0, 24.0)
    assert cfg.paper == "Letter"
    assert cfg.to_dict()["required"] == ["mass_initial_g"]


@pytest.mark.parametrize("raw, where, check", [
    ({"fieldz": []}, "sheet.fieldz", "unknown_key"),
    ({"fields": ["mass_inital_g"]}, "sheet.fields", "unknown_field"),
    ({"fields": "mass_initial_g"}, "sheet.fields", "wrong_type"),
    ({"cleaning_cycles": -1}, "sheet.cleaning_cycles", "out_of_range"),
    ({"inspections_h": [4, 1]}, "sheet.inspections_h", "wrong_type"),
    ({"ranges": {"mass_initial_g": [5, 1]}}, "sheet.ranges.mass_initial_g", "wrong_type"),
    ({"ranges": {"operator": [0, 1]}}, "sheet.ranges.operator", "wrong_type"),
    ({"ranges": {"mass_x": [0, 1]}}, "sheet.ranges.mass_x", "unknown_field"),
    ({"ratings": {"finish": ["only"]}}, "sheet.ratings.finish", "wrong_type"),
    ({"ratings": {"finish": ["a,b", "c"]}}, "sheet.ratings.finish", "wrong_type"),
    ({"ratings": {"notes": ["a", "b"]}}, "sheet.ratings.notes", "bad_name"),
    ({"required": ["bath_ph"], "fields": ["mass_initial_g"]}, "sheet.required",
     "unknown_field"),
    ({"paper": "A5"}, "sheet.paper", "unknown_choice"),
])
def test_each_mistake_is_reported(raw, where, check):
    _, problems = parse(raw)
    assert problems.checks() == [check]
    assert next(iter(problems)).where == where


def test_all_mistakes_collected_at_once():
    _, problems = parse({"paper": "A5", "cleaning_cycles": 99, "fields": ["nope"]})
    assert sorted(problems.checks()) == ["out_of_range", "unknown_choice", "unknown_field"]


def test_sheet_config_of_a_trial_without_section():
    class T:
        sections: dict = {}

    assert sheet_config(T()) == SheetConfig()
