"""Property-based hardening of sheet ingest: filled CSV sheets (invented readings) are
spoiled one cell, one row or one stamp field at a time and read in through the command
line.  The answer is exit 0 (accepted) or 1 (refused, problems listed), never a traceback
or an internal error; a refused sheet leaves the record log byte for byte as it was."""

from __future__ import annotations

import contextlib
import csv
import io
import warnings
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from malformed_sheets.make_corpus import fill_csv, good_readings, make_test_plan

from trialkit.cli import main
from trialkit.records.log import LOG_FILE
from trialkit.records.sheets import export_csv, ingest_sheet

ODD_CELLS = ["", " ", "nan", "inf", "-inf", "1e400", "-1e400", "1e308", "0", "-0", "-1",
             "25,1", "=1+1", "@x", "+3", "'=2", "\x00", "\u202e", "日本", "e\u0301",
             "x" * 5000, "2026-13-45 25:61", "9999-12-31 23:59", "0001-01-01 00:00",
             '"', "\r", "\t", "B01-R1", "B99-R9", "true", "1" * 400]


@pytest.fixture(scope="module")
def trial(tmp_path_factory):
    base = tmp_path_factory.mktemp("mutations")
    plan = make_test_plan(base / "trial")
    blank = export_csv(plan, base / "blank.csv")
    first = fill_csv(blank, base / "first.csv", {"B01-R1": {"mass_initial_g": 25.0}})
    assert ingest_sheet(first, plan).ok
    good = fill_csv(blank, base / "good.csv", good_readings())
    grid = list(csv.reader(io.StringIO(good.read_text(encoding="utf-8"), newline="")))
    return plan.trial.folder, grid, base


@st.composite
def spoiled(draw, grid):
    grid = [list(r) for r in grid]
    action = draw(st.sampled_from(["cell", "cell", "cell", "drop_row", "dup_row", "stamp"]))
    if action == "cell":
        r = draw(st.integers(0, len(grid) - 1))
        c = draw(st.integers(0, max(0, len(grid[r]) - 1)))
        value = draw(st.one_of(st.sampled_from(ODD_CELLS),
                               st.text(st.characters(exclude_categories=("Cs",)),
                                       max_size=10),
                               st.floats().map(repr)))
        if grid[r]:
            grid[r][c] = value
    elif action == "drop_row":
        del grid[draw(st.integers(0, len(grid) - 1))]
    elif action == "dup_row":
        r = draw(st.integers(0, len(grid) - 1))
        grid.insert(r, list(grid[r]))
    else:
        c = draw(st.integers(1, max(1, len(grid[0]) - 1)))
        if len(grid[0]) > c:
            key = grid[0][c].partition("=")[0]
            grid[0][c] = key + "=" + draw(st.sampled_from(ODD_CELLS))
    out = io.StringIO()
    csv.writer(out, lineterminator="\n").writerows(grid)
    return out.getvalue(), action


@settings(max_examples=150, derandomize=True, deadline=None, database=None,
          suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture,
                                 HealthCheck.data_too_large])
@given(data=st.data())
def test_spoiled_sheets_are_refused_or_read_never_a_traceback(trial, data):
    folder, grid, base = trial
    text, action = data.draw(spoiled(grid))
    sheet = base / "spoiled.csv"
    sheet.write_text(text, encoding="utf-8")
    log = Path(folder) / LOG_FILE
    before = log.read_bytes()
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err), \
            warnings.catch_warnings():
        warnings.simplefilter("ignore")
        code = main(["ingest", str(sheet), "--trial", str(folder)])
    assert "Traceback" not in err.getvalue() and code in (0, 1), (action, code,
                                                                  err.getvalue()[-400:])
    if code == 1:
        assert "refused" in out.getvalue() or out.getvalue().strip(), action
        assert log.read_bytes() == before, action
