"""Concentration sweeps: the best level, its intervals, the practical lean level, fall-off.

A sweep varies one continuous factor (chelator concentration, say) over several levels.
The response is fitted as a quadratic in that factor.  Reported:

* the level of best response: the vertex ``-b1 / (2 b2)`` when it lies inside the swept
  range, else the better end;
* Fieller's interval for the vertex: the levels ``x`` where ``b1 + 2 b2 x`` (the slope)
  is not significantly different from zero — it can be unbounded when the curvature is
  not significant (then ``fieller_bounded`` is False);
* a residual-bootstrap percentile interval of the best level (all resamples solved at
  once);
* the *practical* lean level: the lowest level whose predicted response is within
  ``tolerance`` of the best (since the chelator costs money);
* a fall-off flag: the curvature is significant, the vertex is inside the range and the
  prediction at the highest level is worse than the best by more than the tolerance.

Examples
--------
>>> import numpy as np, pandas as pd
>>> from trialkit.trial.factors import Factor
>>> x = np.repeat([2.0, 5.0, 8.0, 11.0, 14.0, 17.0, 20.0], 2)
>>> y = 90 - 0.3 * (x - 7) ** 2 + np.tile([0.5, -0.5], 7)
>>> s = fit_sweep(pd.DataFrame({"chelator": x, "removal": y}), "removal",
...               Factor.continuous("chelator", 2, 20), tolerance=2.0, n_boot=0)
>>> round(s.best, 6), s.falls_off
(7.0, True)
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd
from scipy import stats

from trialkit.analysis.data import finite
from trialkit.analysis.linear import batched_refit, bootstrap_responses
from trialkit.analysis.model import fit_model
from trialkit.exceptions import AnalysisError
from trialkit.numbers import readable, readable_interval
from trialkit.trial.factors import Factor


@dataclass
class SweepResult:
    """The analysis of a one-factor sweep (natural units of the factor throughout).

    Attributes
    ----------
    fit : ModelFit
        Quadratic fit ``factor + factor^2``.
    factor : Factor
    aim : str
    best : float
        Level of best predicted response inside the range.
    vertex : float or None
        Vertex of the quadratic (may be outside the range).
    fieller_low, fieller_high : float
        Fieller interval of the vertex, cut to the swept range (the whole range when
        unbounded).
    fieller_bounded : bool
    boot_low, boot_high : float
        Bootstrap percentile interval of ``best`` (NaN when not computed).
    tolerance : float
        In response units.
    lean_level : float
        Lowest level whose prediction is within ``tolerance`` of the best.
    falls_off : bool
    optimum : dict
        settings, predicted, pi_low, pi_high at ``best``.
    boot_method : str
        How ``boot_low``/``boot_high`` were computed (``"none"`` when not computed).
    fieller_cut : list of str
        Ends (``"low"``, ``"high"``) where Fieller's interval ran beyond the swept range
        and was cut to it.
    """

    fit: object
    factor: Factor
    aim: str
    best: float
    vertex: float | None
    fieller_low: float
    fieller_high: float
    fieller_bounded: bool
    boot_low: float
    boot_high: float
    tolerance: float
    lean_level: float
    falls_off: bool
    drop_at_high: float
    optimum: dict
    boot_method: str = "none"
    fieller_cut: list = None

    def grid(self, n: int = 101) -> pd.DataFrame:
        """Prediction curve with confidence and prediction bands over the swept range."""
        lo, hi = self._range()
        x = np.linspace(lo, hi, n)
        pred = self.fit.predict(pd.DataFrame({self.factor.name: x}))
        return pd.concat([pd.DataFrame({self.factor.name: x}), pred], axis=1)

    def _range(self) -> tuple[float, float]:
        x = self.fit.natural[self.factor.name].astype(float)
        return float(x.min()), float(x.max())

    @property
    def summary(self) -> pd.DataFrame:
        return pd.DataFrame([{"factor": self.factor.name, "best": self.best,
                              "fieller_low": self.fieller_low,
                              "fieller_high": self.fieller_high, "boot_low": self.boot_low,
                              "boot_high": self.boot_high, "lean_level": self.lean_level,
                              "tolerance": self.tolerance, "falls_off": self.falls_off,
                              "drop_at_high": self.drop_at_high}])

    def to_dict(self) -> dict:
        row = {k: (finite(v) if isinstance(v, float) else v)
               for k, v in self.summary.iloc[0].to_dict().items()}
        row["falls_off"] = bool(self.falls_off)
        row["vertex"] = finite(self.vertex) if self.vertex is not None else None
        row["fieller_bounded"] = bool(self.fieller_bounded)
        row["aim"] = self.aim
        row["boot_method"] = self.boot_method
        row["fieller_cut_to_range"] = list(self.fieller_cut or [])
        row["swept_range"] = list(self._range())
        row["at_edge"] = bool(min(abs(self.best - e) for e in self._range())
                              <= 1e-9 * max(1.0, abs(self.best)))
        row["lean_level_interval"] = None
        row["lean_level_interval_note"] = (
            "the lean level has no interval: it is the lowest level whose prediction is "
            "within the tolerance of the best, a rule applied to the fitted curve")
        return {"sweep": row, "optimum": {k: (finite(v) if isinstance(v, float) else v)
                                          for k, v in self.optimum.items()}}

    def __repr__(self) -> str:
        best, lo, hi = readable_interval(self.best, self.fieller_low, self.fieller_high)
        return (f"SweepResult({self.factor.name}: best {best} [Fieller {lo}, {hi}], lean "
                f"level {readable(self.lean_level)}, falls off: {self.falls_off})")

    def _repr_html_(self) -> str:
        return self.summary.to_html(index=False)


def fieller_vertex(b1: float, b2: float, v11: float, v12: float, v22: float, t: float
                   ) -> tuple[float, float, bool]:
    """Fieller's interval for ``-b1 / (2 b2)``: solve ``(b1 + 2 b2 x)^2 <= t^2 Var``.

    Returns (low, high, bounded); unbounded sides are +-inf.
    """
    a = 4 * b2 * b2 - 4 * t * t * v22
    b = 4 * b1 * b2 - 4 * t * t * v12
    c = b1 * b1 - t * t * v11
    disc = b * b - 4 * a * c
    if a > 0 and disc >= 0:
        r = np.sqrt(disc)
        lo, hi = sorted(((-b - r) / (2 * a), (-b + r) / (2 * a)))
        return float(lo), float(hi), True
    return float("-inf"), float("inf"), False


def fit_sweep(table: pd.DataFrame, response: str, factor: Factor, *, aim: str = "higher",
              tolerance: float | None = None, relative_tolerance: float = 0.05,
              alpha: float = 0.05, n_boot: int = 2000, seed: int = 0,
              block: str | None = None, limits: tuple = (None, None),
              scale: str = "raw") -> SweepResult:
    """Analyse a sweep of ``factor`` (see the module docstring).

    Parameters
    ----------
    tolerance : float, optional
        Allowed shortfall from the best, in response units; default
        ``relative_tolerance * |best prediction|``.
    limits : tuple
        Physical range of the response (predictions and intervals are cut to it).
    scale : {"raw", "log", "logit"}
        The scale the quadratic is fitted on (the best level is the same on every
        monotone scale; predictions are transformed back).
    """
    if aim not in ("higher", "lower"):
        raise AnalysisError(f"aim must be 'higher' or 'lower', got {aim!r}")
    if not factor.is_continuous:
        raise AnalysisError(f"a sweep needs a continuous factor; {factor.name!r} is "
                            f"{factor.kind}")
    fit = fit_model(table, response, [factor], f"{factor.name} + {factor.name}^2",
                    block=block, alpha=alpha, limits=limits, scale=scale)
    levels = fit.natural[factor.name].astype(float)
    if levels.nunique() < 3:
        raise AnalysisError(f"a sweep needs at least three levels of {factor.name!r}; got "
                            f"{sorted(levels.unique())}")
    coefs = fit.coefficients.set_index("term")
    from trialkit.analysis.natural import natural_coefficients

    names, est, cov = natural_coefficients(fit.mm, fit.ls.beta, fit.cov)
    i1, i2 = names.index(factor.name), names.index(f"{factor.name}^2")
    b1, b2 = est[i1], est[i2]
    sign = 1.0 if aim == "higher" else -1.0
    lo, hi = float(levels.min()), float(levels.max())
    grid = np.linspace(lo, hi, 4001)
    pred = fit.predict(pd.DataFrame({factor.name: grid}), clip=False).predicted.to_numpy()
    j = int(np.argmax(sign * pred))
    vertex = -b1 / (2 * b2) if b2 != 0 else None
    best = float(vertex) if vertex is not None and lo <= vertex <= hi and sign * b2 < 0 \
        else float(grid[j])
    best_pred = fit.predict(pd.DataFrame({factor.name: [best]}), clip=False).iloc[0]
    tol = float(tolerance) if tolerance is not None else \
        relative_tolerance * abs(float(best_pred.predicted))
    ok = sign * (pred - best_pred.predicted) >= -tol
    lean = float(grid[np.argmax(ok)])
    t = float(stats.t.ppf(1 - alpha / 2, fit.df_resid))
    flo, fhi, bounded = fieller_vertex(b1, b2, cov[i1, i1], cov[i1, i2], cov[i2, i2], t)
    # the optimum lies in the swept range (a concentration is never negative): cut the
    # interval to it and say which ends were cut
    fieller_cut = [side for side, cut in (("low", flo < lo), ("high", fhi > hi)) if cut]
    flo, fhi = max(flo, lo), min(fhi, hi)
    p_curv = float(coefs.loc[f"{factor.name}^2", "p"])
    drop = float(sign * (best_pred.predicted - pred[-1]))
    falls = bool(p_curv < alpha and vertex is not None and lo < vertex < hi and drop > tol)
    blo = bhi = float("nan")
    boot_method = "none"
    if n_boot:
        blo, bhi, boot_method = _bootstrap_best(fit, factor, sign, lo, hi, n_boot, seed,
                                                alpha)
    shown = fit.predict(pd.DataFrame({factor.name: [best]})).iloc[0]  # cut to the range
    optimum = {"settings": {factor.name: best}, "predicted": float(shown.predicted),
               "pi_low": float(shown.pi_low), "pi_high": float(shown.pi_high),
               "ci_low": float(shown.ci_low), "ci_high": float(shown.ci_high),
               "clipped": bool(shown.clipped)}
    return SweepResult(fit, factor, aim, best, None if vertex is None else float(vertex),
                       flo, fhi, bounded, blo, bhi, tol, lean, falls, drop, optimum,
                       boot_method, fieller_cut)


def _bootstrap_best(fit, factor, sign, lo, hi, n_boot, seed, alpha):
    """Bootstrap interval of the best level: (low, high, method).

    Resamples are the fitted values plus modified residuals (leverage-rescaled, centred;
    :func:`trialkit.analysis.linear.modified_residuals`).  When the fitted quadratic has
    an optimum of the aim's kind inside the range, the interval is the studentized
    (bootstrap-t) interval of the vertex ``-c1 / (2 c2)``, its standard error by the delta
    method in every resample, cut to the swept range; otherwise (best at an end) the
    percentile interval of the best level of the resamples.
    """
    rng = np.random.default_rng(seed)
    X = fit.mm.X
    Ystar = bootstrap_responses(fit.ls, n_boot, rng)
    betas = batched_refit(X, Ystar)
    i1 = fit.mm.term_columns[factor.name].start
    i2 = fit.mm.term_columns[f"{factor.name}^2"].start
    c1, c2 = betas[i1], betas[i2]  # coded units
    clo, chi = factor.to_coded(lo), factor.to_coded(hi)
    b1, b2 = fit.ls.beta[i1], fit.ls.beta[i2]
    v_hat = -b1 / (2 * b2) if b2 != 0 else np.nan
    interior = bool(np.isfinite(v_hat) and sign * b2 < 0 and clo <= v_hat <= chi)
    if interior and fit.df_resid > 0:
        # the slope c1 + 2 c2 x is zero at the vertex: keep the levels x where the
        # slope's t statistic lies within the bootstrap quantile of its own pivot
        resid = Ystar - X @ betas
        s2 = np.einsum("ij,ij->j", resid, resid) / fit.df_resid
        V = fit.ls.xtx_inv[np.ix_([i1, i2], [i1, i2])]
        xs = np.linspace(clo, chi, 401)
        var0 = V[0, 0] + 4 * xs * V[0, 1] + 4 * xs * xs * V[1, 1]  # (g,)
        g_hat = b1 + 2 * b2 * xs
        g_star = c1[None, :] + 2 * c2[None, :] * xs[:, None]  # (g, B)
        with np.errstate(divide="ignore", invalid="ignore"):
            pivot = np.abs(g_star - g_hat[:, None]) / np.sqrt(var0[:, None] * s2[None, :])
            q = np.quantile(pivot, 1 - alpha, axis=1)
            stat = np.abs(g_hat) / np.sqrt(var0 * fit.ls.sigma2)
        keep = stat <= q
        j = int(np.argmin(np.abs(xs - v_hat)))
        keep[j] = True
        low_j, high_j = j, j
        while low_j > 0 and keep[low_j - 1]:
            low_j -= 1
        while high_j < xs.size - 1 and keep[high_j + 1]:
            high_j += 1
        return (float(factor.to_natural(xs[low_j])), float(factor.to_natural(xs[high_j])),
                "bootstrap-calibrated slope test (modified residuals): the levels where "
                "the fitted slope is not significantly different from zero")
    with np.errstate(divide="ignore", invalid="ignore"):
        xv = -c1 / (2 * c2)
    inside = (sign * c2 < 0) & (xv >= clo) & (xv <= chi)
    # otherwise the better end of the range
    f_lo = c1 * clo + c2 * clo ** 2
    f_hi = c1 * chi + c2 * chi ** 2
    end = np.where(sign * f_hi >= sign * f_lo, chi, clo)
    best = np.where(inside, xv, end)
    qlo, qhi = np.quantile(best, [alpha / 2, 1 - alpha / 2])
    return (float(factor.to_natural(qlo)), float(factor.to_natural(qhi)),
            "percentile bootstrap of the best level (modified residuals; best at an end)")
