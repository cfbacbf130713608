"""Rust-removal kinetics from time-course readings: rate constants and times to clean.

Two models of the rust coverage ``c`` (% of area) against time in the bath ``t`` (h):

- ``first_order``: ``c(t) = c0·exp(-k·t)`` (2 parameters);
- ``lag_plateau``: nothing happens for a lag ``L``, then ``c`` falls exponentially to a
  plateau ``c_inf``: ``c(t) = c0`` for ``t <= L`` and
  ``c_inf + (c0 - c_inf)·exp(-k·(t - L))`` after (4 parameters).

Both are fitted by least squares (the linear parameters solved exactly for given ``k`` and
``L``), the lag-plateau model is kept where its AIC (``n·ln(SSE/n) + 2p``) is lower and it
has at least two residual degrees of freedom.  The confidence interval of ``k`` is
``k ± t(n-p)·se``, ``se`` from the Gauss–Newton covariance ``s²(JᵀJ)⁻¹`` (what
``scipy.optimize.curve_fit`` returns).  Removal is counted from the fitted ``c0``: the
time to X % removal is when ``c(t) = c0·(1 - X/100)``.  A time beyond the last reading is
not reported as a result: ``time_to_90_h`` is then NaN, ``reached_90`` False and the model
value is kept in ``time_to_90_model_h`` with a note.

Examples
--------
>>> import numpy as np
>>> t = np.array([0.0, 2, 4, 8, 12, 24])
>>> fit = fit_removal(t, 80 * np.exp(-0.2 * t))
>>> fit.model, round(fit.k_per_h, 6), round(fit.time_to_50_h, 4)
('first_order', 0.2, 3.4657)
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
import pandas as pd
from scipy import optimize, stats

from trialkit.exceptions import ResponseError

LEVELS = (50.0, 90.0)


def _first_order_design(k: float, t: np.ndarray) -> np.ndarray:
    return np.exp(-k * t)[:, None]


def _lag_design(k: float, lag: float, t: np.ndarray) -> np.ndarray:
    dt = np.clip(t - lag, 0.0, None)
    e = np.exp(-k * dt)
    return np.column_stack([e, 1.0 - e])  # coefficients c0, c_inf


def first_order(t, c0, k):
    """``c0·exp(-k·t)``."""
    return c0 * np.exp(-k * np.asarray(t, dtype=float))


def lag_plateau(t, c0, c_inf, k, lag):
    """``c0`` until ``lag``, then ``c_inf + (c0 - c_inf)·exp(-k·(t - lag))``."""
    dt = np.clip(np.asarray(t, dtype=float) - lag, 0.0, None)
    return c_inf + (c0 - c_inf) * np.exp(-k * dt)


@dataclass
class RemovalFit:
    """A fitted removal curve of one bath (or one coupon).

    Attributes
    ----------
    model : str
        ``"first_order"`` or ``"lag_plateau"``.
    params : dict
        Fitted parameters (``c0``, ``k``, and ``c_inf``, ``lag`` for the lag model).
    k_per_h, k_se, k_lower, k_upper : float
        Rate constant (1/h), its standard error and confidence interval.
    time_to_50_h, time_to_90_h : float
        Times to 50 / 90 % removal; NaN when not reached within the readings.
    reached_50, reached_90 : bool
        Whether the model reaches the level at or before the last reading.
    time_to_50_model_h, time_to_90_model_h : float
        The model's time even when beyond the readings (inf if never reached).
    n, aic, aic_other, last_h : number
        Points, AIC of the kept and of the other model, last reading time.
    notes : list of str
        What the reader should know (extrapolation, fall-backs).
    """

    model: str
    params: dict
    k_per_h: float
    k_se: float
    k_lower: float
    k_upper: float
    time_to_50_h: float
    time_to_90_h: float
    reached_50: bool
    reached_90: bool
    time_to_50_model_h: float
    time_to_90_model_h: float
    n: int
    aic: float
    aic_other: float
    last_h: float
    confidence: float
    cov: np.ndarray = field(repr=False)
    notes: list[str] = field(default_factory=list)

    def time_to(self, level_pct: float, params: dict | None = None) -> float:
        """Model time (h) to ``level_pct`` % removal; ``inf`` when never reached."""
        p = self.params if params is None else params
        frac = 1.0 - level_pct / 100.0
        if self.model == "first_order":
            return -math.log(frac) / p["k"] if p["k"] > 0 else math.inf
        target = p["c0"] * frac
        span, rest = p["c0"] - p["c_inf"], target - p["c_inf"]
        if p["k"] <= 0 or span <= 0 or rest <= 0:
            return math.inf
        return p["lag"] + math.log(span / rest) / p["k"]

    def log_time_se(self, level_pct: float) -> float:
        """Standard error of ln(time to ``level_pct``) by the delta method."""
        names = list(self.params)
        base = self.time_to(level_pct)
        if not math.isfinite(base) or base <= 0:
            return math.nan
        grad = np.zeros(len(names))
        for i, name in enumerate(names):
            h = 1e-6 * max(abs(self.params[name]), 1e-6)
            p = dict(self.params)
            p[name] += h
            grad[i] = (math.log(self.time_to(level_pct, p)) - math.log(base)) / h
        return float(math.sqrt(max(grad @ self.cov @ grad, 0.0)))

    def to_dict(self) -> dict:
        out = {k: getattr(self, k) for k in (
            "model", "k_per_h", "k_se", "k_lower", "k_upper", "time_to_50_h", "time_to_90_h",
            "reached_50", "reached_90", "time_to_50_model_h", "time_to_90_model_h", "n",
            "aic", "aic_other", "last_h", "confidence")}
        out["params"] = dict(self.params)
        out["notes"] = list(self.notes)
        return out


def _profile_first_order(t, y):
    def sse(logk):
        x = _first_order_design(math.exp(logk), t)
        coef, *_ = np.linalg.lstsq(x, y, rcond=None)
        return float(np.sum((y - x @ coef) ** 2))

    span = max(t.max(), 1e-9)
    grid = np.linspace(math.log(1e-4 / span), math.log(1e3 / span), 121)
    vals = [sse(g) for g in grid]
    i = int(np.argmin(vals))
    lo, hi = grid[max(i - 1, 0)], grid[min(i + 1, len(grid) - 1)]
    res = optimize.minimize_scalar(sse, bounds=(lo, hi), method="bounded",
                                   options={"xatol": 1e-12})
    k = math.exp(res.x)
    c0 = float(np.linalg.lstsq(_first_order_design(k, t), y, rcond=None)[0][0])
    return {"c0": c0, "k": k}


def _profile_lag(t, y):
    def sse(theta):
        k, lag = math.exp(theta[0]), theta[1]
        x = _lag_design(k, lag, t)
        coef, *_ = np.linalg.lstsq(x, y, rcond=None)
        return float(np.sum((y - x @ coef) ** 2))

    span = max(t.max(), 1e-9)
    best = None
    for logk in np.linspace(math.log(0.1 / span), math.log(100 / span), 13):
        for lag in np.unique(np.concatenate([[0.0], t[t < t.max()]])):
            val = sse((logk, lag))
            if best is None or val < best[0]:
                best = (val, logk, lag)
    res = optimize.minimize(sse, x0=[best[1], best[2]], method="Nelder-Mead",
                            options={"xatol": 1e-10, "fatol": 1e-14, "maxiter": 4000})
    k, lag = math.exp(res.x[0]), max(float(res.x[1]), 0.0)
    c0, c_inf = np.linalg.lstsq(_lag_design(k, lag, t), y, rcond=None)[0]
    return {"c0": float(c0), "c_inf": float(c_inf), "k": k, "lag": lag}


def _jacobian(fun, params: dict, t: np.ndarray) -> np.ndarray:
    names = list(params)
    base = fun(t, **params)
    cols = []
    for name in names:
        h = 1e-7 * max(abs(params[name]), 1e-7)
        p = dict(params)
        p[name] += h
        cols.append((fun(t, **p) - base) / h)
    return np.column_stack(cols)


def _aic(sse: float, n: int, p: int) -> float:
    return n * math.log(max(sse, 1e-300) / n) + 2 * p


def fit_removal(elapsed_h, coverage_pct, *, model: str = "auto",
                confidence: float = 0.95) -> RemovalFit:
    """Fit a removal curve to coverage readings of one bath.

    Parameters
    ----------
    elapsed_h, coverage_pct : array-like
        Time in the bath (h, >= 0) and rust coverage (% of area, 0–100), NaN dropped.
    model : {"auto", "first_order", "lag_plateau"}
        ``"auto"`` keeps the lag-plateau model only where its AIC is lower.
    confidence : float
        Level of the rate-constant interval.

    Returns
    -------
    RemovalFit

    Raises
    ------
    ResponseError
        Fewer than 3 readings, values out of range, or an unknown model.
    """
    if model not in ("auto", "first_order", "lag_plateau"):
        raise ResponseError(
            f"model must be 'auto', 'first_order' or 'lag_plateau'; got {model!r}.")
    t = np.asarray(elapsed_h, dtype=float)
    y = np.asarray(coverage_pct, dtype=float)
    keep = ~(np.isnan(t) | np.isnan(y))
    t, y = t[keep], y[keep]
    if np.any(t < 0) or np.any((y < 0) | (y > 100)):
        raise ResponseError(
            "time-course readings need elapsed_h >= 0 and coverage_pct within 0-100; got "
            f"times {t[t < 0][:3].tolist()} and coverages {y[(y < 0) | (y > 100)][:3].tolist()}."
            " Correct the readings.")
    if t.size < 3 or np.unique(t).size < 3:
        raise ResponseError(
            f"a removal curve needs readings at 3 or more times; got {np.unique(t).size}. "
            "Record more inspections.")
    n = t.size
    fits = {"first_order": (_profile_first_order(t, y), first_order)}
    if model in ("auto", "lag_plateau") and n >= 6:
        fits["lag_plateau"] = (_profile_lag(t, y), lag_plateau)
    elif model == "lag_plateau":
        raise ResponseError(f"the lag-plateau model needs 6 or more readings; got {n}.")
    aics = {}
    floor = n * (1e-9 * max(1.0, float(np.max(np.abs(y))))) ** 2  # rounding-level SSE
    for name, (params, fun) in fits.items():
        sse = max(float(np.sum((y - fun(t, **params)) ** 2)), floor)
        aics[name] = _aic(sse, n, len(params))
    chosen = model if model != "auto" else min(aics, key=aics.get)
    params, fun = fits[chosen]
    other = [a for m, a in aics.items() if m != chosen]
    p = len(params)
    resid = y - fun(t, **params)
    dof = n - p
    s2 = float(resid @ resid) / dof
    if chosen == "first_order":  # analytic: d/dc0, d/dk of c0·exp(-k t)
        e = np.exp(-params["k"] * t)
        jac = np.column_stack([e, -params["c0"] * t * e])
    else:
        jac = _jacobian(fun, params, t)
    try:
        cov = s2 * np.linalg.inv(jac.T @ jac)
    except np.linalg.LinAlgError:
        cov = np.full((p, p), np.nan)
    k_index = list(params).index("k")
    k_se = float(math.sqrt(cov[k_index, k_index])) if cov[k_index, k_index] >= 0 else math.nan
    tq = float(stats.t.ppf(0.5 + confidence / 2, dof))
    k = params["k"]
    fit = RemovalFit(
        model=chosen, params=params, k_per_h=k, k_se=k_se, k_lower=k - tq * k_se,
        k_upper=k + tq * k_se, time_to_50_h=math.nan, time_to_90_h=math.nan,
        reached_50=False, reached_90=False, time_to_50_model_h=math.nan,
        time_to_90_model_h=math.nan, n=n, aic=aics[chosen],
        aic_other=other[0] if other else math.nan, last_h=float(t.max()),
        confidence=confidence, cov=cov,
    )
    for level in LEVELS:
        tag = int(level)
        model_time = fit.time_to(level)
        reached = bool(model_time <= fit.last_h)
        setattr(fit, f"time_to_{tag}_model_h", model_time)
        setattr(fit, f"reached_{tag}", reached)
        setattr(fit, f"time_to_{tag}_h", model_time if reached else math.nan)
        if not reached:
            where = ("the model levels off first" if math.isinf(model_time)
                     else f"the model would reach it at {model_time:.3g} h")
            fit.notes.append(
                f"{tag} % removal not reached within the readings (last at "
                f"{fit.last_h:g} h); {where}; not reported as a result.")
    return fit


@dataclass(frozen=True)
class TimeRatio:
    """Ratio of two baths' times to a removal level, with its interval."""

    bath: str
    reference: str
    level_pct: float
    ratio: float
    lower: float
    upper: float
    confidence: float
    text: str

    def to_dict(self) -> dict:
        return dict(self.__dict__)


def time_ratio(fit: RemovalFit, reference: RemovalFit, *, level_pct: float = 90.0,
               bath: str = "bath", reference_name: str = "reference",
               confidence: float = 0.95) -> TimeRatio:
    """How many times as long ``fit`` takes as ``reference`` to reach ``level_pct``.

    The interval combines the two baths' delta-method standard errors of ln(time), the
    baths being independent; normal quantile.  Raises :class:`ResponseError` when either
    bath does not reach the level within its readings.
    """
    for f, name in ((fit, bath), (reference, reference_name)):
        if f.time_to(level_pct) > f.last_h:
            raise ResponseError(
                f"{name} does not reach {level_pct:g} % removal within its readings (last "
                f"at {f.last_h:g} h), so no time ratio is given. Compare at a lower level.")
    ta, tb = fit.time_to(level_pct), reference.time_to(level_pct)
    se = math.hypot(fit.log_time_se(level_pct), reference.log_time_se(level_pct))
    z = float(stats.norm.ppf(0.5 + confidence / 2))
    ratio = ta / tb
    lo, hi = ratio * math.exp(-z * se), ratio * math.exp(z * se)
    text = (f"{bath} takes {ratio:.2g}x as long as {reference_name} to {level_pct:g} % "
            f"removal ({confidence * 100:g} % CI {lo:.2g}-{hi:.2g})")
    return TimeRatio(bath, reference_name, level_pct, ratio, lo, hi, confidence, text)


def fit_baths(timecourse: pd.DataFrame, *, model: str = "auto",
              confidence: float = 0.95) -> tuple[pd.DataFrame, dict[str, RemovalFit], list]:
    """Fit every bath of a long time-course table (columns bath, elapsed_h, coverage_pct).

    Coupons of one bath are pooled (they are subsamples of the bath).  Returns the table
    (one row per bath), the fits by bath and a list of ``(bath, message)`` for baths that
    could not be fitted.
    """
    missing = [c for c in ("bath", "elapsed_h", "coverage_pct") if c not in timecourse]
    if missing:
        raise ResponseError(
            f"time-course readings lack column(s) {missing}; got {list(timecourse.columns)}.")
    rows, fits, failed = [], {}, []
    for bath, grp in timecourse.groupby("bath", sort=True):
        try:
            fit = fit_removal(grp["elapsed_h"], grp["coverage_pct"], model=model,
                              confidence=confidence)
        except ResponseError as exc:
            failed.append((str(bath), str(exc)))
            continue
        fits[str(bath)] = fit
        rows.append({
            "bath": str(bath), "kinetic_model": fit.model, "rate_constant_per_h": fit.k_per_h,
            "rate_constant_lower": fit.k_lower, "rate_constant_upper": fit.k_upper,
            "time_to_50_h": fit.time_to_50_h, "time_to_90_h": fit.time_to_90_h,
            "reached_90": fit.reached_90, "time_to_90_model_h": fit.time_to_90_model_h,
            "timecourse_n": fit.n, "kinetics_notes": " ".join(fit.notes),
        })
    return pd.DataFrame(rows), fits, failed
