"""Second-order response surfaces: canonical analysis, best point, optimum intervals.

The surface is the fitted model as a function of its continuous factors (coded units),
with categorical factors held at given levels (every combination is searched when none
is given).  For a model at most quadratic in the continuous factors,
``f(x) = c + b'x + x'Bx`` exactly; ``b`` and ``B`` are linear in the coefficients, which
gives

* the canonical analysis: stationary point ``x_s = -B^-1 b / 2``, eigenvalues of ``B``
  and its kind (maximum, minimum, saddle, or ridge when an eigenvalue is near zero);
* the Box & Hunter (1954) confidence region of the stationary point: the ``x`` where the
  gradient ``b + 2Bx = G(x) beta`` is not significantly different from zero;
* the best point inside the design region (bounded optimisation from several starts) with
  its prediction, confidence and prediction intervals;
* a residual-bootstrap interval of the best point, every resample solved at once.

Examples
--------
>>> import numpy as np, pandas as pd
>>> from trialkit.trial.factors import Factor
>>> from trialkit.analysis.model import fit_model
>>> g = [(a, b) for a in (-1, 0, 1) for b in (-1, 0, 1)]
>>> df = pd.DataFrame([{"a": a, "b": b, "y": 10 - (a - 0.2) ** 2 - 2 * b ** 2 + 0.01 * i}
...                    for i, (a, b) in enumerate(g)])
>>> fs = [Factor.continuous("a", -1, 1), Factor.continuous("b", -1, 1)]
>>> s = fit_surface(fit_model(df, "y", fs, "quadratic", block=None))
>>> s.kind, round(s.optimum["settings"]["a"], 2)
('maximum', 0.21)
"""

from __future__ import annotations

import itertools
from collections.abc import Mapping
from dataclasses import dataclass, field

import numpy as np
import pandas as pd
from scipy import optimize, stats

from trialkit.analysis.data import finite
from trialkit.analysis.linear import batched_refit, bootstrap_responses
from trialkit.analysis.optimum_region import METHOD, bootstrap_region
from trialkit.exceptions import AnalysisError
from trialkit.numbers import readable, readable_interval, settings_text
from trialkit.trial.model_matrix import model_matrix

AIMS = ("higher", "lower")
RIDGE_RATIO = 1e-3


def continuous_factors(fit) -> list:
    return [f for f in fit.spec.used_factors if f.is_continuous]


def coded_rows(fit, xc: np.ndarray, fixed: Mapping[str, str] | None = None) -> np.ndarray:
    """Model-matrix rows at coded continuous settings ``xc`` (m, k) and fixed labels."""
    cont = continuous_factors(fit)
    xc = np.atleast_2d(np.asarray(xc, dtype=float))
    frame = pd.DataFrame(xc, columns=[f.name for f in cont])
    for f in fit.spec.used_factors:
        if f.is_categorical:
            levels = fit.mm.levels[f.name]
            frame[f.name] = (fixed or {}).get(f.name, levels[0])
    X = model_matrix(fit.spec, frame, coding=fit.mm.coding, levels=fit.mm.levels).X
    if "block" in fit.mm.term_columns:
        X[:, fit.mm.term_columns["block"]] = 0.0
    return X


def quadratic_operators(fit, fixed=None) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Matrices ``Lc`` (p,), ``Lb`` (k, p), ``LB`` (k, k, p) with c, b, B = L @ beta."""
    k = len(continuous_factors(fit))
    for t in fit.spec.terms:
        n_cont = sum(fit.spec.factor(n).is_continuous for n in t.factors) * t.power
        if n_cont > 2:
            raise AnalysisError(f"term {t.name!r} is above second order in the continuous "
                                "factors; a response surface needs a model of order two")
    eye = np.eye(k)
    pts = [np.zeros(k)] + [eye[i] for i in range(k)] + [-eye[i] for i in range(k)]
    pairs = list(itertools.combinations(range(k), 2))
    pts += [eye[i] + eye[j] for i, j in pairs]
    R = coded_rows(fit, np.array(pts), fixed)
    f0, fp, fm = R[0], R[1:k + 1], R[k + 1:2 * k + 1]
    Lb = (fp - fm) / 2
    LB = np.zeros((k, k, R.shape[1]))
    for i in range(k):
        LB[i, i] = (fp[i] + fm[i] - 2 * f0) / 2
    for m, (i, j) in enumerate(pairs):
        LB[i, j] = LB[j, i] = (R[2 * k + 1 + m] - fp[i] - fp[j] + f0) / 2
    return f0, Lb, LB


@dataclass
class SurfaceResult:
    """A fitted second-order surface and its best point.

    Attributes
    ----------
    fit : ModelFit
    aim : str
    factors : tuple of str
        Continuous factors of the surface (coded axes in this order).
    fixed : dict
        Levels of categorical factors at the best point.
    b, B : ndarray
        Linear coefficients and symmetric quadratic matrix (coded units).
    stationary_coded : ndarray or None
    eigenvalues, eigenvectors : ndarray
    kind : str
        "maximum", "minimum", "saddle" or "ridge".
    region : ndarray, shape (k, 2)
        Coded bounds searched (the observed design region).
    optimum : dict
        settings (natural), coded, predicted, se_fit, ci_low, ci_high, pi_low, pi_high,
        on_boundary (factor names at a bound).
    bootstrap : DataFrame or None
        factor, low, high (natural units) of the best point over resamples.
    """

    fit: object
    aim: str
    factors: tuple[str, ...]
    fixed: dict
    b: np.ndarray
    B: np.ndarray
    stationary_coded: np.ndarray | None
    eigenvalues: np.ndarray
    eigenvectors: np.ndarray
    kind: str
    region: np.ndarray
    optimum: dict
    bootstrap: pd.DataFrame | None = None
    _ops: tuple = field(default=(), repr=False)

    def _natural(self, coded: np.ndarray) -> dict:
        fs = {f.name: f for f in continuous_factors(self.fit)}
        out = {n: float(fs[n].to_natural(v)) for n, v in zip(self.factors, coded, strict=True)}
        out.update(self.fixed)
        return out

    @property
    def stationary_point(self) -> dict | None:
        """Stationary point in natural units (None when B is singular)."""
        if self.stationary_coded is None:
            return None
        return self._natural(self.stationary_coded)

    def region_statistic(self, natural: Mapping[str, float]) -> tuple[float, float]:
        """Box–Hunter statistic at a point and its critical value (point is inside the
        1 - alpha confidence region of the stationary point when statistic <= critical)."""
        fs = {f.name: f for f in continuous_factors(self.fit)}
        x = np.array([fs[n].to_coded(natural[n]) for n in self.factors])
        _, Lb, LB = self._ops
        G = Lb + 2 * np.einsum("j,ijp->ip", x, LB)
        g = G @ self.fit.ls.beta
        V = G @ self.fit.cov @ G.T
        k = len(self.factors)
        stat = float(g @ np.linalg.solve(V, g)) / k
        crit = float(stats.f.ppf(1 - self.fit.alpha, k, self.fit.df_resid))
        return stat, crit

    def region_contains(self, natural: Mapping[str, float]) -> bool:
        """True when ``natural`` lies in the stationary point's confidence region."""
        stat, crit = self.region_statistic(natural)
        return stat <= crit

    def grid(self, x: str | None = None, y: str | None = None, *, n: int = 41,
             at: Mapping[str, float] | None = None) -> pd.DataFrame:
        """Predictions over a grid of one or two factors (others at the optimum).

        Returns natural-unit factor columns plus predicted, se_fit, ci_low, ci_high,
        pi_low, pi_high — the data of contour and surface plots.
        """
        names = [v for v in (x or self.factors[0], y) if v is not None]
        if y is None and len(self.factors) > 1 and x is None:
            names.append(self.factors[1])
        base = dict(self.optimum["settings"])
        base.update(at or {})
        fs = {f.name: f for f in continuous_factors(self.fit)}
        axes = []
        for nm in names:
            if nm not in fs:
                raise AnalysisError(f"{nm!r} is not a continuous factor of the surface; "
                                    f"choose from {list(self.factors)}")
            lo, hi = self.region[self.factors.index(nm)]
            axes.append(fs[nm].to_natural(np.linspace(lo, hi, n)))
        mesh = np.meshgrid(*axes, indexing="ij")
        frame = pd.DataFrame({k: v for k, v in base.items()}, index=range(mesh[0].size))
        for nm, m in zip(names, mesh, strict=True):
            frame[nm] = m.ravel()
        pred = self.fit.predict(frame)
        return pd.concat([frame[list(base)], pred], axis=1)

    @property
    def summary(self) -> pd.DataFrame:
        """One row per factor: stationary and best settings (natural), eigenvalue."""
        st = self.stationary_point or {}
        rows = [{"factor": n, "stationary": st.get(n, np.nan),
                 "best": self.optimum["settings"][n], "eigenvalue": self.eigenvalues[i]}
                for i, n in enumerate(self.factors)]
        out = pd.DataFrame(rows)
        if self.bootstrap is not None:
            out = out.merge(self.bootstrap, on="factor", how="left")
        return out

    def to_dict(self) -> dict:
        opt = {k: (finite(v) if isinstance(v, (float, np.floating)) else v)
               for k, v in self.optimum.items() if k != "coded"}
        return {"kind": self.kind, "aim": self.aim,
                "eigenvalues": [float(v) for v in self.eigenvalues],
                "stationary_point": self.stationary_point, "optimum": opt,
                "bootstrap": None if self.bootstrap is None
                else [{k: (finite(v) if isinstance(v, float) else v) for k, v in r.items()}
                      for r in self.bootstrap.to_dict("records")]}

    def __repr__(self) -> str:
        o = self.optimum
        est, lo, hi = readable_interval(o["predicted"], o["pi_low"], o["pi_high"])
        return (f"SurfaceResult({self.kind}, best {settings_text(o['settings'])} -> {est} "
                f"[{lo}, {hi}])")

    def _repr_html_(self) -> str:
        return f"<p>{self.kind}; best predicted {readable(self.optimum['predicted'])}</p>" + \
            self.summary.to_html(index=False)


def _kind(eig: np.ndarray) -> str:
    scale = np.max(np.abs(eig)) if eig.size else 0.0
    if scale == 0 or np.any(np.abs(eig) < RIDGE_RATIO * scale):
        return "ridge"
    if np.all(eig < 0):
        return "maximum"
    if np.all(eig > 0):
        return "minimum"
    return "saddle"


def _best_in_box(c, b, B, region, sign, starts):
    def obj(x):
        return -sign * (c + b @ x + x @ B @ x)

    def jac(x):
        return -sign * (b + 2 * B @ x)

    best = None
    for s in starts:
        r = optimize.minimize(obj, np.clip(s, region[:, 0], region[:, 1]), jac=jac,
                              method="L-BFGS-B", bounds=region)
        if best is None or r.fun < best.fun - 1e-12:
            best = r
    return best.x, -sign * best.fun


def fit_surface(fit, *, aim: str = "higher", fixed: Mapping[str, str] | None = None,
                region: np.ndarray | None = None, n_tries: int = 12, seed: int = 0,
                n_boot: int = 0) -> SurfaceResult:
    """Canonical analysis and best point of a second-order model.

    Parameters
    ----------
    fit : ModelFit
        With squares of the continuous factors in its model.
    aim : {"higher", "lower"}
    fixed : mapping, optional
        Categorical factor levels to hold; default: every combination is searched.
    region : array (k, 2), optional
        Coded bounds; default: the observed coded range of each factor.
    n_tries : int
        Random starts (seeded) besides the centre, the corners and the stationary point.
    seed : int
    n_boot : int
        Residual-bootstrap resamples for the best point's interval (0 = none).
    """
    if aim not in AIMS:
        raise AnalysisError(f"aim must be one of {AIMS}, got {aim!r}")
    cont = continuous_factors(fit)
    if not cont:
        raise AnalysisError("a response surface needs at least one continuous factor")
    names = tuple(f.name for f in cont)
    if region is None:
        xc = fit.coded[list(names)].astype(float).to_numpy()
        region = np.column_stack([xc.min(axis=0), xc.max(axis=0)])
    region = np.asarray(region, dtype=float)
    sign = 1.0 if aim == "higher" else -1.0
    cats = [f for f in fit.spec.used_factors if f.is_categorical and f.name != "block"]
    if fixed is not None:
        combos = [dict(fixed)]
    else:
        combos = [dict(zip([f.name for f in cats], lv, strict=True))
                  for lv in itertools.product(*[fit.mm.levels[f.name] for f in cats])]
    rng = np.random.default_rng(seed)
    k = len(names)
    corners = list(itertools.product(*region)) if k <= 4 else []
    beta = fit.ls.beta
    best = None
    for combo in combos[:64]:
        ops = quadratic_operators(fit, combo)
        c, b, B = ops[0] @ beta, ops[1] @ beta, ops[2] @ beta
        starts = [region.mean(axis=1), *map(np.array, corners),
                  *rng.uniform(region[:, 0], region[:, 1], size=(n_tries, k))]
        try:
            xs = np.linalg.solve(B, -b / 2)
            starts.append(xs)
        except np.linalg.LinAlgError:
            xs = None
        x, val = _best_in_box(c, b, B, region, sign, starts)
        if best is None or sign * val > sign * best[1]:
            best = (x, val, combo, ops, b, B, xs)
    x, val, combo, ops, b, B, xs = best
    eig, vec = np.linalg.eigh(B)
    result = SurfaceResult(fit, aim, names, combo, b, B, xs, eig, vec, _kind(eig), region,
                           {}, None, ops)
    settings = result._natural(x)
    pred = fit.predict(pd.DataFrame([settings])).iloc[0]
    at_bound = [n for i, n in enumerate(names)
                if np.isclose(x[i], region[i, 0]) or np.isclose(x[i], region[i, 1])]
    result.optimum = {"settings": settings, "coded": x, "predicted": float(pred.predicted),
                      "se_fit": float(pred.se_fit), "ci_low": float(pred.ci_low),
                      "ci_high": float(pred.ci_high), "pi_low": float(pred.pi_low),
                      "pi_high": float(pred.pi_high), "on_boundary": at_bound,
                      "clipped": bool(pred.clipped)}
    if n_boot:
        result.bootstrap = bootstrap_optimum(fit, ops, region, sign, n_boot, seed)
    return result


def region_statistics(fit, Y: np.ndarray, natural: Mapping[str, float],
                      fixed: Mapping[str, str] | None = None) -> tuple[np.ndarray, float]:
    """Box–Hunter statistics at one point for many response vectors at once.

    ``Y`` (n, m) holds m responses observed on ``fit``'s design (same rows).  Returns the
    m statistics and the critical value; the point lies in the 1 - alpha confidence
    region of the stationary point of response j when ``stat[j] <= critical``.  Used for
    simulation checks of coverage, all refits in one batch.
    """
    cont = continuous_factors(fit)
    x = np.array([f.to_coded(natural[f.name]) for f in cont])
    _, Lb, LB = quadratic_operators(fit, fixed)
    G = Lb + 2 * np.einsum("j,ijp->ip", x, LB)  # (k, p)
    betas = batched_refit(fit.mm.X, Y)
    resid = Y - fit.mm.X @ betas
    sigma2 = np.einsum("ij,ij->j", resid, resid) / fit.df_resid
    g = G @ betas  # (k, m)
    V0 = G @ fit.ls.xtx_inv @ G.T
    k = len(cont)
    stat = np.einsum("im,ij,jm->m", g, np.linalg.inv(V0), g) / sigma2 / k
    return stat, float(stats.f.ppf(1 - fit.alpha, k, fit.df_resid))


def resample_stationary_points(fit, ops, Ystar: np.ndarray
                               ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Stationary points of the surface refitted to every column of ``Ystar`` (n, B), in
    one batch (one QR): ``xs`` (B, k), and each refit's gradient ``b`` (k, B) and
    curvature ``B`` (B, k, k) in coded units."""
    _, Lb, LB = ops
    betas = batched_refit(fit.mm.X, Ystar)  # (p, B)
    bs = Lb @ betas
    Bs = np.einsum("ijp,pb->bij", LB, betas)
    with np.errstate(all="ignore"):
        xs = np.linalg.solve(Bs, -bs.T[:, :, None] / 2)[:, :, 0]
    return xs, bs, Bs


def bootstrap_optimum(fit, ops, region: np.ndarray, sign: float, n_boot: int, seed: int,
                      *, level: float | None = None, grid_n: int | None = None
                      ) -> pd.DataFrame:
    """Bootstrap interval of the best point, one row per factor.

    When the fitted stationary point is an optimum of the aim's kind inside the region,
    the intervals are the shadow of the joint bootstrap-calibrated region of the
    stationary point (:mod:`trialkit.analysis.optimum_region`): they hold jointly
    (``joint`` True).  Otherwise (best on the edge, a saddle or a ridge) they are
    percentile intervals of the resamples' best points, one factor at a time
    (``joint`` False).  Resamples use modified residuals
    (:func:`trialkit.analysis.linear.modified_residuals`); every one is solved in one
    batch.  Columns: factor, low, high, share_interior, joint, reaches_edge, method.
    """
    _, Lb, LB = ops
    b, B = Lb @ fit.ls.beta, np.einsum("ijp,p->ij", LB, fit.ls.beta)
    k = b.size
    try:
        xs_hat = np.linalg.solve(B, -b / 2)
        interior = bool(np.all(sign * np.linalg.eigvalsh(B) < 0)
                        and np.all((xs_hat >= region[:, 0]) & (xs_hat <= region[:, 1])))
    except np.linalg.LinAlgError:
        interior = False
    if interior and fit.df_resid > 0:
        reg = bootstrap_region(fit, ops, region, n_boot=n_boot, seed=seed, level=level)
        out = reg.intervals()
        out["share_interior"] = float("nan")
        out["method"] = METHOD
        return out[["factor", "low", "high", "share_interior", "joint", "reaches_edge",
                    "method"]]
    rng = np.random.default_rng(seed)
    xs, bs, Bs = resample_stationary_points(fit, ops,
                                            bootstrap_responses(fit.ls, n_boot, rng))
    eig = np.linalg.eigvalsh(Bs)
    good = np.all(sign * eig < 0, axis=1) & np.all(np.isfinite(xs), axis=1)
    good &= np.all((xs >= region[:, 0]) & (xs <= region[:, 1]), axis=1)
    if not np.all(good):
        grid_n = grid_n or (41 if k <= 2 else 15 if k == 3 else 7)
        axes = [np.linspace(lo, hi, grid_n) for lo, hi in region]
        pts = np.stack(np.meshgrid(*axes, indexing="ij"), -1).reshape(-1, k)
        vals = (pts @ bs[:, ~good]) + np.einsum("gi,bij,gj->gb", pts, Bs[~good], pts)
        xs[~good] = pts[np.argmax(sign * vals, axis=0)]
    a = fit.alpha if level is None else 1 - level
    lo, hi = np.quantile(xs, [a / 2, 1 - a / 2], axis=0)
    cont = continuous_factors(fit)
    return pd.DataFrame({"factor": [f.name for f in cont],
                         "low": [float(f.to_natural(v)) for f, v in zip(cont, lo, strict=True)],
                         "high": [float(f.to_natural(v)) for f, v in zip(cont, hi,
                                                                          strict=True)],
                         "share_interior": float(good.mean()), "joint": False,
                         "reaches_edge": [bool(np.isclose(lo[i], region[i, 0])
                                               or np.isclose(hi[i], region[i, 1]))
                                          for i in range(k)],
                         "method": "percentile bootstrap of the best point (modified "
                                   "residuals; best not an interior optimum): one factor "
                                   "at a time, not joint"})
