"""One call for the whole analysis of one response: :func:`analyze_table`.

It fits the model (choosing one when none is given), reduces it when asked, adds Lenth's
effects for two-level designs, the surface and its best point for second-order models, the
sweep analysis for a one-factor sweep, and residual diagnostics.  The command line and
the notebooks both call this.

Examples
--------
>>> import pandas as pd
>>> from trialkit.trial.factors import Factor
>>> df = pd.DataFrame({"a": [-1.0, 1, -1, 1, 0, 0], "b": [-1.0, -1, 1, 1, 0, 0],
...                    "y": [10.0, 14.1, 11.9, 16.2, 13.0, 13.1]})
>>> res = analyze_table(df, "y", [Factor.continuous("a", -1, 1),
...                               Factor.continuous("b", -1, 1)], model="main")
>>> sorted(res.to_dict())[:4]
['adj_r_squared', 'alpha', 'anova', 'anova_test']
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd

from trialkit.analysis.data import prepare, response_column
from trialkit.analysis.diagnostics import Diagnostics, diagnose
from trialkit.analysis.effects import EffectsResult, two_level_effects
from trialkit.analysis.model import ModelFit, fit_model
from trialkit.analysis.reduction import ReductionResult, reduce_model
from trialkit.analysis.response_checks import check_response_values
from trialkit.analysis.surface import SurfaceResult, fit_surface
from trialkit.analysis.sweep import SweepResult, fit_sweep
from trialkit.exceptions import AnalysisError
from trialkit.numbers import (
    readable,
    readable_interval,
    readable_p,
    readable_table,
    settings_text,
)
from trialkit.trial.factors import Factor
from trialkit.trial.model_grammar import parse_model


@dataclass
class AnalysisResult:
    """Everything :func:`analyze_table` found for one response.

    Attributes
    ----------
    fit : ModelFit
        The final model (after reduction when asked).
    anova_type : int
    reduction, effects, surface, sweep, diagnostics : result objects or None
    """

    fit: ModelFit
    anova_type: int
    reduction: ReductionResult | None = None
    effects: EffectsResult | None = None
    surface: SurfaceResult | None = None
    sweep: SweepResult | None = None
    diagnostics: Diagnostics | None = None

    @property
    def optimum(self) -> dict | None:
        src = self.sweep.optimum if self.sweep is not None else \
            self.surface.optimum if self.surface is not None else None
        if src is None:
            return None
        return {"settings": src["settings"], "predicted": src["predicted"],
                "pi_low": src["pi_low"], "pi_high": src["pi_high"]}

    @property
    def summary(self) -> pd.DataFrame:
        return self.fit.anova(self.anova_type).summary

    def to_dict(self) -> dict:
        out = self.fit.to_dict(self.anova_type)
        if self.optimum is not None:
            out["optimum"] = self.optimum
        for name in ("reduction", "effects", "surface", "diagnostics"):
            part = getattr(self, name)
            if part is not None:
                out[name] = part.to_dict()
        if self.sweep is not None:
            out["sweep"] = self.sweep.to_dict()["sweep"]
        return out

    def text(self) -> str:
        """A readable console summary."""
        f = self.fit
        a = f.anova(self.anova_type)
        lines = [f"Response {f.response!r}: model {f.spec.to_text()} ({f.n} baths"
                 + (f", {f.n_dropped} rows without values left out" if f.n_dropped else "")
                 + ")",
                 f"scale: {f.scale}",
                 f"ANOVA (type {self.anova_type}" + (", Lenth's method: saturated model"
                                                     if a.test == "lenth" else "") + ")"]
        lines.append(readable_table(a.summary))
        r = a.residual
        lines.append(f"residual: df {r['df']}, sum of squares {readable(r['sum_sq'])}")
        lines.append(f"R² {f.r_squared:.4f}   adjusted R² {f.adj_r_squared:.4f}   "
                     f"predicted R² {f.pred_r_squared:.4f}")
        if a.lack_of_fit and np.isfinite(a.lack_of_fit["p"]):
            lines.append(f"lack of fit: F {readable(a.lack_of_fit['F'])}, "
                         f"p {readable_p(a.lack_of_fit['p'])}")
        if a.curvature:
            lines.append(f"curvature (centre points): F {readable(a.curvature['F'])}, "
                         f"p {readable_p(a.curvature['p'])}")
        lines.append("coefficients (factors' own units):")
        lines.append(readable_table(
            f.coefficients[["term", "estimate", "std_error", "ci_low", "ci_high"]]))
        if self.effects is not None:
            le = self.effects.lenth
            lines.append(f"Lenth: PSE {readable(le.pse)}, ME {readable(le.me)}, "
                         f"SME {readable(le.sme)}")
        if self.surface is not None:
            lines.append(f"surface: {self.surface.kind}")
        if self.sweep is not None:
            s = self.sweep
            best, lo, hi = readable_interval(s.best, s.fieller_low, s.fieller_high)
            lines.append(f"sweep: best {best} (Fieller {lo} to {hi}), lean level "
                         f"{readable(s.lean_level)}, falls off at high levels: "
                         f"{'yes' if s.falls_off else 'no'}")
        if self.optimum is not None:
            o = self.optimum
            units = {fac.name: fac.unit for fac in f.spec.used_factors}
            est, lo, hi = readable_interval(o["predicted"], o["pi_low"], o["pi_high"])
            lines.append(f"best settings {settings_text(o['settings'], units)}: predicted "
                         f"{est}, prediction interval {lo} to {hi}")
        drift = self.diagnostics.drift if self.diagnostics is not None else None
        if drift and np.isfinite(drift["p"]) and drift["p"] < f.alpha:
            lines.append(f"residuals trend with run order (drift?): Spearman rho "
                         f"{readable(drift['rho'], 2)}, p {readable_p(drift['p'])}")
        if self.diagnostics is not None and len(self.diagnostics.flagged):
            lines.append("flagged baths: " + ", ".join(
                f"{b} ({r})" for b, r in zip(self.diagnostics.flagged.bath,
                                             self.diagnostics.flagged.reason, strict=True)))
        return "\n".join(lines)

    def __repr__(self) -> str:
        return self.text()

    def _repr_html_(self) -> str:
        return self.fit._repr_html_()


def best_compromise(table: pd.DataFrame, factors: Sequence[Factor], aims: Sequence,
                    *, models: dict | None = None, block: str | None = "block",
                    alpha: float = 0.05, seed: int = 0, n_tries: int = 12):
    """Fit every response of ``aims`` and find the best Derringer–Suich compromise.

    Each response gets ``models[name]`` or :func:`default_model`; the search covers the
    observed coded range of the continuous factors and every combination of categorical
    levels.  Returns a :class:`~trialkit.analysis.desirability.DesirabilityResult`.
    """
    import itertools

    from trialkit.analysis.desirability import optimize_desirability

    aims = tuple(aims)
    if len(aims) < 2:
        raise AnalysisError("a compromise needs at least two responses with limits (lower "
                            f"and upper); got {len(aims)}")
    fits = {}
    for g in aims:
        text = (models or {}).get(g.response) or default_model(table, g.response, factors)
        fits[g.response] = fit_model(table, g.response, factors, text, block=block,
                                     alpha=alpha)
    first = fits[aims[0].response]
    cont = [f.name for f in first.spec.used_factors if f.is_continuous]
    for g in aims:
        have = [f.name for f in fits[g.response].spec.used_factors if f.is_continuous]
        if have != cont:
            raise AnalysisError(f"the model of {g.response!r} uses {have}, the model of "
                                f"{aims[0].response!r} uses {cont}; give models over the "
                                "same continuous factors")
    xc = first.coded[cont].astype(float).to_numpy()
    region = np.column_stack([xc.min(axis=0), xc.max(axis=0)])
    cats = [f for f in first.spec.used_factors if f.is_categorical and f.name != "block"]
    combos = [dict(zip([f.name for f in cats], lv, strict=True)) for lv in
              itertools.product(*[first.mm.levels[f.name] for f in cats])]
    best = None
    for combo in combos[:64]:
        try:
            res = optimize_desirability(fits, aims, region=region, fixed=combo or None,
                                        n_tries=n_tries, seed=seed)
        except AnalysisError:
            continue
        if best is None or res.overall > best.overall:
            best = res
    if best is None:
        raise AnalysisError("no setting gives every response a desirability above zero; "
                            "widen the limits or check the aims")
    return best


def default_model(table: pd.DataFrame, response: str, factors: Sequence[Factor]) -> str:
    """The largest of quadratic / interactions / main that the data can estimate with
    residual degrees of freedom left (e.g. a two-level design with centre points cannot
    separate the squares, so it gets interactions); else main."""
    from trialkit.trial.model_matrix import model_matrix

    column = response_column(table, response)
    prep = prepare(table, column, factors)
    n = len(prep.natural)
    candidates = ("quadratic", "interactions", "main") if any(
        f.is_continuous for f in factors) else ("interactions", "main")
    for kw in candidates:
        X = model_matrix(parse_model(kw, factors), prep.coded).X
        if X.shape[1] < n and np.linalg.matrix_rank(X) == X.shape[1]:
            return kw
    return "main"


def _two_level(fit: ModelFit) -> bool:
    X = fit.mm.X[:, 1:]
    return X.size > 0 and bool(np.all(np.isclose(np.abs(X), 1.0)))


def analyze_table(table: pd.DataFrame, response: str, factors: Sequence[Factor], *,
                  model: str | None = None, anova_type: int = 2, alpha: float = 0.05,
                  block: str | None = "block", sweep: str | None = None,
                  aim: str = "higher", reduce: str = "none", threshold: float = 0.05,
                  n_boot: int = 2000, seed: int = 0, tolerance: float | None = None,
                  relative_tolerance: float = 0.05,
                  limits: tuple = (None, None), scale: str = "raw") -> AnalysisResult:
    """Analyse one response of a bath-level table (see the module docstring).

    ``limits`` is the response's physical range: predictions and intervals are cut to it
    and flagged (:meth:`trialkit.analysis.model.ModelFit.predict`).
    """
    if anova_type not in (1, 2, 3):
        raise AnalysisError(f"ANOVA type must be 1, 2 or 3, got {anova_type!r}")
    check_response_values(table, response)
    factors = tuple(factors)
    if not factors:
        raise AnalysisError("no factors given; name the factor columns (e.g. --factor "
                            "chelator --factor surfactant:categorical)")
    if sweep is not None:
        fac = next((f for f in factors if f.name == sweep), None)
        if fac is None:
            raise AnalysisError(f"sweep factor {sweep!r} is not among the factors "
                                f"{[f.name for f in factors]}")
        sw = fit_sweep(table, response, fac, aim=aim, tolerance=tolerance,
                       relative_tolerance=relative_tolerance, alpha=alpha, n_boot=n_boot,
                       seed=seed, block=block, limits=limits, scale=scale)
        return AnalysisResult(sw.fit, anova_type, sweep=sw, diagnostics=diagnose(sw.fit))
    text = model or default_model(table, response, factors)
    fit = fit_model(table, response, factors, text, block=block, alpha=alpha, limits=limits,
                    scale=scale)
    red = None
    if reduce != "none":
        red = reduce_model(fit, criterion=reduce, threshold=threshold)
        fit = red.final
    effects = None
    two = _two_level(fit) and all(t.power == 1 for t in fit.spec.terms)
    if two and fit.df_resid == 0:
        effects = two_level_effects(table, response, [f for f in fit.spec.used_factors
                                                       if f.name != "block"], alpha=alpha)
    surface = None
    if any(t.power == 2 for t in fit.spec.terms) and fit.df_resid > 0:
        surface = fit_surface(fit, aim=aim, seed=seed, n_boot=n_boot)
    diag = diagnose(fit) if fit.df_resid > 0 else None
    return AnalysisResult(fit, anova_type, red, effects, surface, None, diag)
