"""The removal curves of every bath of a trial, its coupons as replicates.

:func:`fit_baths` fits each bath's curve (:func:`trialkit.responses.kinetics.fit_removal`)
and, where a bath has two or more coupons, each coupon's curve too, and makes the bath's
intervals in two stages (the method is described in :mod:`trialkit.responses.kinetics`).
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
from scipy import stats

from trialkit.exceptions import ResponseError
from trialkit.responses.kinetics import LEVELS, RemovalFit, _scaled, fit_removal

POOL_LOG_SE = 0.5  # coupons whose ln k is known to better than this join the pooling


def _coupon_fits(grp: pd.DataFrame, model: str, confidence: float) -> list[RemovalFit]:
    """One fit per coupon of a bath (coupons that cannot be fitted are left out)."""
    out = []
    if "coupon" not in grp:
        return out
    for _, cg in grp.groupby("coupon", sort=True):
        try:
            out.append(fit_removal(cg["elapsed_h"], cg["coverage_pct"],
                                   model=model if model != "auto" else "first_order",
                                   confidence=confidence))
        except ResponseError:
            continue
    return out


def _pooled_tau2(values: dict[str, np.ndarray], variances: dict[str, np.ndarray]
                 ) -> tuple[float, float]:
    """Coupon-to-coupon variance pooled over baths (method of moments) and its df."""
    ss = df = vsum = 0.0
    for b, v in values.items():
        if v.size < 2:
            continue
        ss += float(np.sum((v - v.mean()) ** 2))
        df += v.size - 1
        vsum += float(np.mean(variances[b])) * (v.size - 1)
    if df == 0:
        return math.nan, 0.0
    return max(ss / df - vsum / df, 0.0), df


def _two_stage(fits: dict[str, RemovalFit], coupon_fits: dict[str, list[RemovalFit]],
               confidence: float) -> None:
    """Replace each bath's intervals by the two-stage ones (module docstring)."""
    def collect(get):
        vals, var = {}, {}
        for b, cf in coupon_fits.items():
            pairs = [get(f) for f in cf]
            pairs = [(x, v) for x, v in pairs if math.isfinite(x) and math.isfinite(v)]
            if len(pairs) == len(cf) and len(pairs) >= 2:
                vals[b] = np.array([x for x, _ in pairs])
                var[b] = np.array([v for _, v in pairs])
        return vals, var

    def ln_k(f):
        return (math.log(f.k_per_h) if f.k_per_h > 0 else math.nan), f.log_k_se ** 2

    vals, var = collect(ln_k)
    pooled = {b for b in vals if np.all(np.sqrt(var[b]) <= POOL_LOG_SE)}
    tau2, df = _pooled_tau2({b: vals[b] for b in pooled}, var)
    ms_w = _pooled_tau2({b: vals[b] for b in pooled}, {b: np.zeros(1) for b in vals})[0]
    for b in vals:
        fit, m = fits[b], vals[b].size
        if b in pooled and df:
            se = math.sqrt(max(tau2 + float(np.mean(var[b])), ms_w) / m)
            bdf = df
            how = (f"coupons as replicates of the bath ({m} coupons; coupon-to-coupon "
                   f"variance pooled over {len(pooled)} baths, t on {df:g} df)")
        else:  # a poorly determined rate (an untreated bath, say): its own scatter only
            se = math.sqrt(max(float(np.var(vals[b], ddof=1)), float(np.mean(var[b]))) / m)
            bdf = float(m - 1)
            how = (f"coupons as replicates of the bath ({m} coupons, rate too poorly "
                   f"determined to pool; t on {m - 1} df)")
        tq = float(stats.t.ppf(0.5 + confidence / 2, bdf))
        centre = math.exp(float(np.mean(vals[b])))
        fit.coupons, fit.log_k_se, fit.df, fit.interval_method = m, se, bdf, how
        fit.k_coupon_mean = centre
        fit.k_lower = _scaled(centre, -tq * se)
        fit.k_upper = _scaled(centre, tq * se)
    for level in LEVELS:
        def ln_t(f, level=level):
            t = f.time_to(level)
            if not (math.isfinite(t) and t > 0):
                return math.nan, math.nan
            return math.log(t), f._delta_log_time_se(level) ** 2

        tv, tvar = collect(ln_t)
        tp = {b: tv[b] for b in tv if b in pooled}
        t_tau2, t_df = _pooled_tau2(tp, tvar)
        t_ms = _pooled_tau2(tp, {c: np.zeros(1) for c in tv})[0]
        for b in tv:
            if fits[b].coupons <= 1:
                continue
            if b in tp and t_df:
                v = max(t_tau2 + float(np.mean(tvar[b])), t_ms)
            else:
                v = max(float(np.var(tv[b], ddof=1)), float(np.mean(tvar[b])))
            fits[b].log_time_se_coupons[level] = math.sqrt(v / tv[b].size)
            fits[b].log_time_coupon_mean[level] = float(np.mean(tv[b]))


def fit_baths(timecourse: pd.DataFrame, *, model: str = "auto",
              confidence: float = 0.95) -> tuple[pd.DataFrame, dict[str, RemovalFit], list]:
    """Fit every bath of a long time-course table (columns bath, elapsed_h, coverage_pct,
    and coupon when known).

    The bath's curve is fitted to all its coupons' readings; when the table names the
    coupons and a bath has two or more of them, each coupon's curve is fitted as well and
    the bath's intervals treat the coupons as replicates (two stages, module docstring).
    Returns the table (one row per bath), the fits by bath and a list of
    ``(bath, message)`` for baths that could not be fitted.
    """
    missing = [c for c in ("bath", "elapsed_h", "coverage_pct") if c not in timecourse]
    if missing:
        raise ResponseError(
            f"time-course readings lack column(s) {missing}; got {list(timecourse.columns)}.")
    fits, failed, per_coupon = {}, [], {}
    for bath, grp in timecourse.groupby("bath", sort=True):
        try:
            fit = fit_removal(grp["elapsed_h"], grp["coverage_pct"], model=model,
                              confidence=confidence)
        except ResponseError as exc:
            failed.append((str(bath), str(exc)))
            continue
        fits[str(bath)] = fit
        cf = _coupon_fits(grp, fit.model, confidence)
        if len(cf) >= 2:
            per_coupon[str(bath)] = cf
    if per_coupon:
        _two_stage(fits, per_coupon, confidence)
    rows = []
    for bath, fit in fits.items():
        rows.append({
            "bath": bath, "kinetic_model": fit.model, "rate_constant_per_h": fit.k_per_h,
            "rate_constant_lower": fit.k_lower, "rate_constant_upper": fit.k_upper,
            "time_to_50_h": fit.time_to_50_h, "time_to_90_h": fit.time_to_90_h,
            "reached_90": fit.reached_90, "time_to_90_model_h": fit.time_to_90_model_h,
            "timecourse_n": fit.n, "kinetics_notes": " ".join(fit.notes),
        })
    return pd.DataFrame(rows), fits, failed
