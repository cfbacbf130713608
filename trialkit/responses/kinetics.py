"""Rust-removal kinetics from time-course readings: rate constants and times to clean.

Two models of the rust coverage ``c`` (% of area) against time in the bath ``t`` (h):

- ``first_order``: ``c(t) = c0·exp(-k·t)`` (2 parameters);
- ``lag_plateau``: nothing happens for a lag ``L``, then ``c`` falls exponentially to a
  plateau ``c_inf``: ``c(t) = c0`` for ``t <= L`` and
  ``c_inf + (c0 - c_inf)·exp(-k·(t - L))`` after (4 parameters).

Both are fitted by least squares (the linear parameters solved exactly for given ``k`` and
``L``), the lag-plateau model is kept where its AIC (``n·ln(SSE/n) + 2p``) is lower and it
has at least two residual degrees of freedom.  The confidence interval of ``k`` for one
curve is ``k·exp(± t(n-p)·se/k)`` (on the log scale, so it never goes below zero), ``se``
from the Gauss–Newton covariance ``s²(JᵀJ)⁻¹`` (what ``scipy.optimize.curve_fit``
returns).

A bath's coupons are replicates of the bath, not independent readings of one curve (each
coupon starts with its own coverage and removes at its own pace):
:func:`trialkit.responses.bath_kinetics.fit_baths` fits each coupon's curve too and makes
the bath's intervals in two stages. With ``ln k_bj`` the coupons' log rate constants of
bath ``b`` (``m_b`` coupons) and ``v_bj`` their curve-fit variances, the coupon-to-coupon
variance ``tau²`` is pooled over the baths (method of moments, within-bath mean square
``MS_w`` less the mean curve-fit variance, at least 0); a bath's ``Var(ln k) = max(tau² +
mean_j v_bj, MS_w) / m_b`` (its own curve-fit variance where that is larger, never less
than the pooled scatter), with ``Σ(m_b - 1)`` degrees of freedom, centred on the coupons'
mean ``ln k``. Coupons whose ``ln k`` has a standard error above ``POOL_LOG_SE`` (an
untreated bath barely moves) do not join the pooling: their bath uses its own scatter on
``m_b - 1`` df. The same is done for ln(time to 50 / 90 %), and :func:`time_ratio` uses a
t quantile on the right degrees of freedom.

Removal is counted from the fitted ``c0``: the time to X % removal is when
``c(t) = c0·(1 - X/100)``.  A time beyond the last reading is not reported as a result:
``time_to_90_h`` is then NaN, ``reached_90`` False and the model value is kept in
``time_to_90_model_h`` with a note.

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
    coupons : int
        Coupons whose curves were fitted one by one (1: one curve of all readings).
    log_k_se, df : float
        Standard error of ln k and the degrees of freedom of its t quantile.
    interval_method : str
        How the intervals were made (one curve, or coupons as replicates of the bath).
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
    coupons: int = 1
    log_k_se: float = math.nan
    df: float = math.nan
    interval_method: str = "one curve: reading noise only, t on n - p df"
    log_time_se_coupons: dict = field(default_factory=dict)
    log_time_coupon_mean: dict = field(default_factory=dict)
    k_coupon_mean: float = math.nan

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
        """Standard error of ln(time to ``level_pct``): from the coupons as replicates
        when the bath's coupons were fitted one by one, else by the delta method."""
        if level_pct in self.log_time_se_coupons:
            return self.log_time_se_coupons[level_pct]
        return self._delta_log_time_se(level_pct)

    def _delta_log_time_se(self, level_pct: float) -> float:
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
            "aic", "aic_other", "last_h", "confidence", "coupons", "log_k_se", "df",
            "interval_method")}
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


#: Nelder–Mead tolerances of the lag fit (on ln k and the lag in hours, and on the sum of
#: squares): k and the lag agree with a fit to 1e-10 / 1e-14 within 1e-6 relative
#: (tests/test_kinetics.py), far below the digits reported, at a fraction of the cost.
LAG_XATOL, LAG_FATOL = 1e-7, 1e-10


def _profile_lag(t, y, xatol: float = LAG_XATOL, fatol: float = LAG_FATOL):
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
                            options={"xatol": xatol, "fatol": fatol, "maxiter": 4000})
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
    log_k_se = k_se / k if k > 0 else math.nan
    fit = RemovalFit(
        model=chosen, params=params, k_per_h=k, k_se=k_se,
        k_lower=_scaled(k, -tq * log_k_se), k_upper=_scaled(k, tq * log_k_se),
        log_k_se=log_k_se, df=float(dof), time_to_50_h=math.nan, time_to_90_h=math.nan,
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
            # a time beyond the last reading is an extrapolation: not quoted (issue 17;
            # the fitted value stays in time_to_<level>_model_h)
            where = ("the model levels off first" if math.isinf(model_time)
                     else "a time beyond the readings would be a guess")
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

    The interval combines the two baths' standard errors of ln(time) (the baths being
    independent) with a t quantile on the Welch–Satterthwaite degrees of freedom of the
    two baths' own degrees of freedom (:attr:`RemovalFit.df`); when both baths' variances
    come from the same pooled coupon-to-coupon variance, on its degrees of freedom.
    Raises :class:`ResponseError` when either bath does not reach the level within its readings.
    """
    for f, name in ((fit, bath), (reference, reference_name)):
        if f.time_to(level_pct) > f.last_h:
            raise ResponseError(
                f"{name} does not reach {level_pct:g} % removal within its readings (last "
                f"at {f.last_h:g} h), so no time ratio is given. Compare at a lower level.")
    ta, tb = fit.time_to(level_pct), reference.time_to(level_pct)
    if level_pct in fit.log_time_coupon_mean and level_pct in reference.log_time_coupon_mean:
        ta = math.exp(fit.log_time_coupon_mean[level_pct])  # the coupons' geometric mean
        tb = math.exp(reference.log_time_coupon_mean[level_pct])
    sa, sb = fit.log_time_se(level_pct), reference.log_time_se(level_pct)
    se = math.hypot(sa, sb)
    dfs = [f.df if math.isfinite(f.df) and f.df > 0 else 1.0 for f in (fit, reference)]
    if fit.coupons > 1 and reference.coupons > 1:
        df = min(dfs)  # both from the same pooled coupon-to-coupon variance
    else:
        df = se ** 4 / (sa ** 4 / dfs[0] + sb ** 4 / dfs[1]) if se > 0 else min(dfs)
    z = float(stats.t.ppf(0.5 + confidence / 2, df))
    ratio = ta / tb
    lo, hi = ratio * math.exp(-z * se), ratio * math.exp(z * se)
    text = (f"{bath} takes {ratio:.2g}x as long as {reference_name} to {level_pct:g} % "
            f"removal ({confidence * 100:g} % CI {lo:.2g}-{hi:.2g})")
    return TimeRatio(bath, reference_name, level_pct, ratio, lo, hi, confidence, text)


def _scaled(value: float, log_step: float) -> float:
    """``value * exp(log_step)``, inf (or 0) where that overflows, NaN for NaN."""
    if not math.isfinite(log_step):
        return math.nan if math.isnan(log_step) else (math.inf if log_step > 0 else 0.0)
    return value * math.exp(min(log_step, 700.0))
