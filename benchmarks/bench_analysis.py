"""Benchmark: bootstrap interval of a quadratic model's optimum, batched vs a refit loop.

30 invented baths (two factors, second-order model), 2,000 residual-bootstrap resamples.
Baseline (named, measured in the same run): refitting every resample with statsmodels
OLS in a Python loop and solving its stationary point.  Ours: all resamples from one QR
in batched linear algebra (trialkit.analysis.surface.bootstrap_optimum).  Prints the
times and the ratio; the aim is at least 20x (the median of three paired repeats; exit
code 1 when it is missed by more than the 20 % noise allowance of ``benchmarks/aims.py``).

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

from trialkit.analysis.model import fit_model
from trialkit.analysis.surface import bootstrap_optimum, quadratic_operators
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


def statsmodels_loop(fit, idx: np.ndarray) -> np.ndarray:
    X = fit.mm.X
    _, Lb, LB = quadratic_operators(fit)
    out = np.empty((idx.shape[1], Lb.shape[0]))
    for j in range(idx.shape[1]):
        ystar = fit.ls.fitted + fit.ls.resid[idx[:, j]]
        beta = sm.OLS(ystar, X).fit().params
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
    rng = np.random.default_rng(SEED)
    idx = rng.integers(0, fit.n, size=(fit.n, N_BOOT))

    bootstrap_optimum(fit, ops, region, 1.0, 50, SEED)  # warm up
    ours_times, ref_times = [], []
    for _ in range(3):
        t0 = time.perf_counter()
        ours = bootstrap_optimum(fit, ops, region, 1.0, N_BOOT, SEED)
        ours_times.append(time.perf_counter() - t0)
        t0 = time.perf_counter()
        ref = statsmodels_loop(fit, idx)
        ref_times.append(time.perf_counter() - t0)
    t_ours, t_ref = statistics.median(ours_times), statistics.median(ref_times)
    lo, hi = np.quantile(ref, [0.025, 0.975], axis=0)
    print(f"bootstrap of the optimum: {fit.n} baths, quadratic in 2 factors, {N_BOOT} resamples")
    print(f"  batched (trialkit)          {t_ours * 1e3:9.1f} ms")
    print(f"  statsmodels OLS refit loop  {t_ref * 1e3:9.1f} ms")
    print("  intervals (natural units), batched vs loop:")
    for i, f in enumerate(fs):
        row = ours.iloc[i]
        print(f"    {f.name:9s} [{row.low:.3f}, {row.high:.3f}]  vs  "
              f"[{f.to_natural(lo[i]):.3f}, {f.to_natural(hi[i]):.3f}]")
    card = Scorecard()
    card.add("fit + ANOVA at 10,000 rows", "statsmodels ols + anova_lm (type 2)",
             scale_ratios(), 3.0)
    card.add("bootstrap of the optimum", "a statsmodels OLS refit loop",
             [r / o for r, o in zip(ref_times, ours_times, strict=True)], 20.0,
             at_most=False)
    return card.finish()


if __name__ == "__main__":
    sys.exit(main())
