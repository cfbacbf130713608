"""Cell-level checks (the malformed corpus runs in test_sheets_ingest)."""

from __future__ import annotations

import pytest
from malformed_sheets.make_corpus import fill_csv, make_test_plan

from trialkit.records.sheets import export_csv
from trialkit.records.sheets.ingest import check_sheet


@pytest.fixture
def setup(tmp_path):
    plan = make_test_plan(tmp_path / "trial")
    return plan, export_csv(plan, tmp_path / "blank.csv"), tmp_path


def readings_of(setup, values):
    plan, blank, tmp = setup
    result = check_sheet(fill_csv(blank, tmp / "f.csv", values), plan)
    return {(c, f): v for c, _, f, v in result.readings}, result.problems


def test_choices_match_case_insensitively_and_store_the_choice(setup):
    got, problems = readings_of(setup, {"B01-R1": {"mass_initial_g": 1.0,
                                                   "surface_finish": " PITTED "}})
    assert not problems
    assert got[("B01-R1", "surface_finish")] == "pitted"


@pytest.mark.parametrize("text, stored", [
    ("2026-12-01", "2026-12-01T00:00:00"),
    ("2026-12-01T09:30", "2026-12-01T09:30:00"),
    ("2026-12-01 09:30:15.5", "2026-12-01T09:30:15")])
def test_datetimes_are_stored_in_iso_form(setup, text, stored):
    got, problems = readings_of(setup, {"B01-R1": {"mass_initial_g": 1.0,
                                                   "immersion_start": text}})
    assert not problems
    assert got[("B01-R1", "immersion_start")] == stored


def test_day_first_dates_are_refused_not_guessed(setup):
    _, problems = readings_of(setup, {"B01-R1": {"mass_initial_g": 1.0,
                                                 "immersion_start": "01/12/2026 09:30"}})
    assert problems.checks() == ["wrong_type"]


def test_equal_masses_and_range_edges_accepted(setup):
    got, problems = readings_of(setup, {"B01-R1": {
        "mass_initial_g": 20.0, "mass_final_g": 20.0, "coverage_before_pct": 100.0,
        "coverage_after_pct": 0.0, "bath_ph": 14.0, "bath_temperature_c": -10.0}})
    assert not problems
    assert got[("B01-R1", "coverage_before_pct")] == 100.0


def test_cleaning_cycle_mass_above_initial_is_mass_gain(setup):
    _, problems = readings_of(setup, {"B01-R1": {"mass_initial_g": 20.0,
                                                 "mass_cycle_2_g": 20.5}})
    assert problems.checks() == ["mass_gain"]
    assert next(iter(problems)).column == "mass_cycle_2_g"


def test_all_problems_of_one_row_are_reported(setup):
    _, problems = readings_of(setup, {"B01-R1": {
        "mass_initial_g": 20.0, "mass_final_g": 21.0, "bath_ph": "acidic",
        "immersion_start": "2026-12-02 10:00", "immersion_end": "2026-12-01 10:00"}})
    assert sorted(problems.checks()) == ["end_before_start", "mass_gain", "wrong_type"]


@pytest.mark.parametrize("heading, checks", [
    ("Exposed area (cm^2)", []),  # the same unit spelt differently (pint: cm^2 == cm²)
    ("Exposed area (square centimeter)", []),
    ("Exposed area (mm^2)", ["unit_mismatch"]),
    ("Exposed area (bananas)", ["unit_mismatch"]),
])
def test_unit_spellings_in_headings(setup, heading, checks):
    from malformed_sheets.make_corpus import _csv_grid, _write_grid

    plan, blank, tmp = setup
    grid = _csv_grid(fill_csv(blank, tmp / "f.csv", {"B01-R1": {"mass_initial_g": 1.0,
                                                                "area_cm2": 20.0}}))
    grid[2][grid[3].index("area_cm2")] = heading
    result = check_sheet(_write_grid(tmp / "g.csv", grid), plan)
    assert result.problems.checks() == checks
