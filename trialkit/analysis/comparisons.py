"""Which level, and is it better than the controls: comparisons of levels and of baths.

:func:`level_means` gives the model's mean response at each level of a categorical factor
(other continuous factors at the centre of their range, other categorical factors and
blocks averaged, as in sum coding), with confidence intervals.
:func:`level_comparisons` compares every pair of levels with Tukey's honestly significant
difference (Tukey 1949; the Tukey–Kramer form for unequal replication, computed from the
fitted model's covariance and residual degrees of freedom, so that in a one-factor trial it
is the classical test).  :func:`versus_controls` compares each treatment (each distinct
recipe of the trial) with the untreated control and with the reference bath by Dunnett's
many-to-one test (Dunnett 1955), on the bath values.

Examples
--------
>>> import pandas as pd
>>> from trialkit.trial.factors import Factor
>>> from trialkit.analysis.model import fit_model
>>> salt = Factor.categorical("salt", ["A", "B", "C"])
>>> t = pd.DataFrame({"salt": list("AAABBBCCC"),
...                   "removal": [60, 62, 61, 70, 71, 72, 64, 63, 65.0]})
>>> fit = fit_model(t, "removal", [salt], "main")
>>> rows = level_comparisons(fit, salt, "removal")
>>> [(r["level_a"], r["level_b"], round(r["difference"], 2)) for r in rows]
[('A', 'B', -10.0), ('A', 'C', -3.0), ('B', 'C', 7.0)]
"""

from __future__ import annotations

import itertools
import warnings
from collections.abc import Sequence

import numpy as np
import pandas as pd
from scipy import stats

from trialkit.exceptions import AnalysisError
from trialkit.numbers import settings_text
from trialkit.trial.factors import Factor

TUKEY = "Tukey HSD (Tukey-Kramer, from the fitted model)"
DUNNETT = "Dunnett (many-to-one, bath values)"
#: The ``point`` of the control baths in a plan, by control kind.
CONTROL_POINTS = {"untreated": "control", "reference": "reference"}


def _level_rows(fit, factor: Factor) -> dict[str, np.ndarray]:
    """The averaged model-matrix row of each level of ``factor``."""
    others = [f for f in fit.spec.used_factors if f.name not in (factor.name, "block")]
    grid_axes = [list(f.levels) if not f.is_continuous else [f.center] for f in others]
    rows = {}
    for level in factor.levels:
        combos = [dict(zip([f.name for f in others], c, strict=True), **{factor.name: level})
                  for c in itertools.product(*grid_axes)]
        rows[str(level)] = fit.design_rows(pd.DataFrame(combos)).mean(axis=0)
    return rows


def _check(fit, factor: Factor) -> None:
    if factor.is_continuous:
        raise AnalysisError(f"{factor.name!r} is continuous; levels are compared for "
                            "categorical factors")
    if factor.name not in {f.name for f in fit.spec.used_factors}:
        raise AnalysisError(f"the model of {fit.response!r} has no term in {factor.name!r}")
    if not fit.df_resid > 0:
        raise AnalysisError(f"the model of {fit.response!r} has no residual degrees of "
                            "freedom: levels cannot be compared")


def level_means(fit, factor: Factor, *, alpha: float = 0.05) -> pd.DataFrame:
    """Model mean of each level of ``factor``: ``level, mean, low, high`` (a ``1 - alpha``
    confidence interval each, not simultaneous)."""
    _check(fit, factor)
    t = stats.t.ppf(1 - alpha / 2, fit.df_resid)
    out = []
    for level, x in _level_rows(fit, factor).items():
        mean = float(x @ fit.ls.beta + float(fit.shift))
        se = float(np.sqrt(x @ fit.ls.xtx_inv @ x * fit.sigma2))
        out.append({"level": level, "mean": mean, "low": mean - t * se, "high": mean + t * se})
    return pd.DataFrame(out)


def level_comparisons(fit, factor: Factor, response: str, *, alpha: float = 0.05
                      ) -> list[dict]:
    """Every pair of levels of ``factor``: ``difference`` (level_a - level_b) with its
    simultaneous ``1 - alpha`` interval and Tukey-adjusted p-value."""
    _check(fit, factor)
    rows = _level_rows(fit, factor)
    k, df = len(rows), fit.df_resid
    q_crit = stats.studentized_range.ppf(1 - alpha, k, df)
    out = []
    for a, b in itertools.combinations(rows, 2):
        c = rows[a] - rows[b]
        diff = float(c @ fit.ls.beta)
        se = float(np.sqrt(c @ fit.ls.xtx_inv @ c * fit.sigma2))
        half = q_crit / np.sqrt(2.0) * se
        p = float(stats.studentized_range.sf(abs(diff) / se * np.sqrt(2.0), k, df)) \
            if se > 0 else float("nan")
        out.append({"factor": factor.name, "response": response, "level_a": a,
                    "level_b": b, "difference": diff, "low": diff - half,
                    "high": diff + half, "p_adjusted": min(1.0, p), "method": TUKEY})
    return out


def treatment_label(row: pd.Series, factors: Sequence[Factor]) -> str:
    """``"chelator 5 % w/v, pH 6, surfactant = added"``: a treatment named by its settings
    (:func:`trialkit.numbers.settings_text`)."""
    settings = {f.name: (float(row[f.name]) if f.is_continuous else str(row[f.name]))
                for f in factors}
    return settings_text(settings, {f.name: f.unit for f in factors}, digits=4)


def versus_controls(baths: pd.DataFrame, response: str, factors: Sequence[Factor], *,
                    alpha: float = 0.05) -> list[dict]:
    """Each treatment against the untreated control and the reference bath (Dunnett).

    ``baths``: one row per bath with ``point``, the factor columns and ``response``.
    Treatments are the distinct factor settings of the non-control baths.  A control kind
    with no bath value is skipped; so is the whole comparison when no treatment has two
    baths or more and the controls have fewer than two (no within-group variance).
    """
    if response not in baths:
        return []
    names = [f.name for f in factors]
    values = baths.dropna(subset=[response])
    treated = values[~values["point"].isin(list(CONTROL_POINTS.values()))]
    treated = treated.dropna(subset=names)
    if treated.empty:
        return []
    labels = treated.apply(lambda r: treatment_label(r, factors), axis=1)
    groups = {lab: g[response].astype(float).to_numpy()
              for lab, g in treated.groupby(labels, sort=False)}
    out = []
    for kind, point in CONTROL_POINTS.items():
        control = values.loc[values["point"] == point, response].astype(float).to_numpy()
        if len(control) == 0:
            continue
        n_total = len(control) + sum(len(g) for g in groups.values())
        if n_total - (len(groups) + 1) < 1:
            continue  # no degrees of freedom for the pooled variance
        with warnings.catch_warnings():  # identical values (100 % removal) are fine here
            warnings.simplefilter("ignore", RuntimeWarning)
            res = stats.dunnett(*groups.values(), control=control, random_state=0)
        ci = res.confidence_interval(confidence_level=1 - alpha)
        for i, lab in enumerate(groups):
            out.append({"response": response, "treatment": lab, "control": kind,
                        "difference": float(groups[lab].mean() - control.mean()),
                        "low": float(ci.low[i]), "high": float(ci.high[i]),
                        "p_adjusted": float(res.pvalue[i]), "method": DUNNETT})
    return out
