"""Property-based hardening of XLSX ingest and of the record log (issue 14).

Filled workbooks (invented readings) are spoiled in a cell (odd Python values that
openpyxl writes as they are), inside the zip (a member's bytes flipped, truncated,
replaced, dropped, or given a DOCTYPE with an entity) or as a whole file (cut short), and
read in through the command line; record logs are damaged at random bytes and read by
every command.  The answer is always exit 0, 1 or 2 with a message, never a traceback or
an internal error (exit 3); a refused sheet and every reading command leave the record
log byte for byte as it was.
"""

from __future__ import annotations

import contextlib
import datetime as dt
import io
import shutil
import warnings
import zipfile
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from malformed_sheets.make_corpus import fill_csv, fill_xlsx, good_readings, make_test_plan

from trialkit.cli import main
from trialkit.records.log import LOG_FILE
from trialkit.records.sheets import export_csv, export_xlsx, ingest_sheet

ODD_VALUES = [None, "", " ", "nan", float("nan"), float("inf"), -float("inf"), 1e308, -1e308,
              0, -1, 1e-300, 10**20, True, False, "=1+1", "@x", "\x01", "\u202e", "日本",
              "x" * 5000, dt.datetime(1900, 1, 1), dt.datetime(9999, 12, 31), dt.time(12),
              "B01-R1", "B99-R9", "25,1", "1" * 400]
ENTITY = b'<!DOCTYPE x [<!ENTITY big "aaaaaaaaaa">]>'
QUIET = [HealthCheck.too_slow, HealthCheck.function_scoped_fixture,
         HealthCheck.data_too_large]


def _run(args: list[str]) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err), \
            warnings.catch_warnings():
        warnings.simplefilter("ignore")
        code = main(args)
    return code, out.getvalue(), err.getvalue()


@pytest.fixture(scope="module")
def workbook_trial(tmp_path_factory):
    base = tmp_path_factory.mktemp("xlsx-mutations")
    plan = make_test_plan(base / "trial")
    blank = export_xlsx(plan, base / "blank.xlsx")
    first = fill_csv(export_csv(plan, base / "blank.csv"), base / "first.csv",
                     {"B01-R1": {"mass_initial_g": 25.0}})
    assert ingest_sheet(first, plan).ok
    good = fill_xlsx(blank, base / "good.xlsx", good_readings())
    return plan.trial.folder, good, base


def _spoil_cell(good: Path, dst: Path, draw) -> str:
    from openpyxl import load_workbook
    from openpyxl.utils.exceptions import IllegalCharacterError

    wb = load_workbook(good)
    ws = wb[draw(st.sampled_from(wb.sheetnames))]
    row = draw(st.integers(1, max(1, ws.max_row)))
    col = draw(st.integers(1, max(1, ws.max_column)))
    value = draw(st.sampled_from(ODD_VALUES))
    try:
        ws.cell(row, col).value = value
    except (ValueError, TypeError, IllegalCharacterError):  # openpyxl will not write it

        ws.cell(row, col).value = repr(value)
    wb.save(dst)
    return f"cell {ws.title}!{row},{col} = {value!r:.40}"


def _spoil_zip(good: Path, dst: Path, draw) -> str:
    with zipfile.ZipFile(good) as z:
        members = {i.filename: z.read(i.filename) for i in z.infolist()}
    name = draw(st.sampled_from(sorted(members)))
    how = draw(st.sampled_from(["flip", "truncate", "replace", "drop", "entity"]))
    data = bytearray(members[name])
    if how == "flip" and data:
        for _ in range(draw(st.integers(1, 8))):
            i = draw(st.integers(0, len(data) - 1))
            data[i] = draw(st.integers(0, 255))
    elif how == "truncate":
        data = data[:draw(st.integers(0, len(data)))]
    elif how == "replace":
        data = bytearray(draw(st.binary(max_size=200)))
    elif how == "entity" and data.startswith(b"<?xml"):
        end = data.index(b"?>") + 2
        data = data[:end] + ENTITY + data[end:]
    with zipfile.ZipFile(dst, "w", zipfile.ZIP_DEFLATED) as z:
        for member, body in members.items():
            if member == name and how == "drop":
                continue
            z.writestr(member, bytes(data) if member == name else body)
    return f"zip {how} {name}"


def _spoil_file(good: Path, dst: Path, draw) -> str:
    data = good.read_bytes()
    cut = draw(st.integers(0, len(data) - 1))
    dst.write_bytes(data[:cut])
    return f"file cut at {cut} of {len(data)} bytes"


@settings(max_examples=90, derandomize=True, deadline=None, database=None,
          suppress_health_check=QUIET)
@given(data=st.data())
def test_spoiled_workbooks_are_refused_or_read_never_a_traceback(workbook_trial, data):
    folder, good, base = workbook_trial
    sheet = base / "spoiled.xlsx"
    spoil = data.draw(st.sampled_from([_spoil_cell, _spoil_cell, _spoil_zip, _spoil_zip,
                                       _spoil_file]))
    what = spoil(good, sheet, data.draw)
    log = Path(folder) / LOG_FILE
    before = log.read_bytes()
    code, out, err = _run(["ingest", str(sheet), "--trial", str(folder)])
    assert code in (0, 1, 2) and "Traceback" not in err, (what, code, err[-400:])
    if code != 0:
        assert (out + err).strip(), what            # a message, not silence
        assert str(sheet.name) in out + err, (what, out, err)   # naming the file
        assert log.read_bytes() == before, what


@pytest.fixture(scope="module")
def recorded_trial(tmp_path_factory):
    base = tmp_path_factory.mktemp("log-mutations")
    plan = make_test_plan(base / "trial")
    blank = export_csv(plan, base / "blank.csv")
    sheet = fill_csv(blank, base / "filled.csv", good_readings())
    assert ingest_sheet(sheet, plan).ok
    again = fill_csv(blank, base / "again.csv", {"B01-R1": {"mass_final_g": 24.5}})
    return plan.trial.folder, again, base


READING = (["history", "{d}"], ["responses", "{d}"], ["verify", "{d}"],
           ["analyze", "{d}", "--json"])


@settings(max_examples=40, derandomize=True, deadline=None, database=None,
          suppress_health_check=QUIET)
@given(data=st.data())
def test_damaged_logs_give_a_message_on_every_command(recorded_trial, data):
    src, sheet, base = recorded_trial
    folder = base / "copy"
    if folder.exists():
        shutil.rmtree(folder)
    shutil.copytree(src, folder)
    log = folder / LOG_FILE
    raw = bytearray(log.read_bytes())
    for _ in range(data.draw(st.integers(1, 64))):
        i = data.draw(st.integers(0, len(raw) - 1))
        raw[i] = data.draw(st.integers(0, 255))
    log.write_bytes(bytes(raw))
    for cmd in READING:
        before = log.read_bytes()
        code, out, err = _run([a.format(d=folder) for a in cmd])
        assert code in (0, 1, 2) and "Traceback" not in err, (cmd, code, err[-400:])
        assert log.read_bytes() == before, cmd        # reading never writes
    before = log.read_bytes()
    code, out, err = _run(["ingest", str(sheet), "--trial", str(folder)])
    assert code in (0, 1, 2) and "Traceback" not in err, (code, err[-400:])
    if code != 0:
        assert log.read_bytes() == before
