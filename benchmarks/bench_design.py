"""Benchmarks of design search, evaluation and start-up, each against a baseline run here.

Run from the repository root::

    python benchmarks/bench_design.py            # everything (a few minutes)
    python benchmarks/bench_design.py --quick    # fewer pyDOE3 methods, 27 runs only
    python benchmarks/bench_design.py --only startup

Each line prints a figure and its ratio against a named baseline measured in the same run:

1. optimal design, 5 factors, full quadratic model (21 coefficients), 27 and 42 runs:
   trialkit's coordinate exchange vs every method of pyDOE3's ``optimal_design`` on the
   same 5-level candidate grid (3125 points), in grid order and shuffled (pyDOE3's greedy
   start takes candidates in grid order while every determinant is still zero, so grid
   order is unfair to it; both are reported).  D-efficiency on the same model matrix.
2. power by simulation, 10,000 simulated trials of a 30-bath plan: batched least squares
   vs a loop of statsmodels OLS fits (capped, then scaled to 10,000).
3. start-up (issue 18, item 2): ``trialkit plan`` on a small two-level trial (a 2^3
   factorial, 16 baths) against ``python -c "import pandas"``, aim at most 1.5x; and
   ``trialkit --help`` against ``python -c pass``, aim at most 5x.  Each the median of
   ``--repeats`` ratios of runs made side by side.
4. the whole demo (``trialkit demo``), wall time and peak memory, against importing
   pandas, scipy.stats and matplotlib.pyplot (aim: at most 5x).

Sections 3 and 4 are aims (``benchmarks/aims.py``): one line each with the median ratio,
its target and the verdict, a summary line at the end, and exit code 1 when an aim is
missed by more than the noise allowance (``--tolerance``, default 20 %).
"""

from __future__ import annotations

import argparse
import importlib.util
import multiprocessing as mp
import os
import resource
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

REPO = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(REPO))
sys.path.insert(0, str(REPO / "benchmarks"))

from aims import TOLERANCE, Scorecard, paired_ratios  # noqa: E402

from trialkit.planning import power as pw  # noqa: E402
from trialkit.planning.designs.optimal import optimal_design  # noqa: E402
from trialkit.trial.factors import Factor  # noqa: E402

PYDOE_METHODS = ("sequential", "simple_exchange", "fedorov", "modified_fedorov", "detmax")


def line(what: str, figure: str, ratio: str) -> None:
    print(f"{what:<58} {figure:<28} {ratio}", flush=True)


# -- 1. optimal designs ---------------------------------------------------------------
def _pydoe_worker(method, runs, shuffle, queue):
    from pyDOE3.doe_optimal import generate_candidate_set
    from pyDOE3.doe_optimal import optimal_design as pydoe_optimal

    cands = generate_candidate_set(n_factors=5, n_levels=5)
    if shuffle:
        cands = cands[np.random.default_rng(2026).permutation(len(cands))]
    t, c = time.perf_counter(), time.process_time()
    design, _ = pydoe_optimal(candidates=cands, n_points=runs, degree=2, criterion="D",
                              method=method)
    queue.put((np.asarray(design), time.perf_counter() - t, time.process_time() - c))


def _run_pydoe(method, runs, shuffle, timeout):
    queue = mp.Queue()
    proc = mp.Process(target=_pydoe_worker, args=(method, runs, shuffle, queue))
    proc.start()
    proc.join(timeout)
    if proc.is_alive():
        proc.terminate()
        proc.join()
        return None, timeout, timeout
    return queue.get()


def bench_optimal(sizes, methods, timeout, tries):
    factors = tuple(Factor.continuous(n, -1, 1) for n in "abcde")
    dm = pw.DesignModel.from_spec("quadratic", factors)
    for runs in sizes:
        t, c = time.perf_counter(), time.process_time()
        res = optimal_design(factors, runs, model="quadratic", tries=tries, grid=5, seed=1)
        ours_t, ours_c = time.perf_counter() - t, time.process_time() - c
        ours_d = res.d_efficiency
        line(f"optimal 5f quadratic {runs} runs: trialkit ({tries} tries)",
             f"D {ours_d:6.2f} %  {ours_t:6.2f} s", f"(CPU {ours_c:.2f} s)")
        best = None
        for shuffle in (False, True):
            for method in methods:
                design, secs, cpu = _run_pydoe(method, runs, shuffle, timeout)
                order = "shuffled" if shuffle else "grid order"
                label = f"  pyDOE3 {method} ({order})"
                if design is None:
                    line(label, f"timed out after {secs:.0f} s", "")
                    continue
                d = pw.d_efficiency(dm.expand(design))
                note = "SINGULAR" if d == 0 else f"D {d:6.2f} %"
                line(label, f"{note}  {secs:6.2f} s",
                     f"trialkit D ratio {ours_d / d:.3f}, {secs / ours_t:.1f}x wall, "
                     f"{cpu / ours_c:.1f}x CPU" if d > 0 else f"(CPU {cpu:.2f} s)")
                if d > 0 and (best is None or d > best[0]):
                    best = (d, secs, cpu, f"{method}, {order}")
        if best:
            line(f"  baseline: pyDOE3 best ({best[3]})", f"D {best[0]:6.2f} %  "
                 f"{best[1]:6.2f} s", f"ratio D {ours_d / best[0]:.3f}, "
                 f"{best[1] / ours_t:.1f}x faster wall, {best[2] / ours_c:.1f}x CPU")


# -- 2. power by simulation -------------------------------------------------------------
TRIAL_30 = """
[trial]
title = "30-bath benchmark plan (invented)"
seed = 30
[[factor]]
name = "chelator"
unit = "% w/v"
low = 2
high = 10
[[factor]]
name = "ph"
low = 5.5
high = 7.5
[[factor]]
name = "temperature"
unit = "degC"
low = 20
high = 40
[design]
kind = "full-factorial"
[layout]
replicates = 3
blocks = 3
center_points = 2
"""


def bench_power(n_sim=10_000, loop_cap=300):
    import statsmodels.api as sm

    from trialkit.planning.evaluation import evaluate_plan
    from trialkit.planning.plan import make_plan
    from trialkit.trial.file import parse_trial_text

    plan = make_plan(parse_trial_text(TRIAL_30))
    ev = evaluate_plan(plan, model="interactions", sd=1.0, effects=1.0)
    X = ev.model_matrix()
    sl = ev._model.term_columns["chelator"]
    beta = np.zeros(X.shape[1])
    beta[sl] = 0.5
    analytic = ev.power_of("chelator")
    t = time.perf_counter()
    sim, se = ev.simulated_power("chelator", n_sim=n_sim, seed=1)
    batched = time.perf_counter() - t
    # baseline: a loop of statsmodels fits, capped and scaled
    rng = np.random.default_rng(2)
    R = np.zeros((1, X.shape[1]))
    R[0, sl.start] = 1
    hits = 0
    t = time.perf_counter()
    for _ in range(loop_cap):
        y = X @ beta + rng.standard_normal(len(X))
        hits += sm.OLS(y, X).fit().f_test(R).pvalue < 0.05
    loop = (time.perf_counter() - t) * n_sim / loop_cap
    loop_p = hits / loop_cap
    loop_se = np.sqrt(loop_p * (1 - loop_p) / loop_cap)
    line(f"power, {len(X)}-bath plan, term chelator: analytic", f"{analytic:.4f}", "")
    line(f"  batched simulation, {n_sim} trials", f"{sim:.4f} +- {se:.4f}  {batched:.3f} s",
         f"|sim - analytic| = {abs(sim - analytic) / se:.2f} SE")
    line(f"  baseline: statsmodels OLS loop ({loop_cap} fits, scaled)",
         f"{loop_p:.4f} +- {loop_se:.4f}  {loop:.2f} s",
         f"batched {loop / batched:.0f}x faster; |loop - analytic| = "
         f"{abs(loop_p - analytic) / loop_se:.2f} SE")


# -- 3. start-up ----------------------------------------------------------------------
#: A small two-level trial: 2^3 factorial, two replicates, coupons and one response.
TRIAL_SMALL = """
[trial]
title = "Start-up benchmark: small two-level trial (invented)"
seed = 18
[[factor]]
name = "chelator"
unit = "% w/v"
low = 2
high = 10
[[factor]]
name = "ph"
unit = "pH"
low = 5.5
high = 7.5
[[factor]]
name = "temperature"
unit = "degC"
low = 20
high = 40
[design]
kind = "full-factorial"
[layout]
replicates = 2
coupons_per_bath = 2
witness_coupons = 1
[coupons]
shape = "plate"
length = 50
width = 25
thickness = 2
metal = "carbon steel"
[[response]]
name = "removal"
unit = "%"
aim = "higher"
measure = "removal_pct"
"""


def _env(**extra: str) -> dict[str, str]:
    return dict(os.environ, PYTHONPATH=str(REPO), **extra)


def bench_startup(card: Scorecard, repeats: int) -> None:
    py = sys.executable
    with tempfile.TemporaryDirectory() as tmp:
        (Path(tmp) / "trial.toml").write_text(TRIAL_SMALL, encoding="utf-8")
        ratios, ours, base = paired_ratios([py, "-m", "trialkit", "plan", tmp],
                                           [py, "-c", "import pandas"], repeats, env=_env())
    line("trialkit plan, small two-level trial (16 baths)", f"{ours:.3f} s",
         f"python -c 'import pandas' {base:.3f} s")
    card.add("plan start-up", "python -c 'import pandas'", ratios, 1.5)
    ratios, ours, base = paired_ratios([py, "-m", "trialkit", "--help"], [py, "-c", "pass"],
                                       repeats, env=_env())
    line("trialkit --help cold start", f"{ours:.3f} s", f"python -c pass {base:.3f} s")
    card.add("--help start-up", "python -c pass", ratios, 5.0)


# -- 4. demo ----------------------------------------------------------------------------
def bench_demo(card: Scorecard, repeats: int) -> None:
    if importlib.util.find_spec("trialkit.commands.demo") is None:
        print("demo: skipped, trialkit demo does not exist yet in this tree", flush=True)
        return
    env = _env(MPLBACKEND="Agg")
    # the baseline of issue 18: importing what the loop needs, and nothing else
    base_cmd = [sys.executable, "-c", "import pandas, scipy.stats, matplotlib.pyplot"]
    with tempfile.TemporaryDirectory() as tmp:
        # each run writes a new trialkit-demo-<time> folder into tmp
        ratios, wall, base = paired_ratios([sys.executable, "-m", "trialkit", "demo"],
                                           base_cmd, repeats, env=env, cwd=tmp)
    peak = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss
    line("trialkit demo, whole loop", f"{wall:.2f} s, peak {peak / 1024:.0f} MB",
         f"import pandas, scipy.stats, matplotlib.pyplot {base:.2f} s")
    card.add("demo", "python -c 'import pandas, scipy.stats, matplotlib.pyplot'", ratios,
             5.0)


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="27 runs, two pyDOE3 methods")
    ap.add_argument("--timeout", type=float, default=120.0,
                    help="seconds allowed to each pyDOE3 call (default 120)")
    ap.add_argument("--tries", type=int, default=10, help="trialkit random starting designs")
    ap.add_argument("--only", choices=("optimal", "power", "startup", "demo"),
                    action="append", help="run only these benchmarks (repeatable)")
    ap.add_argument("--repeats", type=int, default=7,
                    help="paired repeats of each start-up aim (default 7; the demo takes "
                         "half as many, at least 1)")
    ap.add_argument("--tolerance", type=float, default=TOLERANCE,
                    help="noise allowance: an aim fails when its median ratio is beyond "
                         "the target by more than this fraction (default 0.2)")
    args = ap.parse_args(argv)
    card = Scorecard(tolerance=args.tolerance)
    only = set(args.only or ("optimal", "power", "startup", "demo"))
    sizes = (27,) if args.quick else (27, 42)
    methods = ("sequential", "fedorov") if args.quick else PYDOE_METHODS
    print(f"{'benchmark':<58} {'figure':<28} ratio against the baseline")
    if "optimal" in only:
        bench_optimal(sizes, methods, args.timeout, args.tries)
    if "power" in only:
        bench_power()
    if "startup" in only:
        bench_startup(card, args.repeats)
    if "demo" in only:
        bench_demo(card, max(1, args.repeats // 2))
    return card.finish()


if __name__ == "__main__":
    sys.exit(main())
