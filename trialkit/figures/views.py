"""Figure data: plain tables taken from analysis results, ready for :mod:`trialkit.figures.plots`.

The plotting module draws and never computes; the numbers it draws come from here, and
here every number comes from a result object's own methods (``ModelFit.predict``,
``RemovalFit.params``, an effects table).  Where the analysis package does not (yet) give
an object of its own — a surface grid, a sweep's lean level, a desirability map — the
view evaluates the fitted model on a grid of the design region and picks the best grid
point, and says so in its ``method`` attribute.

Examples
--------
>>> import pandas as pd
>>> from trialkit.trial.factors import Factor
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
from dataclasses import dataclass

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
class KineticsView:
    """Coverage readings and fitted removal curves per bath."""

    readings: pd.DataFrame            # bath, elapsed_h, coverage_pct
    curves: pd.DataFrame              # bath, elapsed_h, coverage_pct
    time_to_90: dict                  # bath -> hours (NaN when not reached)


def kinetics_view(timecourse: pd.DataFrame, fits: Mapping, *, n: int = 101) -> KineticsView:
    """Curves of fitted :class:`trialkit.responses.kinetics.RemovalFit` objects per bath."""
    from trialkit.responses import kinetics

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
