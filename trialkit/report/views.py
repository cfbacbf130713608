"""Figure data: plain tables taken from analysis results, ready for :mod:`trialkit.plots`.

The plotting module draws and never computes; the numbers it draws come from here, and
here every number comes from a result object's own methods (``ModelFit.predict``,
``RemovalFit.params``, an effects table).  Where the analysis package does not (yet) give
an object of its own — a surface grid, a sweep's sweet spot, a desirability map — the
view evaluates the fitted model on a grid of the design region and picks the best grid
point, and says so in its ``method`` attribute.

Examples
--------
>>> import pandas as pd
>>> from trialkit.factors import Factor
>>> from trialkit.analysis.model import fit_model
>>> df = pd.DataFrame({"chelator": [2, 10, 2, 10, 6], "ph": [5.5, 5.5, 7.5, 7.5, 6.5],
...                    "removal": [40.0, 60.0, 50.0, 76.0, 57.0]})
>>> fit = fit_model(df, "removal", [Factor.continuous("chelator", 2, 10, unit="% w/v"),
...                                 Factor.continuous("ph", 5.5, 7.5, unit="pH")], "main")
>>> v = effect_lines(fit)
>>> [p.factor for p in v.panels]
['chelator', 'ph']
>>> round(float(v.panels[0].line.predicted.iloc[-1] - v.panels[0].line.predicted.iloc[0]), 2)
23.0
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field

import numpy as np
import pandas as pd
from scipy import stats

from trialkit.analysis.data import response_column
from trialkit.exceptions import AnalysisError

GRID = 41


def _factor(fit, name: str):
    for f in fit.spec.used_factors:
        if f.name == name:
            return f
    raise AnalysisError(f"factor {name!r} is not in the model of {fit.response!r}; factors "
                        f"are {[f.name for f in fit.spec.used_factors if f.name != 'block']}")


def model_factors(fit) -> list:
    """The model's factors, blocks left out."""
    return [f for f in fit.spec.used_factors if f.name != "block"]


def reference_settings(fit) -> dict:
    """Continuous factors at the middle of their range, categorical at the first level."""
    out = {}
    for f in model_factors(fit):
        out[f.name] = f.center if f.is_continuous else f.levels[0]
    return out


def _axis_values(f, n: int = GRID) -> np.ndarray | list:
    if f.is_continuous:
        return np.linspace(f.low, f.high, n)
    return list(f.levels)


def observed(fit) -> pd.DataFrame:
    """The baths the model was fitted to (natural units) with the response as ``y``."""
    col = response_column(fit.natural, fit.response)
    out = fit.natural.copy()
    out["y"] = out[col].astype(float)
    out["fitted"] = fit.fitted
    out["residual"] = fit.resid
    return out


@dataclass
class LinePanel:
    """One factor's predicted line (natural units) and the observed baths."""

    factor: str
    unit: str
    continuous: bool
    line: pd.DataFrame        # x, predicted, ci_low, ci_high
    points: pd.DataFrame      # x, y
    trace: str | None = None  # for interaction panels: the factor drawn as separate lines
    trace_unit: str = ""


@dataclass
class EffectLines:
    """Main effects: one panel per factor, others held at their reference settings."""

    response: str
    unit: str
    panels: list[LinePanel]
    held: dict


def averaged_prediction(fit, settings: pd.DataFrame, over: Sequence[str] = ()
                        ) -> pd.DataFrame:
    """Prediction at ``settings`` averaged with equal weight over every level of the
    categorical factors in ``over`` (the mean of their model rows), with its 95 %
    confidence interval: predicted, ci_low, ci_high."""
    import itertools

    fs = {f.name: f for f in model_factors(fit)}
    levels = [fs[c].levels for c in over]
    rows = []
    for combo in itertools.product(*levels) if over else [()]:
        frame = settings.copy()
        for c, v in zip(over, combo, strict=True):
            frame[c] = v
        rows.append(fit.design_rows(frame))
    X = np.mean(rows, axis=0)
    pred = X @ fit.ls.beta + float(fit.shift)
    se = np.sqrt(np.einsum("ij,jk,ik->i", X, fit.cov, X)) if fit.df_resid > 0 \
        else np.full(len(X), np.nan)
    t = stats.t.ppf(1 - fit.alpha / 2, fit.df_resid) if fit.df_resid > 0 else np.nan
    return pd.DataFrame({"predicted": pred, "ci_low": pred - t * se, "ci_high": pred + t * se})


def effect_lines(fit, *, unit: str = "", n: int = GRID) -> EffectLines:
    """Predicted response along each factor: continuous factors held at their middle,
    categorical factors averaged over their levels (so on a balanced two-level design the
    line's ends differ by the classical main effect)."""
    ref = reference_settings(fit)
    cats = [f.name for f in model_factors(fit) if not f.is_continuous]
    obs = observed(fit)
    panels = []
    for f in model_factors(fit):
        if hasattr(fit, "profile"):  # the analysis package's own profile of the model
            prof = fit.profile(f.name, n=n)
            xs, pred = prof[f.name].tolist(), prof
        else:
            xs = _axis_values(f, n)
            settings = pd.DataFrame([{**ref, f.name: x} for x in xs])
            pred = averaged_prediction(fit, settings, [c for c in cats if c != f.name])
        line = pd.DataFrame({"x": list(xs), "predicted": pred.predicted.to_numpy(),
                             "ci_low": pred.ci_low.to_numpy(),
                             "ci_high": pred.ci_high.to_numpy()})
        pts = pd.DataFrame({"x": obs[f.name].tolist(), "y": obs.y.tolist()})
        panels.append(LinePanel(f.name, f.unit, f.is_continuous, line, pts))
    held = {k: (v if k not in cats else "averaged over levels") for k, v in ref.items()}
    return EffectLines(fit.response, unit, panels, held)


def interaction_lines(fit, x: str, trace: str, *, unit: str = "", n: int = GRID) -> LinePanel:
    """Predicted response along ``x`` at the low and high (or each level) of ``trace``."""
    fx, ft = _factor(fit, x), _factor(fit, trace)
    ref = reference_settings(fit)
    levels = [ft.low, ft.high] if ft.is_continuous else list(ft.levels)
    rows = []
    if hasattr(fit, "profile"):
        prof = fit.profile(x, by=trace, n=n)
        if ft.is_continuous:
            prof = prof[np.isclose(prof[trace].astype(float), ft.low)
                        | np.isclose(prof[trace].astype(float), ft.high)]
        out = pd.DataFrame({"x": prof[x].tolist(), "trace": prof[trace].tolist(),
                            "predicted": prof.predicted.to_numpy(),
                            "ci_low": prof.ci_low.to_numpy(), "ci_high": prof.ci_high.to_numpy()})
        obs = observed(fit)
        pts = pd.DataFrame({"x": obs[x].tolist(), "trace": obs[trace].tolist(),
                            "y": obs.y.tolist()})
        return LinePanel(x, fx.unit, fx.is_continuous, out, pts, trace=trace,
                         trace_unit=ft.unit)
    for lev in levels:
        xs = _axis_values(fx, n)
        settings = pd.DataFrame([{**ref, x: v, trace: lev} for v in xs])
        pred = fit.predict(settings)
        rows.append(pd.DataFrame({"x": list(xs), "trace": lev, "predicted": pred.predicted,
                                  "ci_low": pred.ci_low, "ci_high": pred.ci_high}))
    obs = observed(fit)
    pts = pd.DataFrame({"x": obs[x].tolist(), "trace": obs[trace].tolist(), "y": obs.y.tolist()})
    return LinePanel(x, fx.unit, fx.is_continuous, pd.concat(rows, ignore_index=True), pts,
                     trace=trace, trace_unit=ft.unit)


@dataclass
class ResidualView:
    """Residuals for the three diagnostic panels.

    ``table``: fitted, residual, run, block, bath, normal_x, normal_quantile, flagged.
    The normal panel draws ``normal_x`` (described by ``normal_label``) against
    ``normal_quantile``.
    """

    response: str
    unit: str
    table: pd.DataFrame
    normal_label: str = "residual"
    method: str = "residuals of the fitted model; normal quantiles by Blom's plotting positions"


def residual_view(fit, diagnostics=None, *, unit: str = "") -> ResidualView:
    """Fitted values, residuals, run order and blocks of the baths in the model.

    With a :class:`trialkit.analysis.diagnostics.Diagnostics` the normal panel shows its
    studentized residuals and quantiles and its flagged baths; without, the raw residuals
    with Blom (1958) plotting positions.
    """
    obs = observed(fit)
    n = len(obs)
    block = obs["block"].astype(str).to_numpy() if "block" in obs else np.array(["1"] * n)
    if diagnostics is not None:
        d = diagnostics.table.reset_index(drop=True)
        table = pd.DataFrame({"fitted": d.fitted.to_numpy(), "residual": d.residual.to_numpy(),
                              "run": d.run.to_numpy(), "block": block,
                              "bath": d.bath.astype(str).to_numpy(),
                              "normal_x": d.studentized.to_numpy(),
                              "normal_quantile": d.normal_quantile.to_numpy(),
                              "flagged": d.flagged.to_numpy(bool)})
        return ResidualView(fit.response, unit, table, "studentized residual",
                            "diagnostics of trialkit.analysis.diagnostics")
    order = np.argsort(np.argsort(obs.residual.to_numpy(), kind="mergesort"), kind="mergesort")
    q = stats.norm.ppf((order + 1 - 0.375) / (n + 0.25))  # Blom (1958) plotting positions
    table = pd.DataFrame({
        "fitted": obs.fitted.to_numpy(), "residual": obs.residual.to_numpy(),
        "run": obs["run"].to_numpy() if "run" in obs else np.arange(1, n + 1),
        "block": block,
        "bath": obs["bath"].astype(str).to_numpy() if "bath" in obs
        else np.array([str(i + 1) for i in range(n)]),
        "normal_x": obs.residual.to_numpy(), "normal_quantile": q,
        "flagged": np.zeros(n, bool)})
    return ResidualView(fit.response, unit, table)


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
    goal: str = "maximize"
    held: dict = field(default_factory=dict)
    method: str = "model evaluated on a 41 x 41 grid of the design region; best grid point"


def _best(z: np.ndarray, goal: str) -> tuple[int, int]:
    flat = np.nanargmin(z) if goal == "minimize" else np.nanargmax(z)
    return np.unravel_index(flat, z.shape)


def surface_view(fit, x: str, y: str, *, unit: str = "", goal: str = "maximize",
                 held: Mapping | None = None, n: int = GRID) -> SurfaceView:
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
    i, j = _best(z, goal)
    opt = {"x": float(gx[j]), "y": float(gy[i]), "value": float(z[i, j])}
    pts = pd.DataFrame({"x": obs[x].astype(float), "y": obs[y].astype(float)})
    return SurfaceView(fit.response, unit, x, fx.unit, y, fy.unit, gx, gy, z, pts, opt, goal,
                       {k: v for k, v in ref.items() if k not in (x, y)})


@dataclass
class SweepView:
    """A one-factor sweep: fitted curve, band, observed bath means, best and sweet spot."""

    response: str
    unit: str
    factor: str
    factor_unit: str
    curve: pd.DataFrame       # x, predicted, ci_low, ci_high
    observed: pd.DataFrame    # x, mean, n
    best: float
    best_value: float
    sweet_spot: float | None
    tolerance: float
    goal: str = "maximize"
    method: str = ("fitted model on a 201-point grid; sweet spot = lowest level whose "
                   "prediction is within the tolerance of the best")


def sweep_view(fit, factor: str, *, unit: str = "", goal: str = "maximize",
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
    k = int(np.argmin(p) if goal == "minimize" else np.argmax(p))
    best, best_value = float(xs[k]), float(p[k])
    tol = abs(best_value) * 0.05 if tolerance is None else float(tolerance)
    ok = (p <= best_value + tol) if goal == "minimize" else (p >= best_value - tol)
    sweet = float(xs[np.argmax(ok)]) if ok.any() else None
    obs = observed(fit)
    means = (obs.groupby(factor).y.agg(["mean", "count"]).reset_index()
             .rename(columns={factor: "x", "count": "n"}))
    return SweepView(fit.response, unit, factor, f.unit, curve, means, best, best_value,
                     sweet, tol, goal)


@dataclass
class KineticsView:
    """Coverage readings and fitted removal curves per bath."""

    readings: pd.DataFrame            # bath, elapsed_h, coverage_pct
    curves: pd.DataFrame              # bath, elapsed_h, coverage_pct
    time_to_90: dict                  # bath -> hours (NaN when not reached)


def kinetics_view(timecourse: pd.DataFrame, fits: Mapping, *, n: int = 101) -> KineticsView:
    """Curves of fitted :class:`trialkit.kinetics.RemovalFit` objects per bath."""
    from trialkit import kinetics

    rows, t90 = [], {}
    for bath, fit in fits.items():
        grp = timecourse[timecourse.bath.astype(str) == str(bath)]
        t = np.linspace(0.0, float(grp.elapsed_h.max()) if len(grp) else fit.last_h, n)
        fun = kinetics.first_order if fit.model == "first_order" else kinetics.lag_plateau
        c = fun(t, **fit.params)
        rows.append(pd.DataFrame({"bath": str(bath), "elapsed_h": t, "coverage_pct": c}))
        t90[str(bath)] = float(fit.time_to_90_h)
    curves = pd.concat(rows, ignore_index=True) if rows else pd.DataFrame(
        columns=["bath", "elapsed_h", "coverage_pct"])
    return KineticsView(timecourse[["bath", "elapsed_h", "coverage_pct"]].copy(), curves, t90)


def _d(y: np.ndarray, goal: str, lower: float, upper: float, target: float | None,
       weight: float) -> np.ndarray:
    """Derringer & Suich (1980) one-sided and two-sided desirabilities."""
    if goal == "maximize":
        d = (y - lower) / (upper - lower)
    elif goal == "minimize":
        d = (upper - y) / (upper - lower)
    else:
        t = float(target)
        d = np.where(y <= t, (y - lower) / (t - lower), (upper - y) / (upper - t))
    return np.clip(d, 0.0, 1.0) ** weight


def desirability_view(fits: Sequence, specs: Sequence, x: str, y: str, *,
                      n: int = GRID) -> SurfaceView:
    """Overall desirability (weighted geometric mean, Derringer & Suich 1980) over x, y.

    ``specs`` are the trial's ResponseSpec objects in the order of ``fits``; a response
    without ``lower``/``upper`` uses the range of its predictions over the grid.
    """
    if not fits:
        raise AnalysisError("desirability needs at least one fitted response")
    views = [surface_view(fit, x, y, n=n) for fit in fits]
    logsum = np.zeros_like(views[0].z)
    total = 0.0
    for v, spec in zip(views, specs, strict=True):
        lo = spec.lower if spec.lower is not None else float(np.nanmin(v.z))
        hi = spec.upper if spec.upper is not None else float(np.nanmax(v.z))
        if hi <= lo:
            hi = lo + 1e-12
        d = _d(v.z, spec.goal, lo, hi, spec.target, spec.weight)
        logsum += spec.importance * np.log(np.clip(d, 1e-300, None))
        total += spec.importance
    D = np.exp(logsum / total)
    D[D < 1e-200] = 0.0
    base = views[0]
    i, j = _best(D, "maximize")
    opt = {"x": float(base.grid_x[j]), "y": float(base.grid_y[i]), "value": float(D[i, j])}
    return SurfaceView("desirability", "", x, base.x_unit, y, base.y_unit, base.grid_x,
                       base.grid_y, D, base.points, opt, "maximize", base.held,
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
                       opt, result.goal, held,
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
                     float(result.sweet_spot), float(result.tolerance), result.goal,
                     "quadratic sweep fit; best level and sweet spot from the analysis")


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
                       opt, "maximize", held, "Derringer-Suich desirability (analysis)")


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
    if hasattr(obj, "sweet_spot") and hasattr(obj, "grid"):
        return from_sweep(obj, **kw)
    raise AnalysisError(f"cannot draw a sweep from a {type(obj).__name__}; give a "
                        "SweepResult or SweepView")
