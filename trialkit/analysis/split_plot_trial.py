"""A split-plot trial's analysis as the trial and the report use it: the right test for each
factor, and each two-level factor's effect with an interval from its own stratum.

:func:`analyse_split_plot` takes the bath table of a trial (coupons already averaged within
a bath, which makes the bath the unit of analysis), picks the exact two-stratum ANOVA when
the trial is balanced and REML (statsmodels MixedLM) otherwise, and estimates the effect of
each two-level factor (the mean at its second level minus the mean at its first) with a
95 % interval on its stratum's error and degrees of freedom.  In a balanced split plot
the least-squares effect is also the generalised-least-squares one; only its error differs
between strata: a hard-to-change factor's effect varies with the tank-to-tank variance
``σ²_sub + m σ²_whole`` (``m`` baths a tank), an easy-to-change factor's with ``σ²_sub``
alone (Montgomery, *Design and Analysis of Experiments*, split-plot chapter — from memory).

Examples
--------
>>> import numpy as np, pandas as pd
>>> rng = np.random.default_rng(5)
>>> rows = [{"day": d, "tank": f"{d}-{t}", "temperature": t, "chelator": c,
...          "removal": 50 + 10 * (t == 40) + 5 * (c == 6) + rng.normal()}
...         for d in (1, 2, 3) for t in (20, 40) for c in (2, 6) for _ in (1, 2)]
>>> res = analyse_split_plot(pd.DataFrame(rows), "removal", ["temperature"], ["chelator"],
...                          whole_plot="tank", block="day")
>>> res.method
'exact two-stratum ANOVA (balanced)'
>>> res.effects[["factor", "error_stratum", "error_df"]].values.tolist()
[['temperature', 'whole plot', 2], ['chelator', 'subplot', 16]]
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field

import numpy as np
import pandas as pd
from scipy import stats

from trialkit.analysis.response_checks import check_response_values
from trialkit.analysis.split_plot import SUBPLOT, WHOLE_PLOT, split_plot_anova
from trialkit.analysis.split_plot_mixed import split_plot_mixed_model
from trialkit.exceptions import AnalysisError

EXACT = "exact two-stratum ANOVA (balanced)"
REML = "REML (statsmodels MixedLM), whole plot random"


@dataclass
class SplitPlotResult:
    """The split-plot analysis of one response.

    Attributes
    ----------
    response, method : str
    tests : DataFrame
        ``term, df, f, p_value, error_stratum, error_df`` for every factorial term.
    effects : DataFrame
        Two-level factors: ``factor, low, high, effect, ci_low, ci_high, p_value,
        error_stratum, error_df`` (``low``/``high`` are the levels compared).
    variance_components : dict
        ``whole_plot`` and ``subplot`` variances.
    whole_plot_error_df, subplot_error_df : int
    n_whole_plots, baths_per_whole_plot : int
    notes : list of str
    """

    response: str
    method: str
    tests: pd.DataFrame
    effects: pd.DataFrame
    variance_components: dict
    whole_plot_error_df: int
    subplot_error_df: int
    n_whole_plots: int
    baths_per_whole_plot: float
    notes: list[str] = field(default_factory=list)

    def to_dict(self) -> dict:
        """Plain data for JSON (NaN becomes ``None``)."""
        def rows(df):
            return df.astype(object).where(df.notna(), None).to_dict(orient="records")

        return {"response": self.response, "method": self.method,
                "unit_of_analysis": "bath (coupons within a bath are subsamples, averaged)",
                "tests": rows(self.tests), "effects": rows(self.effects),
                "variance_components": dict(self.variance_components),
                "whole_plot_error_df": self.whole_plot_error_df,
                "subplot_error_df": self.subplot_error_df,
                "whole_plots": self.n_whole_plots, "notes": list(self.notes)}


def split_plot_tests(table: pd.DataFrame, response: str, whole_plot_factors: list[str],
                     subplot_factors: list[str], *, whole_plot: str,
                     block: str | None = None):
    """``(result, method)``: the exact two-stratum ANOVA when the trial is balanced, else the
    REML fit (:func:`trialkit.analysis.split_plot_mixed.split_plot_mixed_model`)."""
    check_response_values(table, response)
    split = dict(whole_plot_factors=list(whole_plot_factors),
                 subplot_factors=list(subplot_factors), whole_plot=whole_plot, block=block)
    try:
        return split_plot_anova(table, response, **split), EXACT
    except AnalysisError as err:
        if "not balanced" not in str(err) and "not replicated" not in str(err):
            raise
    return split_plot_mixed_model(table, response, **split), REML


def analyse_split_plot(table: pd.DataFrame, response: str, whole_plot_factors: list[str],
                       subplot_factors: list[str], *, whole_plot: str,
                       block: str | None = None, alpha: float = 0.05,
                       levels: Mapping[str, Sequence] | None = None) -> SplitPlotResult:
    """Tests and effects of a split-plot trial (see the module docstring).

    ``table`` has one row per bath; rows with a missing response or factor are left out.
    ``levels`` gives the order of a factor's levels (the effect is the last level minus
    the first); otherwise numbers go in increasing order, text in order of appearance.
    """
    names = [*whole_plot_factors, *subplot_factors]
    rows = table.dropna(subset=[response, *names]).reset_index(drop=True)
    result, method = split_plot_tests(rows, response, whole_plot_factors, subplot_factors,
                                      whole_plot=whole_plot, block=block)
    if method == EXACT:
        tab = result.table
        tests = tab[tab["error_stratum"] != ""][["term", "df", "f", "p_value",
                                                 "error_stratum", "error_df"]]
        ms = {WHOLE_PLOT: float(tab.loc[tab.term == "whole_plot_error", "mean_sq"].iloc[0]),
              SUBPLOT: float(tab.loc[tab.term == "subplot_error", "mean_sq"].iloc[0])}
        dfs = {WHOLE_PLOT: result.whole_plot_error_df, SUBPLOT: result.subplot_error_df}
        components = dict(result.variance_components)
    else:
        tests = result.tests
        dfs = {s: int(tests.loc[tests.error_stratum == s, "error_df"].iloc[0])
               for s in (WHOLE_PLOT, SUBPLOT) if (tests.error_stratum == s).any()}
        components = dict(result.variance_components)
        m = len(rows) / rows[whole_plot].nunique()
        ms = {WHOLE_PLOT: components["subplot"] + m * max(components["whole_plot"], 0.0),
              SUBPLOT: components["subplot"]}
    effects = _effects(rows, response, whole_plot_factors, subplot_factors, ms, dfs, alpha,
                       dict(levels or {}))
    n_wp = int(rows[whole_plot].nunique())
    notes = ["hard-to-change factors are tested against the variation between tank runs "
             f"({dfs.get(WHOLE_PLOT, 0)} degrees of freedom from {n_wp} tank runs), "
             "easy-to-change factors against the variation between baths in one tank "
             f"({dfs.get(SUBPLOT, 0)} degrees of freedom); the bath is the unit of analysis"]
    if method == REML:
        notes.append("the trial is unbalanced: tests from a REML fit, denominator degrees "
                     "of freedom by containment (an approximation when unbalanced; "
                     "Kenward-Roger is not built)")
    return SplitPlotResult(response, method, tests.reset_index(drop=True), effects,
                           components, dfs.get(WHOLE_PLOT, 0), dfs.get(SUBPLOT, 0), n_wp,
                           len(rows) / max(n_wp, 1), notes)


def _effects(rows, response, wp_factors, sp_factors, ms, dfs, alpha, levels) -> pd.DataFrame:
    out = []
    y = pd.to_numeric(rows[response]).to_numpy(dtype=float)
    for name in [*wp_factors, *sp_factors]:
        stratum = WHOLE_PLOT if name in wp_factors else SUBPLOT
        seen = _ordered_levels(rows[name])
        order = [v for v in levels.get(name, ()) if str(v) in map(str, seen)] or seen
        if len(order) != 2 or len(seen) != 2 or stratum not in dfs or dfs[stratum] < 1:
            continue
        lo_mask = rows[name].astype(str) == str(order[0])
        hi_mask = ~lo_mask
        effect = float(y[hi_mask].mean() - y[lo_mask].mean())
        se = float(np.sqrt(ms[stratum] * (1 / hi_mask.sum() + 1 / lo_mask.sum())))
        df = dfs[stratum]
        t = float(stats.t.ppf(1 - alpha / 2, df))
        p = float(2 * stats.t.sf(abs(effect) / se, df)) if se > 0 else float("nan")
        out.append({"factor": name, "low": order[0], "high": order[1], "effect": effect,
                    "ci_low": effect - t * se, "ci_high": effect + t * se, "p_value": p,
                    "error_stratum": stratum, "error_df": df})
    return pd.DataFrame(out, columns=["factor", "low", "high", "effect", "ci_low", "ci_high",
                                      "p_value", "error_stratum", "error_df"])


def _ordered_levels(values: pd.Series) -> list:
    """Distinct values, numbers in increasing order, text in order of first appearance."""
    distinct = list(dict.fromkeys(values.tolist()))
    try:
        return sorted(distinct, key=float)
    except (TypeError, ValueError):
        return distinct
