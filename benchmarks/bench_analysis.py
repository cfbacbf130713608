"""Benchmark: the bootstrap of a quadratic model's best point, batched vs a refit loop.

30 invented baths (two factors, second-order model), 2,000 bootstrap resamples.  Aim
(at least 20x): the stationary points of every resample from one QR in batched linear
algebra (trialkit.analysis.surface.resample_stationary_points) against the named
baseline, refitting every resample with statsmodels OLS in a Python loop and solving its
stationary point, on the same resampled responses.  The full interval
(``bootstrap_optimum``: since issue 15 a bootstrap-calibrated joint region on a 61 x 61
grid, work the loop does not do) is timed and printed beside it, with no aim.  Median of
three paired repeats; exit code 1 when an aim is missed by more than the 20 % noise
allowance of ``benchmarks/aims.py``.

A second aim (issue 18, analysis at scale): fit + type 2 ANOVA (with lack of fit) of a
main-effects-and-interactions model on 10,000 invented rows within 3x statsmodels
``ols`` + ``anova_lm`` on the same model (the named baseline).

Run: PYTHONPATH=. python benchmarks/bench_analysis.py
"""

from __future__ import annotations

import statistics
import sys
import time
from pathlib import Path

import numpy as np
import pandas as pd
import statsmodels.api as sm

from trialkit.analysis.linear import bootstrap_responses
from trialkit.analysis.model import fit_model
from trialkit.analysis.surface import (
    bootstrap_optimum,
    quadratic_operators,
    resample_stationary_points,
)
from trialkit.trial.factors import Factor

sys.path.insert(0, str(Path(__file__).resolve().parent))
from aims import Scorecard  # noqa: E402

N_BOOT = 2000
SEED = 20261201


def data() -> tuple[pd.DataFrame, list[Factor]]:
    """Invented 30-bath trial around a maximum at 5 % chelator, pH 6.5."""
    rng = np.random.default_rng(SEED)
    c = rng.uniform(2, 10, 30)
    ph = rng.uniform(5.5, 7.5, 30)
    y = 80 - (c - 5) ** 2 - 12 * (ph - 6.5) ** 2 + rng.normal(0, 1.5, 30)
    fs = [Factor.continuous("chelator", 2, 10), Factor.continuous("ph", 5.5, 7.5)]
    return pd.DataFrame({"chelator": c, "ph": ph, "removal": y}), fs


def statsmodels_loop(fit, Ystar: np.ndarray) -> np.ndarray:
    X = fit.mm.X
    _, Lb, LB = quadratic_operators(fit)
    out = np.empty((Ystar.shape[1], Lb.shape[0]))
    for j in range(Ystar.shape[1]):
        beta = sm.OLS(Ystar[:, j], X).fit().params
        b, B = Lb @ beta, LB @ beta
        out[j] = np.linalg.solve(B, -b / 2)
    return out


def scale_ratios(rows: int = 10_000, repeats: int = 3) -> list[float]:
    """Ours over statsmodels, fit + type 2 ANOVA on ``rows`` invented baths."""
    import statsmodels.formula.api as smf

    rng = np.random.default_rng(SEED)
    fs = [Factor.continuous("chelator", 2, 10), Factor.continuous("ph", 5.5, 7.5),
          Factor.categorical("surfactant", ["none", "added"])]
    table = pd.DataFrame({"chelator": rng.choice([2.0, 6.0, 10.0], rows),
                          "ph": rng.choice([5.5, 6.5, 7.5], rows),
                          "surfactant": rng.choice(["none", "added"], rows)})
    table["removal"] = (40 + 3 * table.chelator - 4 * table.ph
                        + 5 * (table.surfactant == "added") + rng.normal(0, 3, rows))
    ratios = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        fit = fit_model(table, "removal", fs, "interactions", block=None)
        fit.anova(2)
        ours = time.perf_counter() - t0
        t0 = time.perf_counter()
        ref = smf.ols("removal ~ (chelator + ph + C(surfactant, Sum)) ** 2", table).fit()
        sm.stats.anova_lm(ref, typ=2)
        ratios.append(ours / (time.perf_counter() - t0))
    return ratios


def main() -> int:
    table, fs = data()
    fit = fit_model(table, "removal", fs, "quadratic", block=None)
    ops = quadratic_operators(fit)
    region = np.array([[-1.0, 1.0], [-1.0, 1.0]])
    Ystar = bootstrap_responses(fit.ls, N_BOOT, np.random.default_rng(SEED))

    resample_stationary_points(fit, ops, Ystar[:, :50])  # warm up
    ours_times, ref_times, full_times = [], [], []
    for _ in range(3):
        t0 = time.perf_counter()
        ours, _, _ = resample_stationary_points(fit, ops, Ystar)
        ours_times.append(time.perf_counter() - t0)
        t0 = time.perf_counter()
        ref = statsmodels_loop(fit, Ystar)
        ref_times.append(time.perf_counter() - t0)
        t0 = time.perf_counter()
        bootstrap_optimum(fit, ops, region, 1.0, N_BOOT, SEED)
        full_times.append(time.perf_counter() - t0)
    assert np.allclose(ours, ref, atol=1e-8), "batched and looped refits disagree"
    print(f"bootstrap of the best point: {fit.n} baths, quadratic in 2 factors, "
          f"{N_BOOT} resamples (same resamples both ways; points agree to 1e-8)")
    print(f"  batched stationary points (trialkit)  {statistics.median(ours_times) * 1e3:9.1f} ms")
    print(f"  statsmodels OLS refit loop             {statistics.median(ref_times) * 1e3:9.1f} ms")
    print(f"  full calibrated joint region (info)    {statistics.median(full_times) * 1e3:9.1f} ms")
    card = Scorecard()
    card.add("fit + ANOVA at 10,000 rows", "statsmodels ols + anova_lm (type 2)",
             scale_ratios(), 3.0)
    card.add("bootstrap stationary points", "a statsmodels OLS refit loop",
             [r / o for r, o in zip(ref_times, ours_times, strict=True)], 20.0,
             at_most=False)
    return card.finish()


if __name__ == "__main__":
    sys.exit(main())
