"""Benchmark: the mixing sheet of a 30-bath plan (invented example trial).

Baseline: one PHREEQC call for one bath (a single-solution ``RunString``), measured in
the same run.  Prints the wall time of the whole sheet, PHREEQC calls per bath and per
distinct recipe, and the ratio of the sheet's time to one call.

Aim (issue 18, item 5): the mixing sheet at most 2x the named baseline, a direct
bisection written here: for every distinct recipe with a target pH, the same bath
without adjuster and the same adjuster, the dose bisected on [0, max_dose] with one
PHREEQC solution per call (minteq.v4, no sit.dat cross-check) until the pH is within the
sheet's own tolerance (``dosing.PH_TOLERANCE``).  Median of paired repeats; exit code 1
when missed by more than the 20 % noise allowance of ``benchmarks/aims.py``.

Run:  PYTHONPATH=. python benchmarks/bench_chemistry.py
"""

from __future__ import annotations

import statistics
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))
from aims import Scorecard  # noqa: E402

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


def bisection_problems(sheet, catalogue) -> list[tuple[dict, dict, float, float]]:
    """(bath without adjuster, mol per g of adjuster, target pH, temperature) of every
    distinct recipe with a target pH, from the recipe's own lines."""
    out = []
    for r in sheet.recipes:
        if r.target_ph is None or r.dose is None:
            continue
        base: dict[str, float] = {}
        adjuster = None
        for line in r.lines:
            ing = catalogue.get(line.name)
            if line.basis.startswith("pH adjuster"):
                adjuster = ing
                continue
            for sp, n in ing.species.items():
                base[sp] = base.get(sp, 0.0) + n * line.moles / r.volume_l
        per_g = {sp: n * adjuster.mol_per_gram_supplied for sp, n in adjuster.species.items()}
        out.append((base, per_g, r.target_ph, r.temperature_c))
    return out


def direct_bisection(base: dict, per_g: dict, target: float, temperature: float) -> float:
    """Baseline: bisect the dose (g/L) on [0, max_dose], one PHREEQC solution per call."""
    from trialkit.chemistry.dosing import PH_TOLERANCE, _mix, max_dose
    from trialkit.chemistry.speciation import solve

    lo, hi = 0.0, max_dose(base, per_g)
    f_lo = solve([base], temperature)[0].ph - target
    for _ in range(100):
        mid = 0.5 * (lo + hi)
        f = solve([_mix(base, per_g, mid)], temperature)[0].ph - target
        if abs(f) < PH_TOLERANCE:
            return mid
        if (f > 0) == (f_lo > 0):
            lo, f_lo = mid, f
        else:
            hi = mid
    raise RuntimeError("bisection did not converge")


def main() -> int:
    from trialkit.chemistry import speciation
    from trialkit.chemistry.ingredient_table import default_catalogue
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

    section = plan.trial.sections["bath"]
    sheet = recipes_for_plan(plan)  # warm up
    problems = bisection_problems(sheet, section.catalogue or default_catalogue())
    runs, bisections = [], []
    for _ in range(5):
        c0 = speciation.call_count()
        t = time.perf_counter()
        sheet = recipes_for_plan(plan)
        runs.append((time.perf_counter() - t, speciation.call_count() - c0))
        t = time.perf_counter()
        for problem in problems:
            direct_bisection(*problem)
        bisections.append(time.perf_counter() - t)
    total, calls = min(runs)
    distinct = len(sheet.recipes)
    print(f"plan: {n_baths} baths, {distinct} distinct recipes "
          f"({len(problems)} with a target pH)")
    print(f"loading both databases: {load_s * 1000:.0f} ms (once per process)")
    print(f"baseline, one PHREEQC call for one bath: {one_call * 1000:.2f} ms")
    print(f"mixing sheet: {total * 1000:.0f} ms, {calls} PHREEQC calls "
          f"({calls / n_baths:.2f} per bath, {calls / distinct:.1f} per distinct recipe)")
    print(f"direct bisection of the {len(problems)} doses: "
          f"{statistics.median(bisections) * 1000:.0f} ms")
    print(f"ratio sheet time / one PHREEQC call: {total / one_call:.0f}")
    card = Scorecard()
    card.add("recipes of a 30-bath sheet", "a direct bisection of the same doses (one "
             "PHREEQC solution per step)",
             [r[0] / b for r, b in zip(runs, bisections, strict=True)], 2.0)
    return card.finish()


if __name__ == "__main__":
    sys.exit(main())
