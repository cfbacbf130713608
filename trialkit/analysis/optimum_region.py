"""The bootstrap confidence region of a surface's best point, and its per-factor shadow.

The best point of a fitted second-order surface, when it is an optimum inside the design
region, is where the gradient ``g(x) = b + 2Bx = G(x) beta`` vanishes.  For any candidate
``x`` the statistic

    ``T(x) = g(x)' V(x)^-1 g(x) / (k s^2)``,  ``V(x) = G(x) (X'X)^-1 G(x)'``

is the Box & Hunter (1954) test that ``x`` is the stationary point.  Instead of taking its
critical value from the F distribution (exact only under normal errors), this module
calibrates it by the residual bootstrap: resamples are the fitted values plus modified
residuals (leverage-rescaled and centred, Davison & Hinkley 1997, section 6.2.3), and the
critical value at ``x`` is the ``1 - alpha`` quantile of the resamples' own pivot
``(g*(x) - g(x))' V(x)^-1 (g*(x) - g(x)) / (k s*^2)``.  The region is the set of ``x``
in the design region where ``T(x)`` is at most that value: a *joint* region of every
factor at once (a studentized bootstrap by test inversion, so the intervals do not shrink
the way raw-residual percentile intervals do).  The per-factor intervals are the region's
shadow on each axis, so they hold jointly (simultaneously), and each alone is
conservative.  A region is evaluated on a grid of the design region, so it never leaves
the factors' ranges.

Examples
--------
>>> import numpy as np, pandas as pd
>>> from trialkit.trial.factors import Factor
>>> from trialkit.analysis.model import fit_model
>>> from trialkit.analysis.surface import quadratic_operators
>>> rng = np.random.default_rng(1)
>>> g = [(a, b) for a in (-1, 0, 1) for b in (-1, 0, 1)] * 2
>>> df = pd.DataFrame([{"a": a, "b": b, "y": 10 - (a - 0.2) ** 2 - 2 * b ** 2
...                     + rng.normal(0, 0.1)} for a, b in g])
>>> fs = [Factor.continuous("a", -1, 1), Factor.continuous("b", -1, 1)]
>>> fit = fit_model(df, "y", fs, "quadratic", block=None)
>>> reg = bootstrap_region(fit, quadratic_operators(fit), np.array([[-1.0, 1], [-1, 1]]),
...                        n_boot=500, seed=0)
>>> reg.contains({"a": 0.2, "b": 0.0}), reg.contains({"a": 1.0, "b": 1.0})
(True, False)
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from trialkit.analysis.linear import batched_refit, bootstrap_responses

METHOD = ("bootstrap-calibrated Box-Hunter region (modified residuals): the settings "
          "where the fitted gradient is not significantly different from zero")


@dataclass
class BootstrapRegion:
    """A bootstrap-calibrated confidence region of the stationary point (coded units).

    Attributes
    ----------
    names : tuple of str
        Continuous factors, in the order of the coded axes.
    level : float
        Confidence level.
    region : ndarray (k, 2)
        Coded bounds of the design region (the grid spans it).
    grid_coded : ndarray (m, k)
        Grid points of the design region that lie in the confidence region.
    reaches_edge : list of str
        Factors whose interval runs to an end of their range.
    """

    names: tuple[str, ...]
    level: float
    region: np.ndarray
    grid_coded: np.ndarray
    reaches_edge: list[str]
    _fit: object = field(repr=False)
    _ops: tuple = field(repr=False)
    _betas: np.ndarray = field(repr=False)
    _s2: np.ndarray = field(repr=False)
    _step: np.ndarray = field(repr=False)

    def _statistics(self, pts: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """T(x) of the fit and its bootstrap critical value at each point (m, k)."""
        fit = self._fit
        _, Lb, LB = self._ops
        k = len(self.names)
        out_t, out_q = [], []
        for start in range(0, pts.shape[0], 256):
            x = pts[start:start + 256]
            G = Lb[None] + 2 * np.einsum("mj,ijp->mip", x, LB)  # (m, k, p)
            V = np.einsum("mip,pq,mjq->mij", G, fit.ls.xtx_inv, G)
            Vinv = np.linalg.pinv(V)
            g = G @ fit.ls.beta  # (m, k)
            d = np.einsum("mip,pb->mib", G, self._betas) - g[:, :, None]  # (m, k, B)
            piv = np.einsum("mib,mij,mjb->mb", d, Vinv, d) / (k * self._s2[None, :])
            out_q.append(np.quantile(piv, self.level, axis=1))
            out_t.append(np.einsum("mi,mij,mj->m", g, Vinv, g) / (k * fit.ls.sigma2))
        return np.concatenate(out_t), np.concatenate(out_q)

    def contains(self, natural: Mapping[str, float]) -> bool:
        """True when ``natural`` (factor -> level) lies in the region."""
        fs = {f.name: f for f in self._fit.spec.used_factors}
        x = np.array([[fs[n].to_coded(natural[n]) for n in self.names]], dtype=float)
        if np.any(x[0] < self.region[:, 0] - 1e-12) or np.any(x[0] > self.region[:, 1]
                                                                 + 1e-12):
            return False
        t, q = self._statistics(x)
        return bool(t[0] <= q[0])

    def intervals(self) -> pd.DataFrame:
        """Per-factor shadow of the region: factor, low, high (natural units), joint."""
        fs = {f.name: f for f in self._fit.spec.used_factors}
        rows = []
        for i, n in enumerate(self.names):
            if self.grid_coded.size:
                lo = max(self.grid_coded[:, i].min() - self._step[i] / 2, self.region[i, 0])
                hi = min(self.grid_coded[:, i].max() + self._step[i] / 2, self.region[i, 1])
            else:
                lo = hi = np.nan
            rows.append({"factor": n, "low": float(fs[n].to_natural(lo)),
                         "high": float(fs[n].to_natural(hi)), "joint": True,
                         "reaches_edge": n in self.reaches_edge})
        return pd.DataFrame(rows)


def bootstrap_region(fit, ops, region: np.ndarray, *, n_boot: int, seed: int,
                     level: float | None = None, grid_n: int | None = None
                     ) -> BootstrapRegion:
    """The bootstrap-calibrated region of the stationary point (module docstring).

    ``grid_n`` points per factor span the design region (default 201, 61, 17, 9 for one
    to four factors and more); ``grid_n=0`` skips the grid (for :meth:`contains` only,
    as the coverage checks use it).
    """
    rng = np.random.default_rng(seed)
    X = fit.mm.X
    Ystar = bootstrap_responses(fit.ls, n_boot, rng)
    betas = batched_refit(X, Ystar)
    resid = Ystar - X @ betas
    s2 = np.einsum("ij,ij->j", resid, resid) / fit.df_resid
    k = region.shape[0]
    if grid_n is None:
        grid_n = 201 if k == 1 else 61 if k == 2 else 17 if k == 3 else 9
    if grid_n == 0:
        return BootstrapRegion(
            tuple(f.name for f in fit.spec.used_factors if f.is_continuous),
            1 - fit.alpha if level is None else level, region, np.zeros((0, k)), [], fit,
            ops, betas, s2, np.zeros(k))
    axes = [np.linspace(lo, hi, grid_n) for lo, hi in region]
    pts = np.stack(np.meshgrid(*axes, indexing="ij"), -1).reshape(-1, k)
    step = (region[:, 1] - region[:, 0]) / (grid_n - 1)
    lev = 1 - fit.alpha if level is None else level
    out = BootstrapRegion(tuple(f.name for f in fit.spec.used_factors if f.is_continuous),
                          lev, region, np.zeros((0, k)), [], fit, ops, betas, s2, step)
    t, q = out._statistics(pts)
    inside = pts[t <= q]
    out.grid_coded = inside
    edge = []
    for i, n in enumerate(out.names):
        if inside.size and (np.isclose(inside[:, i].min(), region[i, 0])
                            or np.isclose(inside[:, i].max(), region[i, 1])):
            edge.append(n)
    out.reaches_edge = edge
    return out
