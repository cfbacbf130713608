"""Column-at-a-time reading of sheet cells (records/sheets/cells.py) gives exactly what the
one-cell rules give, and the fast paths of ingest (a read-only pass over a plain workbook,
rows settled a column at a time) change no reading and no problem.

The references are the one-cell rules themselves (``parse_number``, ``parse_datetime``,
the one-row checks of ``validate_table``, openpyxl's full workbook load) and Python's own
``float``: self-consistency checks on invented sheets, no outside source needed.
"""

from __future__ import annotations

import csv
import io
import math
import re

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from malformed_sheets.make_corpus import build_corpus, fill_csv, good_readings, make_test_plan
from test_sheets_mutations import ODD_CELLS, spoiled

from trialkit.records.fields import FIELDS_BY_NAME
from trialkit.records.sheets import cells, export_csv, readers, validate
from trialkit.records.sheets.ingest import check_sheet

NUMBER_FIELDS = ["mass_initial_g", "coverage_after_pct", "bath_ph", "bath_temperature_c"]


def one_by_one(v, field, decimal_comma):
    """What ``_entry_value`` makes of a number cell: (value, refused)."""
    if cells.blank(v):
        return None, False
    try:
        x = cells.parse_number(v, decimal_comma)
    except (TypeError, ValueError):
        return None, True
    if field.unit == "%" and not 0.0 <= x <= 100.0:
        return None, True
    if (field.minimum is not None and x < field.minimum) or (
            field.maximum is not None and x > field.maximum):
        return None, True
    return x, False


@pytest.mark.parametrize("decimal_comma", [False, True])
@pytest.mark.parametrize("name", NUMBER_FIELDS)
def test_number_column_settles_only_what_the_cell_rules_accept(name, decimal_comma):
    field = FIELDS_BY_NAME[name]
    column = [*ODD_CELLS, 12.5, 7, True, 2**60, -0.0, float("nan"), " 6.5 ", "1_0",
              "7,25", None]
    values, flagged = cells.entry_column(column, field, from_csv=True,
                                         decimal_comma=decimal_comma)
    for v, got, flag in zip(column, values, flagged.tolist(), strict=True):
        want, refused = one_by_one(v, field, decimal_comma)
        if flag:  # left to the one-cell rules; never a value of its own
            assert got is None
            continue
        assert not refused, f"{v!r} settled but the one-cell rules refuse it"
        assert got == want and type(got) is type(want), (v, got, want)


@settings(max_examples=200, derandomize=True, deadline=None, database=None)
@given(st.lists(st.one_of(st.text(max_size=8), st.floats().map(repr),
                          st.floats(allow_nan=True), st.integers(-10**20, 10**20),
                          st.none()), max_size=12))
def test_number_column_agrees_with_float_on_any_cells(column):
    x, empty, flagged = cells.number_column(column, decimal_comma=False)
    for v, xi, e, f in zip(column, x.tolist(), empty.tolist(), flagged.tolist(),
                           strict=True):
        if e:
            assert cells.blank(v)
        elif not f:
            assert math.isfinite(xi) and xi == cells.parse_number(v, False)
        else:
            try:
                got = cells.parse_number(v, False)
            except (TypeError, ValueError, OverflowError):
                continue
            assert isinstance(v, int) and abs(v) >= 2**53, f"{v!r} flagged, reads {got!r}"


def _slow(monkeypatch):
    """Send every row through the one-row checks and every workbook through a full load."""
    monkeypatch.setattr(validate, "_settled_rows",
                        lambda raw, *a, **k: [None] * len(raw.rows))
    monkeypatch.setattr(readers, "_FORMULA_OR_MERGE", re.compile(rb""))


def _outcome(path, plan):
    checked = check_sheet(path, plan)
    return ([(c, i, f, type(v).__name__, v) for c, i, f, v in checked.readings],
            checked.problems.to_dict())


@pytest.fixture(scope="module")
def corpus(tmp_path_factory):
    base = tmp_path_factory.mktemp("cells")
    plan = make_test_plan(base / "trial")
    return plan, build_corpus(base / "corpus", plan), base


def test_fast_paths_change_no_reading_and_no_problem_on_the_malformed_corpus(
        corpus, monkeypatch):
    plan, sheets, _ = corpus
    fast = {name: _outcome(path, plan) for name, (path, _) in sheets.items()}
    _slow(monkeypatch)
    slow = {name: _outcome(path, plan) for name, (path, _) in sheets.items()}
    assert any(f[0] for f in fast.values()) and any(f[1]["problems"] for f in fast.values())
    for name in sheets:
        assert fast[name] == slow[name], name


@settings(max_examples=60, derandomize=True, deadline=None, database=None,
          suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture,
                                 HealthCheck.data_too_large])
@given(data=st.data())
def test_fast_paths_change_nothing_on_spoiled_csv_sheets(corpus, data):
    plan, _, base = corpus
    good = base / "good.csv"
    if not good.exists():
        fill_csv(export_csv(plan, base / "blank.csv"), good, good_readings())
    grid = list(csv.reader(io.StringIO(good.read_text(encoding="utf-8-sig"), newline="")))
    text, _ = data.draw(spoiled(grid))
    sheet = base / "spoiled.csv"
    sheet.write_text(text, encoding="utf-8")
    fast = _outcome(sheet, plan)
    with pytest.MonkeyPatch.context() as mp:
        _slow(mp)
        slow = _outcome(sheet, plan)
    assert fast == slow
