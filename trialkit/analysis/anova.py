"""ANOVA tables of a :class:`~trialkit.analysis.model.ModelFit`.

* Type 1: sequential sums of squares, terms in model order (blocks first).
* Type 2: each term adjusted for every term that does not contain it (a square
  ``x^2`` and an interaction ``x:z`` contain ``x``).
* Type 3: each term adjusted for all others (Wald form ``b' C^-1 b``); only with
  sum-to-zero contrasts, because with treatment coding the "main effect" tested depends
  on the baseline level (on unbalanced data the p-value changes with the coding alone).

Also: lack of fit against pure error (replicated settings and centre points), a
curvature test from centre points, the overall model test.  A saturated two-level model
(no residual degrees of freedom) is tested by Lenth's method instead of an F ratio.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd
from scipy import stats

from trialkit.analysis.data import finite
from trialkit.analysis.linear import rss_of
from trialkit.exceptions import AnalysisError
from trialkit.trial.model_grammar import INTERCEPT, Term

TYPES = (1, 2, 3)


@dataclass
class AnovaTable:
    """An ANOVA table.

    Attributes
    ----------
    typ : int
    summary : DataFrame
        term, df, sum_sq, mean_sq, F, p (one row per model term).
    residual : dict
        df, sum_sq, mean_sq.
    test : str
        ``"F"`` or ``"lenth"`` (saturated two-level model: F = (effect / PSE)^2 with
        Lenth's d = m/3 degrees of freedom).
    model : dict
        Overall model test: df, sum_sq, mean_sq, F, p.
    lack_of_fit : dict or None
        lack_of_fit_df/ss/ms, pure_error_df/ss/ms, F, p.
    curvature : dict or None
        n_factorial, n_center, mean_factorial, mean_center, sum_sq, df, F, p.
    """

    typ: int
    summary: pd.DataFrame
    residual: dict
    test: str = "F"
    model: dict = field(default_factory=dict)
    lack_of_fit: dict | None = None
    curvature: dict | None = None

    def to_dict(self) -> dict:
        if self.test == "F":
            stratum, error_df = "residual (baths)", int(self.residual["df"])
        else:  # Lenth's d = m / 3 for m effects
            stratum, error_df = "Lenth pseudo standard error", float(self.summary.df.sum()) / 3
        rows = [{"term": r.term, "df": int(r.df), "sum_sq": finite(r.sum_sq),
                 "mean_sq": finite(r.mean_sq), "F": finite(r.F), "p": finite(r.p),
                 "error_stratum": stratum, "error_df": error_df}
                for r in self.summary.itertuples()]
        def clean(d):
            return (None if d is None else {k: (finite(v) if isinstance(v, float)
                                                               else v) for k, v in d.items()})
        return {"anova_type": self.typ, "anova_test": self.test, "anova": rows,
                "residual": clean(self.residual), "model_test": clean(self.model),
                "lack_of_fit": clean(self.lack_of_fit), "curvature": clean(self.curvature)}

    def __repr__(self) -> str:
        return f"AnovaTable(type {self.typ}, test {self.test})\n{self.summary.to_string()}"

    def _repr_html_(self) -> str:
        return self.summary.to_html(index=False)


def _contains(big: Term, small: Term) -> bool:
    if big == small:
        return False
    return set(small.factors) <= set(big.factors) and big.order > small.order


def _columns(fit, keep_terms) -> np.ndarray:
    cols = [fit.mm.term_columns[INTERCEPT]] + [fit.mm.term_columns[t.name] for t in keep_terms]
    idx = np.concatenate([np.arange(s.start, s.stop) for s in cols])
    return fit.mm.X[:, idx]


def anova_table(fit, typ: int = 2) -> AnovaTable:
    """Sums of squares of type ``typ`` for every term of ``fit``."""
    if typ not in TYPES:
        raise AnalysisError(f"ANOVA type must be 1, 2 or 3, got {typ!r}")
    if typ == 3 and fit.mm.coding != "sum":
        raise AnalysisError("type 3 sums of squares need sum-to-zero contrasts; refit with "
                            "coding='sum' (treatment coding changes what a main effect "
                            "means on unbalanced data)")
    terms = fit.spec.terms
    dfs, ss = [], []
    for t in terms:
        sl = fit.mm.term_columns[t.name]
        dfs.append(sl.stop - sl.start)
        if typ == 1:
            q = fit.ls.q_effects[sl]
            ss.append(float(q @ q))
        elif typ == 3:
            b = fit.ls.beta[sl]
            C = fit.ls.xtx_inv[sl, sl]
            ss.append(float(b @ np.linalg.solve(C, b)))
        else:
            others = [u for u in terms if u != t and not _contains(u, t)]
            base = rss_of(_columns(fit, others), fit.y)
            full = rss_of(_columns(fit, others + [t]), fit.y)
            ss.append(base - full)
    df_r, rss = fit.df_resid, fit.ls.rss
    summary = pd.DataFrame({"term": [t.name for t in terms], "df": dfs, "sum_sq": ss})
    summary["mean_sq"] = summary.sum_sq / summary.df
    test = "F"
    if df_r > 0:
        ms_r = rss / df_r
        summary["F"] = summary.mean_sq / ms_r
        summary["p"] = stats.f.sf(summary.F, summary.df, df_r)
    else:
        test = "lenth"
        summary["F"], summary["p"] = _lenth_columns(fit)
    df_m = int(sum(dfs))
    ss_m = fit.tss - rss
    model = {"df": df_m, "sum_sq": ss_m, "mean_sq": ss_m / df_m if df_m else float("nan")}
    if df_r > 0 and df_m:
        model["F"] = model["mean_sq"] / (rss / df_r)
        model["p"] = float(stats.f.sf(model["F"], df_m, df_r))
    residual = {"df": int(df_r), "sum_sq": rss,
                "mean_sq": rss / df_r if df_r > 0 else float("nan")}
    return AnovaTable(typ, summary, residual, test, model, lack_of_fit(fit), curvature(fit))


def _lenth_columns(fit) -> tuple[np.ndarray, np.ndarray]:
    from trialkit.analysis.effects import lenth

    X = fit.mm.X[:, 1:]
    two_level = X.size and np.all(np.isclose(np.abs(X), 1.0))
    if not two_level or any((s.stop - s.start) != 1 for k, s in fit.mm.term_columns.items()
                            if k != INTERCEPT):
        raise AnalysisError(
            "the model is saturated (no residual degrees of freedom) and is not a two-level "
            "model that Lenth's method can test; drop terms (e.g. use 'main') or run "
            "replicates")
    eff = 2 * fit.ls.beta[1:]
    res = lenth(eff)
    t = eff / res.pse
    F = t ** 2
    p = 2 * stats.t.sf(np.abs(t), res.d)
    return F, p


def settings_groups(fit) -> np.ndarray:
    """Group number of each row's factor settings (continuous values rounded to 1e-9 in
    coded units), by ``groupby().ngroup()``: rows with equal numbers are replicates."""
    cols = [f.name for f in fit.spec.used_factors]
    if not cols:
        return np.zeros(len(fit.coded), dtype=int)
    key = fit.coded[cols].copy()
    for f in fit.spec.used_factors:
        if f.is_continuous:
            key[f.name] = np.round(key[f.name].astype(float), 9)
    return key.groupby(cols, sort=False, dropna=False).ngroup().to_numpy()


def lack_of_fit(fit) -> dict | None:
    """Lack of fit against pure error; None without replicated settings."""
    group = settings_groups(fit)
    y = np.asarray(fit.y, dtype=float)
    count = np.bincount(group)
    mean = np.bincount(group, weights=y) / count
    pe_ss = float(((y - mean[group]) ** 2).sum())
    pe_df = int(len(y) - np.count_nonzero(count))
    lof_df = int(fit.df_resid - pe_df)
    if pe_df <= 0:
        return None
    lof_ss = max(fit.ls.rss - pe_ss, 0.0)
    out = {"lack_of_fit_df": lof_df, "lack_of_fit_sum_sq": lof_ss,
           "lack_of_fit_mean_sq": lof_ss / lof_df if lof_df > 0 else float("nan"),
           "pure_error_df": pe_df, "pure_error_sum_sq": pe_ss,
           "pure_error_mean_sq": pe_ss / pe_df, "F": float("nan"), "p": float("nan")}
    if lof_df > 0 and pe_ss > 0:
        out["F"] = out["lack_of_fit_mean_sq"] / out["pure_error_mean_sq"]
        out["p"] = float(stats.f.sf(out["F"], lof_df, pe_df))
    return out


def curvature(fit) -> dict | None:
    """Curvature test: factorial-point mean against centre-point mean (1 df).

    Only for models without squares of continuous factors, with at least one centre
    point (every continuous factor at coded 0) and factorial points (all at +-1).
    The error term is the pure error when there is one.  Without pure error the residual
    holds the curvature itself (so ``F`` could never pass the residual df); then a
    centre-point indicator is added to the model and tested against the residual of that
    larger model (``error`` = ``"residual_with_centre_indicator"``, one df fewer).  With
    no residual left after that, the curvature is reported as not testable
    (``testable`` False, ``F`` and ``p`` NaN) — never a test that cannot reject.
    """
    cont = [f.name for f in fit.spec.used_factors if f.is_continuous]
    if not cont or any(t.power == 2 for t in fit.spec.terms):
        return None
    x = fit.coded[cont].astype(float).to_numpy()
    center = np.all(np.abs(x) < 1e-9, axis=1)
    factorial = np.all(np.isclose(np.abs(x), 1.0), axis=1)
    nc, nf = int(center.sum()), int(factorial.sum())
    if nc == 0 or nf == 0:
        return None
    yc, yf = fit.y[center].mean(), fit.y[factorial].mean()
    ss = nf * nc * (yf - yc) ** 2 / (nf + nc)
    lof = lack_of_fit(fit)
    shift = float(fit.shift)
    out = {"n_factorial": nf, "n_center": nc, "mean_factorial": yf + shift,
           "mean_center": yc + shift, "sum_sq": ss, "df": 1, "testable": True}
    if lof is not None and lof["pure_error_sum_sq"] > 0:
        ms, df, source = lof["pure_error_mean_sq"], lof["pure_error_df"], "pure_error"
    else:
        X1 = np.column_stack([fit.mm.X, center.astype(float)])
        df = fit.df_resid - 1
        rss1 = rss_of(X1, fit.y) if df > 0 else 0.0
        if df <= 0 or rss1 <= 0:
            out.update(error_df=max(int(df), 0), error="none", F=float("nan"),
                       p=float("nan"), testable=False,
                       reason="no pure error and no residual left once a centre-point "
                              "term is in the model: curvature cannot be tested")
            return out
        ss = max(fit.ls.rss - rss1, 0.0)
        ms, source = rss1 / df, "residual_with_centre_indicator"
        out["sum_sq"] = ss
    F = ss / ms
    out.update(error_df=int(df), error=source, F=F, p=float(stats.f.sf(F, 1, df)))
    return out
