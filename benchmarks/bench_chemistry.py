"""Benchmark: the mixing sheet of a 30-bath plan (invented example trial).

Baseline: one PHREEQC call for one bath (a single-solution ``RunString``), measured in
the same run.  Prints the wall time of the whole sheet, PHREEQC calls per bath and per
distinct recipe, and the ratio of the sheet's time to one call.

Run:  PYTHONPATH=. python benchmarks/bench_chemistry.py
"""

from __future__ import annotations

import statistics
import tempfile
import time
from pathlib import Path

TRIAL = """
[trial]
title = "benchmark (invented example)"
seed = 5
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
replicates = 3
center_points = 4
controls = ["untreated", "reference"]
coupons_per_bath = 2
witness_coupons = 1
[coupons]
shape = "plate"
length = 50
width = 25
thickness = 2
[bath]
adjust_with = "citric acid"
set_by = { target_ph = "ph" }
[[bath.ingredient]]
name = "tetrasodium EDTA"
factor = "chelator"
[[bath.ingredient]]
name = "non-ionic surfactant"
amount = "1 mL/L"
factor = "surfactant"
present_when = ["added"]
[bath.reference]
ingredients = [{ name = "citric acid", amount = "10 % w/v" }]
"""


def main() -> None:
    from trialkit.chemistry import speciation
    from trialkit.chemistry.mixing_sheet import recipes_for_plan
    from trialkit.planning.plan import load_plan

    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "trial.toml"
        path.write_text(TRIAL, encoding="utf-8")
        plan = load_plan(path)
    n_baths = len(plan.baths)

    t0 = time.perf_counter()
    speciation.engine(speciation.DEFAULT_DATABASE)
    speciation.engine(speciation.CROSS_CHECK_DATABASE)
    load_s = time.perf_counter() - t0

    one = {"Na": 4 * 0.1315, "Edta": 0.1315, "Citrate": 0.05}
    singles = []
    for _ in range(20):
        t = time.perf_counter()
        speciation.solve([one])
        singles.append(time.perf_counter() - t)
    one_call = statistics.median(singles)

    runs = []
    for _ in range(3):
        c0 = speciation.call_count()
        t = time.perf_counter()
        sheet = recipes_for_plan(plan)
        runs.append((time.perf_counter() - t, speciation.call_count() - c0))
    total, calls = min(runs)
    distinct = len(sheet.recipes)
    print(f"plan: {n_baths} baths, {distinct} distinct recipes")
    print(f"loading both databases: {load_s * 1000:.0f} ms (once per process)")
    print(f"baseline, one PHREEQC call for one bath: {one_call * 1000:.2f} ms")
    print(f"mixing sheet: {total * 1000:.0f} ms, {calls} PHREEQC calls "
          f"({calls / n_baths:.2f} per bath, {calls / distinct:.1f} per distinct recipe)")
    print(f"ratio sheet time / one PHREEQC call: {total / one_call:.0f}")


if __name__ == "__main__":
    main()
