"""Intervals of a prediction from a bath-level fit of a split-plot trial that count the
tank-to-tank variance.

The least-squares fit of a split plot treats every bath as independent; its intervals are
too narrow wherever the prediction rests on whole-plot contrasts (the intercept and every
hard-to-change factor do).  With the baths' covariance ``V = σ²_sub I + σ²_whole Z Z'``
(``Z`` the tank-run indicator matrix), the least-squares coefficients have the sandwich
covariance ``(X'X)⁻¹ X'VX (X'X)⁻¹`` — exact for the estimator used, whatever the balance.
A new bath stands in a new tank, so its prediction interval adds ``σ²_sub + σ²_whole``.
The t quantile uses the whole-plot error degrees of freedom (the smaller stratum: a
conservative choice where the prediction also rests on subplot contrasts).

Examples
--------
>>> import numpy as np
>>> X = np.column_stack([np.ones(8), np.repeat([-1.0, 1.0], 4)])
>>> cov = sandwich_covariance(X, np.repeat([0, 1, 2, 3], 2), subplot=1.0, whole_plot=2.0)
>>> round(float(cov[1, 1]), 4)   # (σ²_sub + 2 σ²_whole) / 8, two baths a tank
0.625
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np
import pandas as pd
from scipy import stats


def sandwich_covariance(X: np.ndarray, whole_plots, *, subplot: float,
                        whole_plot: float) -> np.ndarray:
    """Covariance of the least-squares coefficients when baths of one tank run share a
    random tank effect of variance ``whole_plot`` (bath variance ``subplot``)."""
    X = np.asarray(X, dtype=float)
    codes = pd.factorize(np.asarray(whole_plots))[0]
    zx = np.zeros((codes.max() + 1, X.shape[1]))
    np.add.at(zx, codes, X)
    xtx_inv = np.linalg.pinv(X.T @ X)
    middle = subplot * (X.T @ X) + max(whole_plot, 0.0) * (zx.T @ zx)
    return xtx_inv @ middle @ xtx_inv


def split_plot_predict(fit, settings: pd.DataFrame | Mapping, *, whole_plot_column: str,
                       components: Mapping[str, float], whole_plot_df: int,
                       n_new: int = 1) -> pd.DataFrame:
    """``fit.predict(settings)`` with its intervals widened for the tank-to-tank variance.

    ``fit`` is a :class:`trialkit.analysis.model.ModelFit` whose rows (``fit.natural``) hold
    ``whole_plot_column``; ``components`` has ``subplot`` and ``whole_plot`` variances (as
    :func:`trialkit.analysis.split_plot_trial.analyse_split_plot` gives them).  The
    ``n_new`` new baths of the prediction interval share one new tank.
    """
    out = fit.predict(settings, n_new=n_new, clip=False)
    s2, w2 = float(components["subplot"]), max(float(components["whole_plot"]), 0.0)
    cov = sandwich_covariance(fit.mm.X, fit.natural[whole_plot_column].to_numpy(),
                              subplot=s2, whole_plot=w2)
    x0 = fit.design_rows(settings)
    var = np.einsum("ij,jk,ik->i", x0, cov, x0)
    t = float(stats.t.ppf(1 - fit.alpha / 2, max(int(whole_plot_df), 1)))
    pred = out["predicted"].to_numpy()
    se, se_pi = np.sqrt(var), np.sqrt(var + s2 / n_new + w2)
    out["se_fit"] = se
    out["ci_low"], out["ci_high"] = pred - t * se, pred + t * se
    out["pi_low"], out["pi_high"] = pred - t * se_pi, pred + t * se_pi
    lo, hi = fit.limits
    cols = ["predicted", "ci_low", "ci_high", "pi_low", "pi_high"]
    raw = out[cols].to_numpy()
    cut = np.clip(raw, -np.inf if lo is None else lo, np.inf if hi is None else hi)
    out[cols] = cut
    out["clipped"] = np.any(cut != raw, axis=1)
    return out
