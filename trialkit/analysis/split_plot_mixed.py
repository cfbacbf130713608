"""Split-plot trials as a mixed model: statsmodels ``MixedLM`` (REML), whole plot random.

Works for unbalanced trials too.  Fixed effects use the same sum-to-zero model matrix as
:mod:`trialkit.analysis.split_plot` (built from checked column names, never from text that
is evaluated).  Wald F tests of each term use the strata degrees of freedom by containment
(whole-plot terms: whole plots minus the whole-plot-level fixed columns; subplot terms: the
residual of the full fixed model with whole plots as groups).  For a balanced trial these are
the exact strata df; otherwise they are an approximation, stated in ``df_method``
(Satterthwaite and Kenward–Roger are not built yet).

May import: numpy, pandas, scipy, statsmodels and the analysis modules before it.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd
from scipy import stats

from trialkit.analysis.split_plot import (
    SUBPLOT,
    WHOLE_PLOT,
    _check_columns,
    _strata,
)
from trialkit.exceptions import AnalysisError


@dataclass
class SplitPlotMixedFit:
    """A REML fit of a split-plot trial.

    Attributes
    ----------
    fixed_effects : Series
        Estimates of the fixed-effect columns (``Intercept``, ``<term>[j]``).
    variance_components : dict
        ``whole_plot`` (random intercept variance) and ``subplot`` (residual variance).
    tests : DataFrame
        ``term, df, f, p_value, error_stratum, error_df`` (Wald F tests).
    df_method : str
    response : str
    """

    fixed_effects: pd.Series
    variance_components: dict
    tests: pd.DataFrame
    df_method: str
    response: str = ""

    def __repr__(self) -> str:
        vc = ", ".join(f"{k} {v:.4g}" for k, v in self.variance_components.items())
        return (f"SplitPlotMixedFit({self.response!r}, REML; variances: {vc}; df: "
                f"{self.df_method})\n" + self.tests.to_string(index=False))

    def _repr_html_(self) -> str:
        return self.tests.to_html(index=False)

    def to_dict(self) -> dict:
        return {"response": self.response, "method": "REML (statsmodels MixedLM)",
                "fixed_effects": {k: float(v) for k, v in self.fixed_effects.items()},
                "variance_components": dict(self.variance_components),
                "tests": self.tests.to_dict(orient="records"), "df_method": self.df_method}


def split_plot_mixed_model(data: pd.DataFrame, response: str, *,
                           whole_plot_factors: list[str], subplot_factors: list[str],
                           whole_plot: str, block: str | None = None) -> SplitPlotMixedFit:
    """Fit a split-plot trial by REML with the whole plot as a random intercept.

    Parameters are those of :func:`trialkit.analysis.split_plot.split_plot_anova`; blocks
    enter as fixed effects.

    Returns
    -------
    SplitPlotMixedFit
    """
    from statsmodels.regression.mixed_linear_model import MixedLM

    _check_columns(data, [response, *whole_plot_factors, *subplot_factors, whole_plot,
                          *([block] if block else [])])
    data = data.reset_index(drop=True)
    y = pd.to_numeric(data[response], errors="coerce").to_numpy(dtype=float)
    if not np.isfinite(y).all():
        raise AnalysisError(f"response {response!r} has missing or non-numeric values")
    pieces, names, spans = [np.ones((len(data), 1))], ["Intercept"], []
    for name, stratum, x in _strata(data, whole_plot_factors, subplot_factors, whole_plot,
                                    block):
        if stratum == "error":
            continue
        spans.append((name, stratum, sum(p.shape[1] for p in pieces), x.shape[1]))
        pieces.append(x)
        names += [f"{name}[{j}]" for j in range(x.shape[1])]
    exog = np.hstack(pieces)
    groups = data[whole_plot].astype(str).to_numpy()
    result = MixedLM(y, exog, groups=groups).fit(reml=True, method=["bfgs", "lbfgs"], gtol=1e-9)
    beta = np.asarray(result.fe_params)
    cov = np.asarray(result.cov_params())[: exog.shape[1], : exog.shape[1]]
    n_wp = len(np.unique(groups))
    wp_cols = 1 + sum(k for _, s, _, k in spans if s != SUBPLOT)
    wp_df = n_wp - wp_cols
    sp_df = len(y) - exog.shape[1] - (n_wp - wp_cols)
    rows = []
    for name, stratum, start, k in spans:
        if not stratum:
            continue
        b = beta[start:start + k]
        v = cov[start:start + k, start:start + k]
        f = float(b @ np.linalg.solve(v, b)) / k
        edf = wp_df if stratum == WHOLE_PLOT else sp_df
        rows.append([name, k, f, float(stats.f.sf(f, k, edf)), stratum, edf])
    tests = pd.DataFrame(rows, columns=["term", "df", "f", "p_value", "error_stratum",
                                        "error_df"])
    components = {"whole_plot": float(np.asarray(result.cov_re)[0, 0]),
                  "subplot": float(result.scale)}
    return SplitPlotMixedFit(pd.Series(beta, index=names), components, tests,
                             "strata df by containment (exact when balanced)", response)
