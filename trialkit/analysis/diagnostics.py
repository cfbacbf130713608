"""Residual diagnostics of a fitted model.

Per bath: fitted value, residual, internally studentized residual, leverage, Cook's
distance and run order (drift between days shows as a trend against run order).  Baths
are flagged when Cook's distance exceeds the median of F(p, n - p) (Cook & Weisberg),
leverage exceeds 2p/n, or the studentized residual exceeds 3 in size.  Normality of
residuals: Shapiro–Wilk.  When the residual spread grows with the mean (|residual|
correlated with the fitted value) and every response is positive, a Box–Cox power is
suggested from the profile likelihood.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd
from scipy import stats

from trialkit.analysis.data import finite
from trialkit.analysis.linear import rss_of
from trialkit.numbers import readable_p

LAMBDAS = (-1.0, -0.5, 0.0, 0.5, 1.0, 2.0)
NAMES = {-1.0: "reciprocal", -0.5: "reciprocal square root", 0.0: "log",
         0.5: "square root", 1.0: "none", 2.0: "square"}


@dataclass
class Diagnostics:
    """Diagnostics of one fit.

    Attributes
    ----------
    table : DataFrame
        bath, run, fitted, residual, studentized, leverage, cooks_distance, reason,
        normal_quantile (Blom plotting position of the studentized residual), flagged.
    normality : dict
        test ("shapiro"), statistic, p.
    spread : dict
        Spearman correlation of |residual| with fitted value: rho, p.
    drift : dict
        Spearman correlation of residuals with run order (drift between days): rho, p.
    box_cox : dict or None
        lambda_hat, ci_low, ci_high, suggested (rounded power), transform, recommended.
    """

    table: pd.DataFrame
    normality: dict
    spread: dict
    box_cox: dict | None
    drift: dict | None = None

    @property
    def summary(self) -> pd.DataFrame:
        return self.table

    @property
    def flagged(self) -> pd.DataFrame:
        return self.table[self.table.flagged]

    def to_dict(self) -> dict:
        def clean(d):
            return None if d is None else {k: finite(v) if isinstance(v, float) else v
                                           for k, v in d.items()}
        rows = [{k: (finite(v) if isinstance(v, (float, np.floating)) else v)
                 for k, v in r.items()} for r in self.table.to_dict("records")]
        return {"baths": rows, "normality": clean(self.normality),
                "spread": clean(self.spread), "drift": clean(self.drift),
                "box_cox": clean(self.box_cox)}

    def __repr__(self) -> str:
        return (f"Diagnostics({int(self.table.flagged.sum())} flagged, normality p "
                f"{readable_p(self.normality['p'])})")

    def _repr_html_(self) -> str:
        return self.table.to_html(index=False)


def box_cox_profile(X: np.ndarray, y: np.ndarray, lambdas: np.ndarray) -> np.ndarray:
    """Profile log-likelihood of the Box–Cox power for the regression of ``y`` on ``X`` (y > 0)."""
    n = len(y)
    logy = np.log(y)
    gm = np.exp(logy.mean())
    out = []
    for lam in lambdas:
        z = gm * logy if abs(lam) < 1e-12 else (y ** lam - 1) / (lam * gm ** (lam - 1))
        out.append(-0.5 * n * np.log(rss_of(X, z) / n))
    return np.array(out)


def diagnose(fit, *, alpha: float = 0.05) -> Diagnostics:
    """Diagnostics of ``fit`` (see the module docstring)."""
    n, p = fit.mm.X.shape
    h = fit.ls.leverage
    e = fit.ls.resid
    s2 = fit.sigma2
    with np.errstate(divide="ignore", invalid="ignore"):
        stud = e / np.sqrt(s2 * (1 - h))
        cooks = stud ** 2 * h / (p * (1 - h))
    nat = fit.natural
    table = pd.DataFrame({
        "bath": nat["bath"].astype(str) if "bath" in nat else [f"row {i + 1}" for i in range(n)],
        "run": nat["run"].to_numpy() if "run" in nat else np.arange(1, n + 1),
        "fitted": fit.fitted, "residual": e, "studentized": stud, "leverage": h,
        "cooks_distance": cooks})
    reasons = []
    cook_limit = float(stats.f.ppf(0.5, p, n - p)) if n > p else np.inf
    for c, lev, st in zip(cooks, h, stud, strict=True):
        r = []
        if np.isfinite(c) and c > cook_limit:
            r.append("cooks_distance")
        if lev > 2 * p / n:
            r.append("leverage")
        if np.isfinite(st) and abs(st) > 3:
            r.append("outlier")
        reasons.append(",".join(r))
    table["reason"] = reasons
    order = np.argsort(np.argsort(np.nan_to_num(stud)))
    table["normal_quantile"] = stats.norm.ppf((order + 0.625) / (n + 0.25))  # Blom
    table["flagged"] = table.reason != ""
    if n >= 3 and np.ptp(e) > 0:
        w, pw = stats.shapiro(e)
        normality = {"test": "shapiro", "statistic": float(w), "p": float(pw)}
    else:
        normality = {"test": "shapiro", "statistic": float("nan"), "p": float("nan")}
    if n >= 4 and np.ptp(fit.fitted) > 0 and np.ptp(e) > 0:
        rho, prho = stats.spearmanr(np.abs(e), fit.fitted)
        spread = {"rho": float(rho), "p": float(prho)}
    else:
        spread = {"rho": float("nan"), "p": float("nan")}
    if n >= 4 and np.ptp(table.run.astype(float)) > 0 and np.ptp(e) > 0:
        rho_d, p_d = stats.spearmanr(table.run.astype(float), e)
        drift = {"rho": float(rho_d), "p": float(p_d)}
    else:
        drift = {"rho": float("nan"), "p": float("nan")}
    y = fit.transform.back(fit.y + float(fit.shift))   # the response in its own unit
    box = None
    if np.all(y > 0) and fit.df_resid > 1:
        grid = np.linspace(-2, 2, 401)
        ll = box_cox_profile(fit.mm.X, y, grid)
        i = int(np.argmax(ll))
        inside = grid[ll >= ll[i] - stats.chi2.ppf(1 - alpha, 1) / 2]
        lo, hi = float(inside.min()), float(inside.max())
        lam = float(grid[i])
        in_ci = [v for v in LAMBDAS if lo <= v <= hi]
        suggested = min(in_ci or LAMBDAS, key=lambda v: abs(v - lam))
        grows = np.isfinite(spread["p"]) and spread["rho"] > 0 and spread["p"] < alpha
        box = {"lambda_hat": lam, "ci_low": lo, "ci_high": hi, "suggested": suggested,
               "transform": NAMES[suggested],
               "recommended": bool(grows and not lo <= 1.0 <= hi),
               "raw_scale_supported": bool(lo <= 1.0 <= hi),
               # the scale the model uses, checked: raw is power 1, log (of y) power 0; a
               # logit is no power transform, so Box-Cox does not judge it
               "chosen_scale": fit.transform.kind,
               "chosen_scale_supported": (bool(lo <= 1.0 <= hi) if fit.transform.is_raw
                                          else bool(lo <= 0.0 <= hi)
                                          if fit.transform.kind == "log"
                                          and not fit.transform.low else None)}
    return Diagnostics(table, normality, spread, box, drift)
