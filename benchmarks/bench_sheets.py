"""Benchmark: recording sheets of 10,000 coupons, exported and read back in (issue 18).

An invented trial (three two-level factors, 25 replicates, 50 coupons a bath: 10,000
coupons) gets its coupon sheet exported as XLSX and as CSV; the sheets are filled by
program with invented readings (``trialkit.demo.fill``) and ingested into a fresh record
log with every check on.  Three aims, each the median of paired repeats (ours, then the
baseline, side by side) through ``benchmarks/aims.py``:

- XLSX ingest (``ingest_sheet``: read, check every cell, store, chain) at most 2x the
  named baseline, a plain openpyxl read-only load of the same filled workbook
  (``load_workbook(read_only=True, data_only=True)`` and every row of every tab read);
- XLSX export (``export_xlsx``) at most 2x the same kind of load of the workbook it wrote;
- CSV ingest at most 3x the named baseline, ``pandas.read_csv`` of the same filled file
  plus an SQLite insert of the same values (one row per value, one transaction, on disk).

``--profile xlsx|csv|export`` runs one of them once under cProfile and prints the top 25
functions by cumulative time instead.

Run: PYTHONPATH=. python benchmarks/bench_sheets.py [--repeats 3] [--coupons 10000]
"""

from __future__ import annotations

import argparse
import sqlite3
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import pandas as pd

sys.path.insert(0, str(Path(__file__).resolve().parent))
from aims import Scorecard  # noqa: E402

SEED = 20261203
#: The entry columns of the benchmark's coupon sheet (the baseline stores these).
ENTRY_NAMES = ("length_mm", "width_mm", "thickness_mm", "area_cm2", "mass_initial_g",
               "mass_final_g", "coverage_before_pct", "coverage_after_pct",
               "immersion_start", "immersion_end", "bath_ph", "bath_temperature_c",
               "operator", "notes")

TRIAL = """
[trial]
title = "sheet benchmark (invented example)"
seed = 7
[[factor]]
name = "chelator"
unit = "% w/v"
low = 2.0
high = 6.0
[[factor]]
name = "ph"
unit = "pH"
low = 6.0
high = 7.5
[[factor]]
name = "surfactant"
levels = ["none", "added"]
[design]
kind = "full-factorial"
[layout]
replicates = {replicates}
coupons_per_bath = {per_bath}
[coupons]
shape = "plate"
length = 50
width = 25
thickness = 2
[sheet]
required = ["mass_initial_g"]
"""


def invented_readings(coupons: pd.Series, rng: np.random.Generator) -> pd.DataFrame:
    """Plausible invented readings for every coupon (every entry field filled)."""
    n = len(coupons)
    start = pd.Timestamp("2026-11-02 09:00") + pd.to_timedelta(np.arange(n) % 500, "min")
    mass0 = np.round(rng.normal(19.5, 0.4, n), 4)
    return pd.DataFrame({
        "coupon": coupons.to_numpy(),
        "length_mm": np.round(rng.normal(50.0, 0.05, n), 2),
        "width_mm": np.round(rng.normal(25.0, 0.05, n), 2),
        "thickness_mm": np.round(rng.normal(2.0, 0.05, n), 2),
        "area_cm2": np.round(rng.normal(27.9, 0.1, n), 2),
        "mass_initial_g": mass0,
        "mass_final_g": np.round(mass0 - rng.uniform(0.1, 0.5, n), 4),
        "coverage_before_pct": rng.integers(50, 100, n).astype(float),
        "coverage_after_pct": rng.integers(0, 20, n).astype(float),
        "immersion_start": start.strftime("%Y-%m-%dT%H:%M"),
        "immersion_end": (start + pd.Timedelta("72h")).strftime("%Y-%m-%dT%H:%M"),
        "bath_ph": np.round(rng.normal(7.0, 0.1, n), 2),
        "bath_temperature_c": np.round(rng.normal(22.0, 0.3, n), 1),
        "operator": "AK",
        "notes": np.where(np.arange(n) % 97 == 0, "edge pitted", ""),
    })


def setup(folder: Path, coupons: int):
    """The plan of the benchmark trial and its filled XLSX and CSV coupon sheets."""
    from trialkit.demo.fill import fill_sheet
    from trialkit.planning.plan import load_plan
    from trialkit.records.sheets.export_csv import export_csv
    from trialkit.records.sheets.export_xlsx import export_xlsx

    per_bath = 50
    replicates = max(1, coupons // (8 * per_bath))
    (folder / "trial.toml").write_text(TRIAL.format(replicates=replicates, per_bath=per_bath),
                                       encoding="utf-8")
    plan = load_plan(folder / "trial.toml")
    readings = invented_readings(plan.table["coupon"], np.random.default_rng(SEED))
    export_xlsx(plan, folder / "blank.xlsx")
    export_csv(plan, folder / "blank.csv")
    fill_sheet(folder / "blank.xlsx", readings, folder / "filled.xlsx")
    fill_sheet(folder / "blank.csv", readings, folder / "filled.csv")
    return plan


def openpyxl_load(path: Path) -> int:
    """Baseline: a plain openpyxl read-only load, every cell of every tab read."""
    from openpyxl import load_workbook

    wb = load_workbook(path, read_only=True, data_only=True)
    n = sum(len(row) for ws in wb.worksheets for row in ws.iter_rows(values_only=True))
    wb.close()
    return n


def pandas_sqlite(path: Path, db: Path) -> int:
    """Baseline: pandas reads the CSV; SQLite stores one row per value, one transaction."""
    table = pd.read_csv(path, skiprows=[0, 1, 2], encoding="utf-8-sig")
    entries = [c for c in table.columns if c in ENTRY_NAMES]
    long = table.melt(id_vars=["coupon"], value_vars=entries).dropna()
    con = sqlite3.connect(db)
    con.execute("CREATE TABLE readings (id INTEGER PRIMARY KEY, coupon TEXT, field TEXT, "
                "value_num REAL, value_text TEXT)")
    with con:
        con.executemany("INSERT INTO readings (coupon, field, value_num, value_text) "
                        "VALUES (?, ?, ?, ?)",
                        [(c, f, v if isinstance(v, float) else None,
                          None if isinstance(v, float) else str(v))
                         for c, f, v in long.itertuples(index=False)])
    con.close()
    return len(long)


def ingest(path: Path, plan, db: Path) -> int:
    """Ours: the checked ingest into a fresh record log."""
    from trialkit.records.log import RecordLog
    from trialkit.records.sheets.ingest import ingest_sheet

    report = ingest_sheet(path, plan, log=RecordLog(db))
    if report.status != "accepted":
        raise RuntimeError(f"benchmark sheet was not accepted: {report!r}"[:2000])
    return len(report.accepted)


def export(plan, path: Path) -> None:
    from trialkit.records.sheets.export_xlsx import export_xlsx

    export_xlsx(plan, path)


def timed(fn, *args) -> float:
    t = time.perf_counter()
    fn(*args)
    return time.perf_counter() - t


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeats", type=int, default=3)
    parser.add_argument("--coupons", type=int, default=10_000)
    parser.add_argument("--profile", choices=("xlsx", "csv", "export"))
    args = parser.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        plan = setup(folder, args.coupons)
        n = len(plan.table)
        runs = iter(range(10**6))

        def db() -> Path:
            return folder / f"log-{next(runs)}.sqlite"

        jobs = {"xlsx": (ingest, folder / "filled.xlsx", plan),
                "csv": (ingest, folder / "filled.csv", plan),
                "export": (export, plan, folder / "out.xlsx")}
        if args.profile:
            import cProfile
            import pstats

            fn, *rest = jobs[args.profile]
            extra = [db()] if fn is ingest else []
            prof = cProfile.Profile()
            prof.runcall(fn, *rest, *extra)
            pstats.Stats(prof).sort_stats("cumulative").print_stats(25)
            return 0
        stored = ingest(folder / "filled.xlsx", plan, db())  # warm up (imports, caches)
        ingest(folder / "filled.csv", plan, db())
        export(plan, folder / "out.xlsx")
        openpyxl_load(folder / "filled.xlsx")
        times: dict[str, list[float]] = {k: [] for k in
                                         ("xlsx", "load_filled", "export", "load_out",
                                          "csv", "pandas")}
        for _ in range(args.repeats):
            times["xlsx"].append(timed(ingest, folder / "filled.xlsx", plan, db()))
            times["load_filled"].append(timed(openpyxl_load, folder / "filled.xlsx"))
            times["export"].append(timed(export, plan, folder / "out.xlsx"))
            times["load_out"].append(timed(openpyxl_load, folder / "out.xlsx"))
            times["csv"].append(timed(ingest, folder / "filled.csv", plan, db()))
            times["pandas"].append(timed(pandas_sqlite, folder / "filled.csv", db()))
        print(f"{n:,} coupons, {stored:,} values stored per ingest; "
              f"median of {args.repeats} repeats:")
        for key, label in (("xlsx", "XLSX ingest (trialkit)"),
                           ("load_filled", "openpyxl read-only load, filled workbook"),
                           ("export", "XLSX export (trialkit)"),
                           ("load_out", "openpyxl read-only load, exported workbook"),
                           ("csv", "CSV ingest (trialkit)"),
                           ("pandas", "pandas read_csv + SQLite insert")):
            print(f"  {label:44s} {np.median(times[key]):7.2f} s")

        def ratios(a: str, b: str) -> list[float]:
            return [x / y for x, y in zip(times[a], times[b], strict=True)]

        card = Scorecard()
        card.add("XLSX ingest of 10,000 coupons", "an openpyxl read-only load of the same "
                 "workbook", ratios("xlsx", "load_filled"), 2.0)
        card.add("XLSX export of 10,000 coupons", "an openpyxl read-only load of the "
                 "exported workbook", ratios("export", "load_out"), 2.0)
        card.add("CSV ingest of 10,000 coupons", "pandas read_csv + SQLite insert",
                 ratios("csv", "pandas"), 3.0)
        return card.finish()


if __name__ == "__main__":
    sys.exit(main())
