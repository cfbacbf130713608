"""Censored times: a log-normal accelerated-failure-time model fitted by maximum likelihood.

A bath that has not reached 50 % or 90 % removal by its last inspection is not dropped:
its time is *right-censored* at that inspection (the true time is longer).  The model is

    ``ln T = x'beta + sigma·e``,  ``e ~ N(0, 1)``,

over the same model matrix as the linear fits (:mod:`trialkit.trial.model_matrix`); an
observed time contributes its density, a censored one the probability of lasting longer,
``1 - Phi((ln c - x'beta) / sigma)``.  The log-likelihood is maximised with scipy's BFGS
from the least-squares start on the observed times; standard errors come from the
inverse of the numerical Hessian.  Without censoring the estimates equal ordinary least
squares on ln T (with ``sigma`` the maximum-likelihood ``sqrt(RSS / n)``).

Examples
--------
>>> import numpy as np, pandas as pd
>>> from trialkit.trial.factors import Factor
>>> x = np.repeat([1.0, 3.0, 5.0], 4)
>>> t = np.exp(1 + 0.3 * x + np.tile([-0.1, 0.1, -0.05, 0.05], 3))
>>> cens = t > 10
>>> fit = fit_censored(pd.DataFrame({"c": x, "t": np.minimum(t, 10), "cens": cens}), "t",
...                    [Factor.continuous("c", 1, 5)], "c", censored="cens")
>>> fit.n, fit.n_censored
(12, 4)
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd
from scipy import optimize, stats

from trialkit.analysis.data import finite
from trialkit.exceptions import AnalysisError
from trialkit.numbers import readable
from trialkit.trial.factors import Factor
from trialkit.trial.model_grammar import parse_model
from trialkit.trial.model_matrix import coded_frame, model_matrix


@dataclass
class CensoredFit:
    """A log-normal AFT fit.

    Attributes
    ----------
    response : str
    columns : list of str
        Model-matrix columns (coded units).
    beta, se : ndarray
        Coefficients of ln T and their standard errors.
    sigma : float
        Scale of ln T.
    n, n_censored : int
    loglik : float
    alpha : float
    """

    response: str
    columns: list
    beta: np.ndarray
    se: np.ndarray
    sigma: float
    n: int
    n_censored: int
    loglik: float
    alpha: float
    _spec: object
    _levels: dict
    _cov: np.ndarray

    @property
    def factors(self) -> list:
        """The factors the model holds."""
        return list(self._spec.used_factors) if self.columns != ["intercept"] else []

    @property
    def summary(self) -> pd.DataFrame:
        """Coefficients of ln T with Wald intervals and p-values (normal reference)."""
        z = float(stats.norm.ppf(1 - self.alpha / 2))
        with np.errstate(divide="ignore", invalid="ignore"):
            p = 2 * stats.norm.sf(np.abs(self.beta / self.se))
        return pd.DataFrame({"term": self.columns, "estimate": self.beta, "std_error": self.se,
                             "ci_low": self.beta - z * self.se,
                             "ci_high": self.beta + z * self.se,
                             "p": np.where(self.se > 0, p, np.nan)})

    def predict(self, settings: pd.DataFrame | dict, n_new: int = 1) -> pd.DataFrame:
        """Median time (``exp(x'beta)``) with its confidence interval (Wald, on ln T), and
        the interval of the geometric mean of ``n_new`` new baths (``sigma² / n_new``
        added on ln T)."""
        if isinstance(settings, dict):
            settings = pd.DataFrame([settings])
        coded = coded_frame(settings, self._spec.used_factors)
        X = model_matrix(self._spec, coded, levels=self._levels).X
        eta = X @ self.beta
        var = np.einsum("ij,jk,ik->i", X, self._cov[:-1, :-1], X)
        z = float(stats.norm.ppf(1 - self.alpha / 2))
        half = z * np.sqrt(var)
        half_new = z * np.sqrt(var + self.sigma ** 2 / n_new)
        return pd.DataFrame({"median": np.exp(eta), "ci_low": np.exp(eta - half),
                             "ci_high": np.exp(eta + half), "pi_low": np.exp(eta - half_new),
                             "pi_high": np.exp(eta + half_new)})

    def to_dict(self) -> dict:
        return {"model": "log-normal accelerated failure time (maximum likelihood)",
                "n": self.n, "n_censored": self.n_censored, "sigma": finite(self.sigma),
                "loglik": finite(self.loglik),
                "coefficients": [{k: (finite(v) if isinstance(v, float) else v)
                                  for k, v in r.items()}
                                 for r in self.summary.to_dict("records")]}

    def __repr__(self) -> str:
        return (f"CensoredFit({self.response!r}: {self.n} baths, {self.n_censored} "
                f"censored, sigma {readable(self.sigma, 3)})")


def _negloglik(theta, X, y, event):
    beta, log_s = theta[:-1], theta[-1]
    s = np.exp(log_s)
    z = (y - X @ beta) / s
    ll = np.where(event, stats.norm.logpdf(z) - log_s, stats.norm.logsf(z))
    return -float(ll.sum())


def fit_censored(table: pd.DataFrame, response: str, factors: Sequence[Factor],
                 model: str | None = "main", *, censored: str, alpha: float = 0.05
                 ) -> CensoredFit:
    """Fit ``response`` (a time, > 0) with right-censoring flagged in column ``censored``
    (True: the bath had not got there by this time).  Rows missing a factor, the time
    or the flag are left out.  ``model=None`` fits the intercept alone."""
    spec = parse_model(model or "main", factors)
    used = [f.name for f in spec.used_factors] if model else []
    cols = [*used, response, censored]
    missing = [c for c in cols if c not in table]
    if missing:
        raise AnalysisError(f"the table lacks column(s) {missing}; got {list(table.columns)}")
    rows = table.dropna(subset=cols)
    t = rows[response].astype(float).to_numpy()
    if np.any(t <= 0):
        raise AnalysisError(f"{response} must be positive to be fitted on the log scale; "
                            f"got {t[t <= 0][:3].tolist()}")
    event = ~rows[censored].astype(bool).to_numpy()
    if model:
        coded = coded_frame(rows[used].reset_index(drop=True), spec.used_factors)
        mm = model_matrix(spec, coded)
        X, names, levels = mm.X, list(mm.columns), mm.levels
    else:
        X, names, levels = np.ones((len(rows), 1)), ["intercept"], {}
    y = np.log(t)
    n, p = X.shape
    if event.sum() <= p:
        raise AnalysisError(f"only {int(event.sum())} baths reached the level; the model "
                            f"has {p} coefficients; use a smaller model or run longer")
    start, *_ = np.linalg.lstsq(X[event], y[event], rcond=None)
    r = y[event] - X[event] @ start
    theta0 = np.append(start, np.log(max(np.sqrt(r @ r / event.sum()), 1e-3)))
    res = optimize.minimize(_negloglik, theta0, args=(X, y, event), method="BFGS",
                            options={"gtol": 1e-9, "maxiter": 2000})
    theta = res.x
    H = _hessian(lambda th: _negloglik(th, X, y, event), theta)
    try:
        cov = np.linalg.inv(H)
    except np.linalg.LinAlgError:
        cov = np.full((p + 1, p + 1), np.nan)
    se = np.sqrt(np.clip(np.diag(cov)[:-1], 0, None))
    return CensoredFit(response, names, theta[:-1], se, float(np.exp(theta[-1])),
                       n, int((~event).sum()), -float(res.fun), alpha, spec, levels, cov)


def _hessian(f, x, h=1e-4):
    k = x.size
    H = np.zeros((k, k))
    for i in range(k):
        for j in range(i, k):
            ei, ej = np.eye(k)[i] * h, np.eye(k)[j] * h
            H[i, j] = H[j, i] = (f(x + ei + ej) - f(x + ei - ej) - f(x - ei + ej)
                                 + f(x - ei - ej)) / (4 * h * h)
    return H
