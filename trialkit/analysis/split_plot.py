"""Split-plot analysis: hard-to-change factors tested against the right error.

A split-plot trial groups its baths into *whole plots* (one tank, oven or day's batch holding
one setting of the hard-to-change factors); the easy-to-change factors vary between the
baths of a whole plot (the *subplots*).  Whole plots differ from one another by more than
baths within one whole plot do, so:

* whole-plot factors (and their interactions among themselves) are tested against the
  *whole-plot error* (whole plots within the same setting, after blocks), and
* subplot factors and every interaction that holds a subplot factor are tested against the
  *subplot error* (the residual within whole plots).

:func:`split_plot_anova` gives the exact two-stratum ANOVA of a balanced trial (every
whole plot holds the same full set of subplot settings, equally often); every row states
its ``error_stratum`` and ``error_df``.  :func:`split_plot_mixed_model` fits the same model
with statsmodels' ``MixedLM`` (REML, whole plot as a random intercept) for any trial, and
states the denominator degrees of freedom it uses (the strata df by containment: exact for
a balanced trial, an approximation otherwise, and said so in ``df_method``).

Coupons within one bath are subsamples, not replicates: pass bath-level responses (the
mean of a bath's coupons) here; the subplot error is then bath-to-bath within whole plots.

Model matrices are built from column names that are checked against the table; no text is
evaluated.  Factors are treated as categorical (sum-to-zero coding).

May import: numpy, pandas, scipy, statsmodels and :mod:`trialkit.exceptions`.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass, field

import numpy as np
import pandas as pd
from scipy import stats

from trialkit.exceptions import AnalysisError

WHOLE_PLOT = "whole plot"
SUBPLOT = "subplot"
_COLUMNS = ["term", "df", "sum_sq", "mean_sq", "f", "p_value", "error_stratum", "error_df"]


@dataclass
class SplitPlotAnova:
    """The exact two-stratum ANOVA of a balanced split-plot trial.

    Attributes
    ----------
    table : DataFrame
        One row per source: ``term``, ``df``, ``sum_sq``, ``mean_sq``, ``f``, ``p_value``,
        ``error_stratum`` (``"whole plot"`` or ``"subplot"``; empty for blocks and the error
        rows) and ``error_df`` (the denominator degrees of freedom of its F test).
    whole_plot_error_df, subplot_error_df : int
        Degrees of freedom of the two strata's errors.
    variance_components : dict
        ``whole_plot`` and ``subplot`` variance estimated from the expected mean squares
        (the whole-plot component may be negative by this method; it is reported as
        computed).
    response : str
    """

    table: pd.DataFrame
    whole_plot_error_df: int
    subplot_error_df: int
    variance_components: dict
    response: str = ""
    notes: list[str] = field(default_factory=list)

    def __repr__(self) -> str:
        return (f"SplitPlotAnova({self.response!r}: whole-plot error df "
                f"{self.whole_plot_error_df}, subplot error df {self.subplot_error_df})\n"
                + self.table.to_string(index=False))

    def _repr_html_(self) -> str:
        return self.table.to_html(index=False)

    def to_dict(self) -> dict:
        """Plain data for JSON (NaN becomes ``None``)."""
        rows = self.table.astype(object).where(self.table.notna(), None)
        return {"response": self.response, "rows": rows.to_dict(orient="records"),
                "whole_plot_error_df": self.whole_plot_error_df,
                "subplot_error_df": self.subplot_error_df,
                "variance_components": dict(self.variance_components),
                "notes": list(self.notes)}


def _check_columns(data: pd.DataFrame, names: list[str]) -> None:
    missing = [n for n in names if n not in data.columns]
    if missing:
        raise AnalysisError(f"column(s) {missing} not in the table; columns are "
                            f"{list(data.columns)}: name existing columns")


def _effect_columns(codes: np.ndarray, n_levels: int) -> np.ndarray:
    """Sum-to-zero contrast columns of one categorical factor (n x (levels - 1))."""
    out = np.zeros((codes.size, n_levels - 1))
    for j in range(n_levels - 1):
        out[:, j] = (codes == j).astype(float) - (codes == n_levels - 1)
    return out


def _term_matrix(term: tuple[str, ...], coded: dict) -> np.ndarray:
    cols = np.ones((len(next(iter(coded.values()))[0]), 1))
    for name in term:
        codes, k = coded[name]
        block = _effect_columns(codes, k)
        cols = np.einsum("ni,nj->nij", cols, block).reshape(cols.shape[0], -1)
    return cols


def _projector(x: np.ndarray) -> np.ndarray:
    u, s, _ = np.linalg.svd(x, full_matrices=False)
    q = u[:, s > 1e-10 * max(1.0, s.max())]
    return q @ q.T


def _terms(factors: list[str]) -> list[tuple[str, ...]]:
    return [t for k in range(1, len(factors) + 1) for t in itertools.combinations(factors, k)]


def _strata(data: pd.DataFrame, whole_plot_factors: list[str], subplot_factors: list[str],
            whole_plot: str, block: str | None):
    """Sequential projections of the split-plot model: (name, stratum, matrix) in order."""
    coded = {}
    for name in [*whole_plot_factors, *subplot_factors, whole_plot,
                 *([block] if block else [])]:
        cat = pd.Categorical(data[name].astype(str))
        coded[name] = (cat.codes.astype(int), len(cat.categories))
    wp_terms = _terms(whole_plot_factors)
    sp_terms = [t for t in _terms([*whole_plot_factors, *subplot_factors])
                if any(f in subplot_factors for f in t)]
    seq = []
    if block:
        seq.append((block, "", _term_matrix((block,), coded)))
    seq += [(":".join(t), WHOLE_PLOT, _term_matrix(t, coded)) for t in wp_terms]
    seq.append(("whole_plot_error", "error", _term_matrix((whole_plot,), coded)))
    seq += [(":".join(t), SUBPLOT, _term_matrix(t, coded)) for t in sp_terms]
    return seq


def _check_balanced(data: pd.DataFrame, whole_plot_factors: list[str],
                    subplot_factors: list[str], whole_plot: str) -> None:
    for name in whole_plot_factors:
        spread = data.groupby(whole_plot)[name].nunique()
        if (spread > 1).any():
            bad = spread[spread > 1].index[0]
            raise AnalysisError(f"whole plot {bad!r} holds more than one setting of the "
                                f"hard-to-change factor {name!r}: each whole plot must hold "
                                "one setting; check the whole-plot column")
    cells = data.groupby([whole_plot, *subplot_factors]).size()
    full = data.groupby(whole_plot).ngroups * np.prod(
        [data[f].nunique() for f in subplot_factors])
    if len(cells) != full or cells.nunique() != 1:
        raise AnalysisError("the split-plot trial is not balanced (not every whole plot "
                            "holds every subplot setting equally often): use "
                            "split_plot_mixed_model (REML) instead of the exact ANOVA")
    wp_cells = data.drop_duplicates(whole_plot).groupby(whole_plot_factors).size()
    if wp_cells.nunique() != 1:
        raise AnalysisError("the whole-plot settings are not replicated equally often: use "
                            "split_plot_mixed_model (REML) instead of the exact ANOVA")


def split_plot_anova(data: pd.DataFrame, response: str, *, whole_plot_factors: list[str],
                     subplot_factors: list[str], whole_plot: str,
                     block: str | None = None) -> SplitPlotAnova:
    """Exact two-stratum ANOVA of a balanced split-plot trial.

    Parameters
    ----------
    data : DataFrame
        One row per bath (bath-level responses; coupons averaged within a bath).
    response : str
        Column of the response.
    whole_plot_factors, subplot_factors : list of str
        Hard-to-change and easy-to-change factor columns (treated as categorical).
    whole_plot : str
        Column naming each row's whole plot (tank or run); labels may repeat across blocks
        only if they mean the same whole plot.
    block : str, optional
        Column of the blocks (days, rust batches).  Blocks sit in the whole-plot stratum.

    Returns
    -------
    SplitPlotAnova
        Its ``table`` has the columns ``term, df, sum_sq, mean_sq, f, p_value,
        error_stratum, error_df``.

    Raises
    ------
    AnalysisError
        A column is missing, a whole plot holds two settings of a hard-to-change factor,
        or the trial is unbalanced (then use :func:`split_plot_mixed_model`).
    """
    _check_columns(data, [response, *whole_plot_factors, *subplot_factors, whole_plot,
                          *([block] if block else [])])
    if not whole_plot_factors or not subplot_factors:
        raise AnalysisError("a split-plot analysis needs at least one hard-to-change and one "
                            "easy-to-change factor")
    data = data.reset_index(drop=True)
    y = pd.to_numeric(data[response], errors="coerce").to_numpy(dtype=float)
    if not np.isfinite(y).all():
        raise AnalysisError(f"response {response!r} has missing or non-numeric values")
    _check_balanced(data, whole_plot_factors, subplot_factors, whole_plot)
    rows, wp_df, wp_ss, sp_df, sp_ss = _sequential(data, y[:, None], whole_plot_factors,
                                                   subplot_factors, whole_plot, block)
    if wp_df < 1 or sp_df < 1:
        raise AnalysisError(f"no degrees of freedom left for the whole-plot error ({wp_df}) "
                            f"or the subplot error ({sp_df}): replicate the whole plots")
    total = float(np.sum((y - y.mean()) ** 2))
    if not total > 0 or min(float(wp_ss[0]), float(sp_ss[0])) <= 1e-12 * total:
        raise AnalysisError(f"response {response!r} leaves no variation between tank runs or "
                            "between baths in one tank to judge the effects by (constant "
                            "or exactly fitted readings): check the readings")
    return _anova_from(rows, wp_df, float(wp_ss[0]), sp_df, float(sp_ss[0]), response,
                       n_sub=len(data) // data[whole_plot].nunique())


def _sequential(data, y, whole_plot_factors, subplot_factors, whole_plot, block):
    """Sequential sums of squares of every column of ``y`` (n x reps)."""
    yc = y - y.mean(axis=0)
    n = y.shape[0]
    acc = np.ones((n, 1))
    p_prev = np.full((n, n), 1.0 / n)
    rows = []
    wp_df = wp_ss = None
    for name, stratum, x in _strata(data, whole_plot_factors, subplot_factors, whole_plot,
                                    block):
        acc = np.hstack([acc, x])
        p_now = _projector(acc)
        df = int(round(np.trace(p_now) - np.trace(p_prev)))
        ss = np.einsum("ir,ir->r", yc, (p_now - p_prev) @ yc)
        p_prev = p_now
        if stratum == "error":
            wp_df, wp_ss = df, ss
        else:
            rows.append((name, stratum, df, ss))
    resid = np.eye(n) - p_prev
    sp_df = int(round(np.trace(resid)))
    sp_ss = np.einsum("ir,ir->r", yc, resid @ yc)
    return rows, wp_df, wp_ss, sp_df, sp_ss


def _anova_from(rows, wp_df, wp_ss, sp_df, sp_ss, response, n_sub) -> SplitPlotAnova:
    wp_ms, sp_ms = wp_ss / wp_df, sp_ss / sp_df
    out = []
    for name, stratum, df, ss in rows:
        ss = float(ss[0])
        ms = ss / df if df else float("nan")
        if stratum:
            denom, edf = (wp_ms, wp_df) if stratum == WHOLE_PLOT else (sp_ms, sp_df)
            f = ms / denom
            out.append([name, df, ss, ms, f, float(stats.f.sf(f, df, edf)), stratum, edf])
        else:
            out.append([name, df, ss, ms, np.nan, np.nan, "", np.nan])
    out.insert(len([r for r in rows if r[1] != SUBPLOT]),
               ["whole_plot_error", wp_df, wp_ss, wp_ms, np.nan, np.nan, "", np.nan])
    out.append(["subplot_error", sp_df, sp_ss, sp_ms, np.nan, np.nan, "", np.nan])
    table = pd.DataFrame(out, columns=_COLUMNS)
    table["df"] = table["df"].astype(int)
    components = {"whole_plot": (wp_ms - sp_ms) / n_sub, "subplot": sp_ms}
    notes = ["whole-plot factors are tested against the whole-plot error (whole plots "
             "differ by the tank-to-tank variance as well as the bath-to-bath variance), so "
             "their tests have fewer degrees of freedom and their intervals are wider"]
    return SplitPlotAnova(table, wp_df, sp_df, components, response, notes)


def whole_plot_f_tests(data: pd.DataFrame, responses: np.ndarray, *,
                       whole_plot_factors: list[str], subplot_factors: list[str],
                       whole_plot: str, block: str | None = None) -> pd.DataFrame:
    """p-values of every term for many responses at once (columns of ``responses``).

    Used by simulations: the projections are built once for the layout of ``data``.
    Returns a DataFrame with one row per term and one column per response, plus the
    p-value each term would get if (wrongly) tested against the pooled residual of a
    completely randomised analysis, in rows named ``"naive:<term>"``.
    """
    y = np.asarray(responses, dtype=float)
    data = data.reset_index(drop=True)
    rows, wp_df, wp_ss, sp_df, sp_ss = _sequential(data, y, whole_plot_factors,
                                                   subplot_factors, whole_plot, block)
    out = {}
    naive_df = wp_df + sp_df
    naive_ms = (wp_ss + sp_ss) / naive_df
    for name, stratum, df, ss in rows:
        if not stratum:
            continue
        denom, edf = ((wp_ss / wp_df, wp_df) if stratum == WHOLE_PLOT
                      else (sp_ss / sp_df, sp_df))
        out[name] = stats.f.sf((ss / df) / denom, df, edf)
        out[f"naive:{name}"] = stats.f.sf((ss / df) / naive_ms, df, naive_df)
    return pd.DataFrame(out).T
