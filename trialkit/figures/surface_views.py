"""Figure data of surfaces and sweeps: fitted responses over two factors, sweep curves,
desirability maps, and adapters from the analysis package's own results
(:class:`~trialkit.analysis.surface.SurfaceResult`,
:class:`~trialkit.analysis.sweep.SweepResult`,
:class:`~trialkit.analysis.desirability.DesirabilityResult`).

Examples
--------
>>> import pandas as pd
>>> from trialkit.trial.factors import Factor
>>> from trialkit.analysis.model import fit_model
>>> df = pd.DataFrame({"c": [2, 10, 2, 10, 6, 6, 2, 10, 6], "p": [5, 5, 8, 8, 6.5, 6.5, 6.5,
...                    6.5, 5], "y": [50.0, 60, 55, 62, 70, 71, 58, 63, 61]})
>>> fit = fit_model(df, "y", [Factor.continuous("c", 2, 10), Factor.continuous("p", 5, 8)],
...                 "quadratic", block=None)
>>> v = surface_view(fit, "c", "p")
>>> v.z.shape, 2 <= v.optimum["x"] <= 10
((41, 41), True)
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from trialkit.analysis.desirability import aim_from_spec
from trialkit.exceptions import AnalysisError
from trialkit.figures.views import GRID, _factor, observed, reference_settings


@dataclass
class SurfaceView:
    """A fitted response (or desirability) over two factors."""

    response: str
    unit: str
    x: str
    x_unit: str
    y: str
    y_unit: str
    grid_x: np.ndarray
    grid_y: np.ndarray
    z: np.ndarray                 # shape (len(grid_y), len(grid_x))
    points: pd.DataFrame          # x, y of the baths
    optimum: dict | None = None   # x, y, value
    aim: str = "higher"
    held: dict = field(default_factory=dict)
    method: str = "model evaluated on a 41 x 41 grid of the design region; best grid point"


def _best(z: np.ndarray, aim: str) -> tuple[int, int]:
    flat = np.nanargmin(z) if aim == "lower" else np.nanargmax(z)
    return np.unravel_index(flat, z.shape)


def surface_view(fit, x: str, y: str, *, unit: str = "", aim: str = "higher",
                 held: dict | None = None, n: int = GRID) -> SurfaceView:
    """The fitted response over factors ``x`` and ``y`` (others at ``held`` or middle)."""
    fx, fy = _factor(fit, x), _factor(fit, y)
    if not (fx.is_continuous and fy.is_continuous):
        raise AnalysisError(f"a surface needs two continuous factors; {x!r} and {y!r} given")
    ref = {**reference_settings(fit), **dict(held or {})}
    gx, gy = np.linspace(fx.low, fx.high, n), np.linspace(fy.low, fy.high, n)
    XX, YY = np.meshgrid(gx, gy)
    settings = pd.DataFrame({**{k: v for k, v in ref.items() if k not in (x, y)},
                             x: XX.ravel(), y: YY.ravel()})
    z = fit.predict(settings).predicted.to_numpy().reshape(XX.shape)
    obs = observed(fit)
    i, j = _best(z, aim)
    opt = {"x": float(gx[j]), "y": float(gy[i]), "value": float(z[i, j])}
    pts = pd.DataFrame({"x": obs[x].astype(float), "y": obs[y].astype(float)})
    return SurfaceView(fit.response, unit, x, fx.unit, y, fy.unit, gx, gy, z, pts, opt, aim,
                       {k: v for k, v in ref.items() if k not in (x, y)})


@dataclass
class SweepView:
    """A one-factor sweep: fitted curve, band, observed bath means, best and lean level."""

    response: str
    unit: str
    factor: str
    factor_unit: str
    curve: pd.DataFrame       # x, predicted, ci_low, ci_high
    observed: pd.DataFrame    # x, mean, n
    best: float
    best_value: float
    lean_level: float | None
    tolerance: float
    aim: str = "higher"
    method: str = ("fitted model on a 201-point grid; lean level = lowest level whose "
                   "prediction is within the tolerance of the best")


def sweep_view(fit, factor: str, *, unit: str = "", aim: str = "higher",
               tolerance: float | None = None, n: int = 201) -> SweepView:
    """Sweep curve of ``fit`` along ``factor``; ``tolerance`` defaults to 5 % of the best."""
    f = _factor(fit, factor)
    if not f.is_continuous:
        raise AnalysisError(f"a sweep needs a continuous factor; {factor!r} is {f.kind}")
    ref = reference_settings(fit)
    xs = np.linspace(f.low, f.high, n)
    pred = fit.predict(pd.DataFrame([{**ref, factor: v} for v in xs]))
    curve = pd.DataFrame({"x": xs, "predicted": pred.predicted, "ci_low": pred.ci_low,
                          "ci_high": pred.ci_high})
    p = curve.predicted.to_numpy()
    k = int(np.argmin(p) if aim == "lower" else np.argmax(p))
    best, best_value = float(xs[k]), float(p[k])
    tol = abs(best_value) * 0.05 if tolerance is None else float(tolerance)
    ok = (p <= best_value + tol) if aim == "lower" else (p >= best_value - tol)
    lean = float(xs[np.argmax(ok)]) if ok.any() else None
    obs = observed(fit)
    means = (obs.groupby(factor).y.agg(["mean", "count"]).reset_index()
             .rename(columns={factor: "x", "count": "n"}))
    return SweepView(fit.response, unit, factor, f.unit, curve, means, best, best_value,
                     lean, tol, aim)


def desirability_view(fits: Sequence, specs: Sequence, x: str, y: str, *,
                      n: int = GRID) -> SurfaceView:
    """Overall desirability (weighted geometric mean, Derringer & Suich 1980) over x, y.

    ``specs`` are the trial's ResponseSpec objects in the order of ``fits``; a response
    without ``unacceptable``/``satisfactory`` limits takes them from its predictions over
    the grid.
    """
    if not fits:
        raise AnalysisError("desirability needs at least one fitted response")
    views = [surface_view(fit, x, y, n=n) for fit in fits]
    logsum = np.zeros_like(views[0].z)
    total = 0.0
    for v, spec in zip(views, specs, strict=True):
        d = aim_from_spec(spec, observed=v.z.ravel()).desirability(v.z)
        logsum += spec.priority * np.log(np.clip(d, 1e-300, None))
        total += spec.priority
    D = np.exp(logsum / total)
    D[D < 1e-200] = 0.0
    base = views[0]
    i, j = _best(D, "higher")
    opt = {"x": float(base.grid_x[j]), "y": float(base.grid_y[i]), "value": float(D[i, j])}
    return SurfaceView("desirability", "", x, base.x_unit, y, base.y_unit, base.grid_x,
                       base.grid_y, D, base.points, opt, "higher", base.held,
                       "Derringer-Suich desirability of the fitted models on a 41 x 41 grid")


# -- adapters for the analysis package's own results ------------------------------------
def _mesh(frame: pd.DataFrame, x: str, y: str, value: str):
    gx = np.sort(frame[x].astype(float).unique())
    gy = np.sort(frame[y].astype(float).unique())
    table = frame.pivot_table(index=y, columns=x, values=value, aggfunc="mean")
    return gx, gy, table.reindex(index=gy, columns=gx).to_numpy()


def from_surface(result, x: str | None = None, y: str | None = None, *, unit: str = "",
                 n: int = GRID) -> SurfaceView:
    """A :class:`SurfaceView` of a :class:`trialkit.analysis.surface.SurfaceResult`
    (others held at the best point); the optimum is the result's own best point."""
    names = list(result.factors)
    if len(names) < 2 and (x is None or y is None):
        raise AnalysisError("a contour needs two continuous factors; the surface has "
                            f"{names}")
    x = x or names[0]
    y = y or next(nm for nm in names if nm != x)
    frame = result.grid(x, y, n=n)
    gx, gy, z = _mesh(frame, x, y, "predicted")
    fs = {f.name: f for f in result.fit.spec.used_factors}
    obs = observed(result.fit)
    st = result.optimum["settings"]
    opt = {"x": float(st[x]), "y": float(st[y]), "value": float(result.optimum["predicted"])}
    held = {k: v for k, v in st.items() if k not in (x, y)}
    return SurfaceView(result.fit.response, unit, x, fs[x].unit, y, fs[y].unit, gx, gy, z,
                       pd.DataFrame({"x": obs[x].astype(float), "y": obs[y].astype(float)}),
                       opt, result.aim, held,
                       f"second-order surface ({result.kind}); best point by bounded search")


def from_sweep(result, *, unit: str = "", n: int = 201) -> SweepView:
    """A :class:`SweepView` of a :class:`trialkit.analysis.sweep.SweepResult`."""
    name = result.factor.name
    g = result.grid(n)
    curve = pd.DataFrame({"x": g[name].astype(float), "predicted": g.predicted,
                          "ci_low": g.ci_low, "ci_high": g.ci_high})
    obs = observed(result.fit)
    means = (obs.groupby(name).y.agg(["mean", "count"]).reset_index()
             .rename(columns={name: "x", "count": "n"}))
    return SweepView(result.fit.response, unit, name, result.factor.unit, curve, means,
                     float(result.best), float(result.optimum["predicted"]),
                     float(result.lean_level), float(result.tolerance), result.aim,
                     "quadratic sweep fit; best level and lean level from the analysis")


def from_desirability(result, x: str, y: str, *, n: int = GRID) -> SurfaceView:
    """A :class:`SurfaceView` of overall desirability from a ``DesirabilityResult``."""
    frame = result.grid(x, y, n=n)
    gx, gy, z = _mesh(frame, x, y, "desirability")
    fit0 = next(iter(result._fits.values()))
    fs = {f.name: f for f in fit0.spec.used_factors}
    obs = observed(fit0)
    opt = {"x": float(result.settings[x]), "y": float(result.settings[y]),
           "value": float(result.overall)}
    held = {k: v for k, v in result.settings.items() if k not in (x, y)}
    return SurfaceView("desirability", "", x, fs[x].unit, y, fs[y].unit, gx, gy, z,
                       pd.DataFrame({"x": obs[x].astype(float), "y": obs[y].astype(float)}),
                       opt, "higher", held, "Derringer-Suich desirability (analysis)")


def as_surface_view(obj, x: str | None = None, y: str | None = None, **kw) -> SurfaceView:
    """Whatever surface-like object is given, as a :class:`SurfaceView`."""
    if isinstance(obj, SurfaceView):
        return obj
    if hasattr(obj, "eigenvalues") and hasattr(obj, "grid"):
        return from_surface(obj, x, y, **kw)
    if hasattr(obj, "overall") and hasattr(obj, "grid"):
        if x is None or y is None:
            fit0 = next(iter(obj._fits.values()))
            cont = [f.name for f in fit0.spec.used_factors if f.is_continuous]
            x, y = x or cont[0], y or cont[1]
        return from_desirability(obj, x, y)
    raise AnalysisError(f"cannot draw a surface from a {type(obj).__name__}; give a "
                        "SurfaceResult, DesirabilityResult or SurfaceView")


def as_sweep_view(obj, **kw) -> SweepView:
    """A :class:`SweepView` of a SweepResult (or the view itself)."""
    if isinstance(obj, SweepView):
        return obj
    if hasattr(obj, "lean_level") and hasattr(obj, "grid"):
        return from_sweep(obj, **kw)
    raise AnalysisError(f"cannot draw a sweep from a {type(obj).__name__}; give a "
                        "SweepResult or SweepView")
