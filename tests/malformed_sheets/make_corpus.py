"""Generator of the malformed-sheet corpus (and the small plan the sheet tests share).

Every file here is invented for testing and says nothing about real baths.  Each corpus
entry is a real file on disk - an exported sheet, filled and then spoiled in one way -
with the exact problem check code ingest must report.  Run as a script to write the
corpus into a folder for inspection::

    PYTHONPATH=. python tests/malformed_sheets/make_corpus.py /tmp/corpus

The test trial (a 2 x 2 full factorial plus one untreated control, two rusted and one
witness coupon per bath) is laid out by :func:`trialkit.planning.plan.make_plan`.
"""

from __future__ import annotations

import csv
import io
import re
import sys
import zipfile
from collections.abc import Callable
from pathlib import Path
from typing import Any

import pandas as pd

TRIAL_TOML = """
[trial]
title = "{title}"
seed = {seed}

[[factor]]
name = "chelator"
unit = "% w/v"
low = 2.0
high = 10.0

[[factor]]
name = "surfactant"
levels = ["none", "added"]

[design]
kind = "full-factorial"

[layout]
replicates = 1
controls = ["untreated"]
coupons_per_bath = 2
witness_coupons = 1

[sheet]
cleaning_cycles = 2
inspections_h = [2, 24]
required = ["mass_initial_g"]

[sheet.ratings]
surface_finish = ["bright", "grey", "dark", "pitted"]
"""

DEFAULT_TITLE = "Invented sheet test trial"


def write_trial(folder: Path, *, title: str = DEFAULT_TITLE, seed: int = 4242,
                extra: str = "") -> Path:
    """Write the test trial file into ``folder`` and return the folder."""
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    text = TRIAL_TOML.format(title=title.replace("\\", "\\\\").replace('"', '\\"'), seed=seed)
    (folder / "trial.toml").write_text(text + extra, encoding="utf-8")
    return folder


def make_test_plan(folder: Path, **kw: Any) -> Any:
    """Write the test trial into ``folder`` and return its plan."""
    from trialkit.planning.plan import make_plan
    from trialkit.trial.file import load_trial

    return make_plan(load_trial(write_trial(folder, **kw)))


# -- filling sheets ----------------------------------------------------------------------
def good_readings() -> dict[str, dict[str, Any]]:
    """Plausible invented readings for three coupons (all field kinds)."""
    return {
        "B01-R1": {"mass_initial_g": 25.125, "mass_final_g": 24.75, "mass_cycle_1_g": 24.7,
                   "mass_cycle_2_g": 24.68, "coverage_before_pct": 80.0,
                   "coverage_after_pct": 5.0, "immersion_start": "2026-12-01 09:30",
                   "immersion_end": "2026-12-02 09:30", "bath_ph": 6.5,
                   "bath_temperature_c": 21.5, "surface_finish": "grey", "operator": "AB",
                   "notes": "=1+2 looked odd"},
        "B01-W1": {"mass_initial_g": 30.0, "mass_final_g": 29.99, "operator": "AB"},
        "B02-R2": {"mass_initial_g": 26.5, "coverage_before_pct": 60.0, "length_mm": 50.0,
                   "area_cm2": 25.5, "notes": "-pitted edge"},
    }


def _csv_grid(path: Path) -> list[list[str]]:
    return list(csv.reader(io.StringIO(path.read_text(encoding="utf-8-sig"), newline="")))


def name_row(grid: list[list[str]]) -> int:
    """Index of the machine-name row (below the stamp, the caution line and the headings)."""
    return next(i for i, r in enumerate(grid) if "coupon" in r)


def _write_grid(path: Path, grid: list[list[str]], *, delimiter: str = ",",
                encoding: str = "utf-8-sig") -> Path:
    buf = io.StringIO()
    csv.writer(buf, delimiter=delimiter, lineterminator="\n").writerows(grid)
    path.write_bytes(buf.getvalue().encode(encoding))
    return path


def fill_csv(src: Path, dst: Path, readings: dict[str, dict[str, Any]], *,
             delimiter: str = ",", encoding: str = "utf-8-sig",
             edit: Callable[[list[list[str]]], None] | None = None) -> Path:
    """Fill an exported CSV sheet with ``readings`` (coupon -> field -> value)."""
    from trialkit.records.sheets.textsafe import escape_text

    grid = _csv_grid(src)
    at = name_row(grid)
    names = grid[at]
    for row in grid[at + 1:]:
        for name, value in readings.get(row[names.index("coupon")], {}).items():
            row[names.index(name)] = (escape_text(value) if isinstance(value, str)
                                      else repr(value))
    if edit:
        edit(grid)
    return _write_grid(dst, grid, delimiter=delimiter, encoding=encoding)


def fill_xlsx(src: Path, dst: Path, readings: dict[str, dict[str, Any]], *,
              edit: Callable[[Any], None] | None = None) -> Path:
    """Fill an exported workbook with ``readings``; ``edit(workbook)`` may spoil it."""
    from openpyxl import load_workbook

    from trialkit.records.sheets.export_xlsx import FIRST_DATA_ROW, NAME_ROW, put_text

    wb = load_workbook(src)
    ws = wb["Coupon readings"]
    names = [c.value for c in ws[NAME_ROW]]
    for r in range(FIRST_DATA_ROW, ws.max_row + 1):
        coupon = ws.cell(r, names.index("coupon") + 1).value
        for name, value in readings.get(coupon, {}).items():
            cell = ws.cell(r, names.index(name) + 1)
            if isinstance(value, str) and name not in ("immersion_start", "immersion_end"):
                put_text(cell, value)
            elif isinstance(value, str):
                cell.value = pd.Timestamp(value).to_pydatetime()
            else:
                cell.value = value
    if edit:
        edit(wb)
    wb.save(dst)
    return dst


def xlsx_col(wb: Any, name: str, tab: str = "Coupon readings") -> int:
    """1-based column of machine name ``name``."""
    from trialkit.records.sheets.export_xlsx import NAME_ROW

    return [c.value for c in wb[tab][NAME_ROW]].index(name) + 1


def xlsx_row(wb: Any, coupon: str, tab: str = "Coupon readings") -> int:
    """Spreadsheet row of ``coupon``."""
    ws = wb[tab]
    col = xlsx_col(wb, "coupon", tab)
    for r in range(1, ws.max_row + 1):
        if ws.cell(r, col).value == coupon:
            return r
    raise KeyError(coupon)


def set_saved_formula(path: Path, cell_ref: str, formula: str, saved: str) -> None:
    """Give the formula cell ``cell_ref`` a saved value, as a spreadsheet program would."""
    with zipfile.ZipFile(path) as z:
        items = {n: z.read(n) for n in z.namelist()}
    name = "xl/worksheets/sheet1.xml"
    xml = items[name].decode("utf-8")
    pattern = re.compile(rf'(<c r="{cell_ref}"[^>]*>)<f>{re.escape(formula)}</f>(<v\s*/>|<v></v>)?')
    xml, n = pattern.subn(rf"\1<f>{formula}</f><v>{saved}</v>", xml)
    if n != 1:
        raise RuntimeError(f"formula cell {cell_ref} not found in {name}")
    items[name] = xml.encode("utf-8")
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as z:
        for n_, data in items.items():
            z.writestr(n_, data)


def _codes(check: str | list[str]) -> list[str]:
    return [check] if isinstance(check, str) else list(check)


# -- the corpus --------------------------------------------------------------------------
def _csv_rows(grid: list[list[str]], coupon: str) -> list[str]:
    at = name_row(grid)
    names = grid[at]
    return next(r for r in grid[at + 1:] if r[names.index("coupon")] == coupon)


def _set(grid: list[list[str]], coupon: str, name: str, value: str) -> None:
    _csv_rows(grid, coupon)[grid[name_row(grid)].index(name)] = value


def build_corpus(folder: Path, plan: Any) -> dict[str, tuple[Path, list[str]]]:
    """Write every malformed sheet into ``folder``; return name -> (path, expected checks).

    ``plan`` is the test plan (:func:`make_test_plan`); sheets are exported from it first.
    """
    from trialkit.records.sheets.export_csv import export_csv
    from trialkit.records.sheets.export_xlsx import export_xlsx

    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    base_csv = export_csv(plan, folder / "_blank.csv")
    base_xlsx = export_xlsx(plan, folder / "_blank.xlsx")
    good = good_readings()
    out: dict[str, tuple[Path, list[str]]] = {}

    def csv_case(name: str, check: str, readings=None, **kw: Any) -> None:
        out[name] = (fill_csv(base_csv, folder / f"{name}.csv",
                              good if readings is None else readings, **kw), _codes(check))

    def xlsx_case(name: str, check: str, edit, readings=None) -> None:
        out[name] = (fill_xlsx(base_xlsx, folder / f"{name}.xlsx",
                               good if readings is None else readings, edit=edit), _codes(check))

    (folder / "empty_file.csv").write_bytes(b"")
    out["empty_file"] = (folder / "empty_file.csv", ["empty_file"])
    csv_case("latin1_encoding", "wrong_encoding",
             {"B01-R1": {"notes": "rouille enlevée"}}, encoding="latin-1")
    csv_case("utf16_encoding", "wrong_encoding", encoding="utf-16")
    csv_case("wrong_type_mass", "wrong_type", {"B01-R1": {"mass_initial_g": "25.1 g"}})
    csv_case("bad_datetime", "wrong_type", {"B01-R1": {"immersion_start": "yesterday",
                                                        "mass_initial_g": 20.0}})
    csv_case("decimal_comma_in_comma_file", "wrong_type",
             {"B01-R1": {"mass_initial_g": "25,1"}})
    csv_case("ph_out_of_range", "out_of_range", {"B01-R1": {"mass_initial_g": 20.0,
                                                            "bath_ph": 15.2}})
    csv_case("coverage_over_100", "coverage_out_of_range",
             {"B01-R1": {"mass_initial_g": 20.0, "coverage_before_pct": 120.0}})
    csv_case("duplicate_coupon", "duplicate_coupon",
             edit=lambda g: g.append(list(_csv_rows(g, "B01-R1"))))
    csv_case("unknown_coupon", "unknown_coupon",
             edit=lambda g: _set(g, "B02-R2", "coupon", "B09-R2"))
    csv_case("missing_coupon_id", "missing_coupon",
             edit=lambda g: _set(g, "B02-R2", "coupon", ""))
    csv_case("missing_required", "missing_required",
             {"B01-R1": {"mass_final_g": 24.0, "operator": "AB"}})
    csv_case("mass_gain", "mass_gain", {"B01-R1": {"mass_initial_g": 25.0,
                                                   "mass_final_g": 25.4}})
    csv_case("no_stamp_line", "no_metadata", edit=lambda g: g.pop(0))
    csv_case("unknown_column", "unknown_column",
             edit=lambda g: [r.append("weight_g" if i == name_row(g) else "")
                             for i, r in enumerate(g)])

    def swap_names(g: list[list[str]]) -> None:  # columns transposed under their headings
        at = name_row(g)
        names = g[at]
        i, j = names.index("mass_initial_g"), names.index("mass_final_g")
        for r in g[at:]:  # names and values swapped, headings not: names and words differ
            r[i], r[j] = r[j], r[i]

    csv_case("transposed_columns", ["heading_mismatch", "heading_mismatch"], edit=swap_names)

    def kg_heading(wb: Any) -> None:
        ws = wb["Coupon readings"]
        ws.cell(3, xlsx_col(wb, "mass_initial_g")).value = "Mass before immersion (kg)"

    xlsx_case("unit_mismatch_heading", "unit_mismatch", kg_heading)

    def end_first(wb: Any) -> None:
        ws = wb["Coupon readings"]
        r = xlsx_row(wb, "B01-R1")
        ws.cell(r, xlsx_col(wb, "immersion_end")).value = pd.Timestamp(
            "2026-11-30 08:00").to_pydatetime()

    xlsx_case("end_before_start", "end_before_start", end_first)

    def extra_tab(wb: Any) -> None:
        ws = wb.create_sheet("My notes")
        ws["A1"] = "B01-R1 weighed twice"

    xlsx_case("extra_sheet", "extra_sheet", extra_tab)

    def merge(wb: Any) -> None:
        ws = wb["Coupon readings"]
        ws.protection.sheet = False
        c = xlsx_col(wb, "operator")
        r = xlsx_row(wb, "B01-R1")
        ws.merge_cells(start_row=r, start_column=c, end_row=r + 2, end_column=c)

    xlsx_case("merged_cells", "merged_cells", merge)

    def edit_plan(wb: Any) -> None:
        ws = wb["Coupon readings"]
        ws.cell(xlsx_row(wb, "B01-R1"), xlsx_col(wb, "chelator")).value = 6.0

    xlsx_case("edited_plan_column", "plan_column_edited", edit_plan)

    def formula(wb: Any) -> None:
        ws = wb["Coupon readings"]
        ws.cell(xlsx_row(wb, "B01-W1"), xlsx_col(wb, "mass_final_g")).value = "=20+9.5"

    xlsx_case("formula_without_saved_value", "formula_not_saved", formula)
    xlsx_case("unknown_rating", "unknown_choice", None,
              {"B01-R1": {"mass_initial_g": 20.0, "surface_finish": "shiny"}})
    xlsx_case("missing_tab", "missing_tab", lambda wb: wb.remove(wb["Coupon readings"]))

    def no_meta(wb: Any) -> None:
        wb.remove(wb["trialkit-metadata"])

    xlsx_case("metadata_tab_deleted", "no_metadata", no_meta)

    (folder / "not_a_workbook.xlsx").write_text("run,bath\n1,B01\n", encoding="utf-8")
    out["not_a_workbook"] = (folder / "not_a_workbook.xlsx", ["not_a_workbook"])
    (folder / "spreadsheet.ods").write_bytes(b"not read")
    out["unknown_format"] = (folder / "spreadsheet.ods", ["unknown_format"])

    # a sheet exported from another plan of the same trial folder (another seed)
    import tempfile

    with tempfile.TemporaryDirectory() as tmp:
        other = make_test_plan(Path(tmp), seed=777)
        other_blank = export_csv(other, Path(tmp) / "other.csv")
        out["other_plan"] = (fill_csv(other_blank, folder / "other_plan.csv", good),
                             ["wrong_plan"])
    base_csv.unlink()
    base_xlsx.unlink()
    return out


if __name__ == "__main__":  # pragma: no cover - manual use
    target = Path(sys.argv[1] if len(sys.argv) > 1 else "corpus")
    plan = make_test_plan(target / "trial")
    for _name, (path, check) in build_corpus(target, plan).items():
        print(f"{','.join(check):40s} {path}")
