"""Several responses at once: Derringer–Suich (1980) desirability.

Each response gets an individual desirability ``d`` in [0, 1]:

* maximize: 0 below ``lower``, ``((y - lower) / (upper - lower)) ** weight`` between,
  1 above ``upper``;
* minimize: 1 below ``lower``, ``((upper - y) / (upper - lower)) ** weight`` between,
  0 above ``upper``;
* target: rises from ``lower`` to ``target`` with exponent ``weight``, falls to
  ``upper`` with exponent ``weight_upper``; 0 outside.

The overall desirability is the importance-weighted geometric mean
``D = (prod d_i ** r_i) ** (1 / sum r_i)``.  The best compromise is searched over the
design region (coded units) from a grid and several seeded starts (Nelder–Mead).

Examples
--------
>>> g = Goal("removal", "maximize", lower=50, upper=90)
>>> float(g.desirability(70.0)), float(g.desirability(95.0))
(0.5, 1.0)
>>> round(float(Goal("attack", "minimize", lower=0.1, upper=0.5).desirability(0.2)), 12)
0.75
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd
from scipy import optimize

from trialkit.analysis.data import finite
from trialkit.analysis.surface import continuous_factors, quadratic_operators
from trialkit.exceptions import AnalysisError

DIRECTIONS = ("maximize", "minimize", "target")


@dataclass(frozen=True)
class Goal:
    """What is wanted of one response.

    Attributes
    ----------
    response : str
    goal : {"maximize", "minimize", "target"}
    lower, upper : float
        Limits in response units (for maximize: unacceptable below ``lower``, fully
        satisfactory above ``upper``; reversed for minimize).
    target : float, optional
        Required for "target".
    weight, weight_upper : float
        Shape exponents (``s`` and, for target, ``t`` of Derringer–Suich).
    importance : float
        Relative importance ``r`` in the geometric mean.
    """

    response: str
    goal: str
    lower: float
    upper: float
    target: float | None = None
    weight: float = 1.0
    weight_upper: float = 1.0
    importance: float = 1.0

    def __post_init__(self):
        if self.goal not in DIRECTIONS:
            raise AnalysisError(f"goal of {self.response!r} must be one of {DIRECTIONS}, "
                                f"got {self.goal!r}")
        if not self.lower < self.upper:
            raise AnalysisError(f"{self.response!r}: lower ({self.lower}) must be below "
                                f"upper ({self.upper})")
        if self.goal == "target" and (self.target is None
                                      or not self.lower < self.target < self.upper):
            raise AnalysisError(f"{self.response!r}: a target goal needs lower < target < "
                                f"upper, got {self.lower}, {self.target}, {self.upper}")
        if min(self.weight, self.weight_upper, self.importance) <= 0:
            raise AnalysisError(f"{self.response!r}: weights and importance must be > 0")

    def desirability(self, y):
        """Individual desirability of value(s) ``y``."""
        y = np.asarray(y, dtype=float)
        lo, hi = self.lower, self.upper
        if self.goal == "maximize":
            return np.clip((y - lo) / (hi - lo), 0, 1) ** self.weight
        if self.goal == "minimize":
            return np.clip((hi - y) / (hi - lo), 0, 1) ** self.weight
        t = self.target
        up = np.clip((y - lo) / (t - lo), 0, 1) ** self.weight
        down = np.clip((hi - y) / (hi - t), 0, 1) ** self.weight_upper
        return np.where(y <= t, up, down)


@dataclass
class DesirabilityResult:
    """The best compromise of several responses.

    Attributes
    ----------
    settings : dict
        Factor settings (natural units) of the best compromise.
    coded : ndarray
    overall : float
        Overall desirability D there.
    summary : DataFrame
        response, goal, predicted, ci_low, ci_high, pi_low, pi_high, desirability,
        importance.
    goals : tuple of Goal
    """

    settings: dict
    coded: np.ndarray
    overall: float
    summary: pd.DataFrame
    goals: tuple
    _fits: Mapping = None
    _region: np.ndarray = None

    def grid(self, x: str, y: str, *, n: int = 41) -> pd.DataFrame:
        """Overall desirability over two factors (others at the best compromise)."""
        fit0 = next(iter(self._fits.values()))
        cont = [f.name for f in continuous_factors(fit0)]
        for v in (x, y):
            if v not in cont:
                raise AnalysisError(f"{v!r} is not a continuous factor; choose from {cont}")
        ix, iy = cont.index(x), cont.index(y)
        ax = np.linspace(*self._region[ix], n)
        ay = np.linspace(*self._region[iy], n)
        mx, my = np.meshgrid(ax, ay, indexing="ij")
        pts = np.repeat(self.coded[None, :], mx.size, axis=0)
        pts[:, ix], pts[:, iy] = mx.ravel(), my.ravel()
        D = _overall(self._fits, self.goals, pts, self._fixed())
        fs = {f.name: f for f in continuous_factors(fit0)}
        return pd.DataFrame({x: fs[x].to_natural(pts[:, ix]), y: fs[y].to_natural(pts[:, iy]),
                             "desirability": D})

    def _fixed(self):
        return {k: v for k, v in self.settings.items() if isinstance(v, str)}

    def to_dict(self) -> dict:
        rows = [{k: (finite(v) if isinstance(v, (float, np.floating)) else v)
                 for k, v in r.items()} for r in self.summary.to_dict("records")]
        return {"settings": self.settings, "overall_desirability": finite(self.overall),
                "responses": rows}

    def __repr__(self) -> str:
        return (f"DesirabilityResult(D={self.overall:.4f} at {self.settings})\n"
                f"{self.summary.to_string(index=False)}")

    def _repr_html_(self) -> str:
        return f"<p>D = {self.overall:.4f} at {self.settings}</p>" + \
            self.summary.to_html(index=False)


def _quadratic(fit, fixed):
    """(c, b, B) of the fitted surface in coded units (exact for order <= 2)."""
    key = ("quadratic", tuple(sorted((fixed or {}).items())))
    if key not in fit._cache:
        Lc, Lb, LB = quadratic_operators(fit, fixed)
        beta = fit.ls.beta
        fit._cache[key] = (float(Lc @ beta) + float(fit.shift), Lb @ beta, LB @ beta)
    return fit._cache[key]


def _predict_coded(fit, pts, fixed):
    c, b, B = _quadratic(fit, fixed)
    return c + pts @ b + np.einsum("gi,ij,gj->g", pts, B, pts)


def _overall(fits, goals, pts, fixed) -> np.ndarray:
    pts = np.atleast_2d(pts)
    logs = np.zeros(len(pts))
    total = 0.0
    for g in goals:
        d = g.desirability(_predict_coded(fits[g.response], pts, fixed))
        with np.errstate(divide="ignore"):
            logs = logs + g.importance * np.log(d)
        total += g.importance
    return np.exp(logs / total)


def optimize_desirability(fits: Mapping[str, object], goals: Sequence[Goal], *,
                          region: np.ndarray | None = None,
                          fixed: Mapping[str, str] | None = None, n_starts: int = 20,
                          seed: int = 0) -> DesirabilityResult:
    """Find the settings of highest overall desirability.

    Parameters
    ----------
    fits : mapping response name -> ModelFit
        Every fit must use the same continuous factors (they may differ in terms).
    goals : sequence of Goal
    region : array (k, 2), optional
        Coded bounds (default: the cube [-1, 1] for each continuous factor).
    fixed : mapping, optional
        Levels of categorical factors.
    """
    goals = tuple(goals)
    missing = [g.response for g in goals if g.response not in fits]
    if missing:
        raise AnalysisError(f"no fitted model for response(s) {missing}; fitted: "
                            f"{list(fits)}")
    fit0 = fits[goals[0].response]
    names = [f.name for f in continuous_factors(fit0)]
    for g in goals:
        other = [f.name for f in continuous_factors(fits[g.response])]
        if other != names:
            raise AnalysisError(f"model of {g.response!r} uses factors {other}, the first "
                                f"uses {names}; fit every response on the same factors")
    k = len(names)
    region = np.tile([-1.0, 1.0], (k, 1)) if region is None else np.asarray(region, float)
    steps = 11 if k <= 3 else 5
    grid = np.stack(np.meshgrid(*[np.linspace(lo, hi, steps) for lo, hi in region],
                                indexing="ij"), -1).reshape(-1, k)
    Dg = _overall(fits, goals, grid, fixed)
    rng = np.random.default_rng(seed)
    starts = list(grid[np.argsort(-Dg)[:8]])
    starts += list(rng.uniform(region[:, 0], region[:, 1], size=(n_starts, k)))

    def neg(x):
        return -_overall(fits, goals, np.clip(x, region[:, 0], region[:, 1])[None, :],
                         fixed)[0]

    best_x, best_v = grid[int(np.argmax(Dg))], float(Dg.max())
    for s in starts:
        r = optimize.minimize(neg, s, method="Nelder-Mead",
                              options={"xatol": 1e-7, "fatol": 1e-10, "maxiter": 4000})
        x = np.clip(r.x, region[:, 0], region[:, 1])
        if -r.fun > best_v:
            best_x, best_v = x, -r.fun
    if best_v <= 0:
        raise AnalysisError("no setting in the region gives every response a desirability "
                            "above zero; widen the limits or check the goals")
    settings = {n: float(f.to_natural(v)) for n, f, v in
                zip(names, continuous_factors(fit0), best_x, strict=True)}
    settings.update(dict(fixed or {}))
    rows = []
    for g in goals:
        fit = fits[g.response]
        p = fit.predict(pd.DataFrame([settings])).iloc[0]
        rows.append({"response": g.response, "goal": g.goal, "predicted": float(p.predicted),
                     "ci_low": float(p.ci_low), "ci_high": float(p.ci_high),
                     "pi_low": float(p.pi_low), "pi_high": float(p.pi_high),
                     "desirability": float(g.desirability(p.predicted)),
                     "importance": g.importance})
    return DesirabilityResult(settings, best_x, best_v, pd.DataFrame(rows), goals, fits,
                              region)


