"""Power of a split-plot plan: each two-level term on its own stratum, and the tank runs a
hard-to-change effect needs.

In a balanced two-level split plot with ``N`` baths in ``W`` tank runs (``m = N / W``
baths a run), the estimate of an effect (the change from the low to the high level) has
variance ``4 σ² / N`` for a term with an easy-to-change factor in it, and
``4 σ² (1 + m ρ) / N`` for a term of hard-to-change factors only, where ``σ²`` is the
bath-to-bath variance and ``ρ`` the ratio of the tank-to-tank variance to it (the
``[whole_plots] variance_ratio``).  The F test of a one-df term of effect ``Δ`` then has
noncentrality ``λ = Δ² / Var`` on its stratum's error degrees of freedom
(:func:`trialkit.planning.power.f_test_power`).  The whole-plot error df of ``k`` copies
of the plan, each in new blocks, is ``k (W − b) − p_w`` (``b`` blocks a copy, ``p_w`` the
hard-to-change terms of the full factorial in them); the subplot df is
``k (N − W) − p_s``.

Examples
--------
>>> power = whole_plot_term_power(effect=10, sd=4, baths=24, whole_plots=6,
...                               variance_ratio=1, error_df=2)
>>> round(power, 3)
0.341
"""

from __future__ import annotations

import itertools
import math
from dataclasses import dataclass

import pandas as pd

from trialkit.planning.power import f_test_power

MAX_COPIES = 50


def _variance_factor(hard: bool, baths_per_whole_plot: float, variance_ratio: float) -> float:
    return 1.0 + baths_per_whole_plot * variance_ratio if hard else 1.0


def whole_plot_term_power(*, effect: float, sd: float, baths: int, whole_plots: int,
                          variance_ratio: float, error_df: int, hard: bool = True,
                          alpha: float = 0.05) -> float:
    """Power of the F test of one two-level term of a split plot (module docstring)."""
    if error_df < 1 or not (sd > 0) or not math.isfinite(effect):
        return float("nan")
    factor = _variance_factor(hard, baths / whole_plots, variance_ratio)
    lam = effect ** 2 * baths / (4.0 * sd ** 2 * factor)
    return float(f_test_power(lam, 1, int(error_df), alpha))


@dataclass
class SplitPlotPower:
    """Power of every two-level term of a split-plot plan on its own stratum.

    Attributes
    ----------
    table : DataFrame
        ``term, stratum, error_df, effect, effect_se, power, copies_needed,
        tank_runs_needed`` (copies of the plan, each in new blocks, for the target power).
    variance_ratio, sd, alpha, target_power : float
    baths, whole_plots : int
    """

    table: pd.DataFrame
    variance_ratio: float
    sd: float
    alpha: float
    target_power: float
    baths: int
    whole_plots: int

    def to_dict(self) -> dict:
        rows = self.table.astype(object).where(self.table.notna(), None)
        return {"variance_ratio": self.variance_ratio, "sd": self.sd, "alpha": self.alpha,
                "target_power": self.target_power, "baths": self.baths,
                "whole_plots": self.whole_plots, "terms": rows.to_dict("records")}

    def __repr__(self) -> str:
        lines = [f"Split plot: {self.whole_plots} tank runs of "
                 f"{self.baths / self.whole_plots:g} baths; tank-to-tank variance "
                 f"{self.variance_ratio:g} × the bath-to-bath variance"]
        for r in self.table.itertuples():
            need = ("more than 50 copies" if r.copies_needed is None or
                    pd.isna(r.copies_needed) else f"{int(r.tank_runs_needed)} tank runs")
            lines.append(f"  {r.term:<24} {r.stratum:<10} error df {int(r.error_df):>3}  "
                         f"power {r.power:.2f}  for power {self.target_power:g}: {need}")
        return "\n".join(lines)


def split_plot_power(plan, settings, effects: dict, *, sd: float, alpha: float = 0.05,
                     target_power: float = 0.8) -> SplitPlotPower:
    """Power of the two-level terms (main effects and two-factor interactions) of a
    split-plot ``plan`` for the ``effects`` (term -> low-to-high change) that are given.

    ``settings`` is the trial's :class:`~trialkit.planning.whole_plots.WholePlotSettings`.
    """
    baths = plan.baths[plan.baths["point"].isin(["factorial", "design"])] \
        if "point" in plan.baths else plan.baths
    baths = baths.dropna(subset=["whole_plot"])
    names = [f.name for f in plan.trial.factors]
    baths = baths.dropna(subset=names)
    n, w = len(baths), int(baths["whole_plot"].nunique())
    b = int(baths["block"].nunique()) if "block" in baths else 1
    hard_set = set(settings.hard_to_change)
    hard = [x for x in names if x in hard_set]
    p_w = 2 ** len(hard) - 1           # every term among the hard-to-change factors
    p_s = 2 ** len(names) - 1 - p_w    # every term with an easy-to-change factor
    terms = [*names, *(":".join(t) for t in itertools.combinations(names, 2))]
    rows = []
    for term in terms:
        effect = effects.get(term)
        if effect is None or not math.isfinite(float(effect)):
            continue
        is_hard = all(x in hard_set for x in term.split(":"))
        m = n / w

        def df_of(k: int, is_hard=is_hard) -> int:
            return k * (w - b) - p_w if is_hard else k * (n - w) - p_s

        def power_of(k: int, is_hard=is_hard, effect=effect) -> float:
            return whole_plot_term_power(effect=float(effect), sd=sd, baths=k * n,
                                         whole_plots=k * w,
                                         variance_ratio=settings.variance_ratio,
                                         error_df=df_of(k), hard=is_hard, alpha=alpha)

        se = 2 * sd * math.sqrt(_variance_factor(is_hard, m, settings.variance_ratio) / n)
        copies = next((k for k in range(1, MAX_COPIES + 1)
                       if df_of(k) >= 1 and power_of(k) >= target_power), None)
        rows.append({"term": term, "stratum": "whole plot" if is_hard else "subplot",
                     "error_df": df_of(1), "effect": float(effect), "effect_se": se,
                     "power": power_of(1), "copies_needed": copies,
                     "tank_runs_needed": None if copies is None else copies * w})
    table = pd.DataFrame(rows, columns=["term", "stratum", "error_df", "effect", "effect_se",
                                        "power", "copies_needed", "tank_runs_needed"])
    return SplitPlotPower(table, settings.variance_ratio, sd, alpha, target_power, n, w)
