"""One call for the whole analysis of one response: :func:`analyze_table`.

It fits the model (choosing one when none is given), reduces it when asked, adds Lenth's
effects for two-level designs, the surface and its best point for second-order models, the
sweep analysis for a one-factor sweep, and residual diagnostics.  The command line and
the notebooks both call this.

Examples
--------
>>> import pandas as pd
>>> from trialkit.factors import Factor
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
from trialkit.analysis.surface import SurfaceResult, fit_surface
from trialkit.analysis.sweep import SweepResult, fit_sweep
from trialkit.exceptions import AnalysisError
from trialkit.factors import Factor
from trialkit.modelspec import parse_model


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
                 f"ANOVA (type {self.anova_type}" + (", Lenth's method: saturated model"
                                                     if a.test == "lenth" else "") + ")"]
        tab = a.summary.copy()
        lines.append(tab.to_string(index=False, float_format=lambda v: f"{v:.6g}"))
        r = a.residual
        lines.append(f"residual: df {r['df']}, sum of squares {r['sum_sq']:.6g}")
        lines.append(f"R² {f.r_squared:.4f}   adjusted R² {f.adj_r_squared:.4f}   "
                     f"predicted R² {f.pred_r_squared:.4f}")
        if a.lack_of_fit and np.isfinite(a.lack_of_fit["p"]):
            lines.append(f"lack of fit: F {a.lack_of_fit['F']:.4g}, p {a.lack_of_fit['p']:.4g}")
        if a.curvature:
            lines.append(f"curvature (centre points): F {a.curvature['F']:.4g}, "
                         f"p {a.curvature['p']:.4g}")
        lines.append("coefficients (factors' own units):")
        lines.append(f.coefficients[["term", "estimate", "std_error", "ci_low", "ci_high"]]
                     .to_string(index=False, float_format=lambda v: f"{v:.6g}"))
        if self.effects is not None:
            lines.append(f"Lenth: PSE {self.effects.lenth.pse:.6g}, ME "
                         f"{self.effects.lenth.me:.6g}, SME {self.effects.lenth.sme:.6g}")
        if self.surface is not None:
            lines.append(f"surface: {self.surface.kind}")
        if self.sweep is not None:
            s = self.sweep
            lines.append(f"sweep: best {s.best:.4g} (Fieller {s.fieller_low:.4g} to "
                         f"{s.fieller_high:.4g}), sweet spot {s.sweet_spot:.4g}, falls off "
                         f"at high levels: {'yes' if s.falls_off else 'no'}")
        if self.optimum is not None:
            o = self.optimum
            lines.append(f"best settings {o['settings']}: predicted {o['predicted']:.6g}, "
                         f"prediction interval {o['pi_low']:.6g} to {o['pi_high']:.6g}")
        if self.diagnostics is not None and len(self.diagnostics.flagged):
            lines.append("flagged baths: " + ", ".join(
                f"{b} ({r})" for b, r in zip(self.diagnostics.flagged.bath,
                                             self.diagnostics.flagged.reason, strict=True)))
        return "\n".join(lines)

    def __repr__(self) -> str:
        return self.text()

    def _repr_html_(self) -> str:
        return self.fit._repr_html_()


def default_model(table: pd.DataFrame, response: str, factors: Sequence[Factor]) -> str:
    """The largest of quadratic / interactions / main that leaves residual df, else main."""
    column = response_column(table, response)
    prep = prepare(table, column, factors)
    n = len(prep.natural)
    cont_ok = all(prep.natural[f.name].nunique() >= 3 for f in factors if f.is_continuous)
    for kw in (("quadratic",) if cont_ok and any(f.is_continuous for f in factors) else ()) \
            + ("interactions", "main"):
        spec = parse_model(kw, factors)
        p = 1 + sum(_n_columns(t, factors, prep.natural) for t in spec.terms)
        if p < n:
            return kw
    return "main"


def _n_columns(term, factors, data) -> int:
    by = {f.name: f for f in factors}
    k = 1
    for n in term.factors:
        f = by[n]
        k *= 1 if f.is_continuous else max(data[n].astype(str).nunique() - 1, 1)
    return k


def _two_level(fit: ModelFit) -> bool:
    X = fit.mm.X[:, 1:]
    return X.size > 0 and bool(np.all(np.isclose(np.abs(X), 1.0)))


def analyze_table(table: pd.DataFrame, response: str, factors: Sequence[Factor], *,
                  model: str | None = None, anova_type: int = 2, alpha: float = 0.05,
                  block: str | None = "block", sweep: str | None = None,
                  goal: str = "maximize", reduce: str = "none", threshold: float = 0.05,
                  n_boot: int = 2000, seed: int = 0, tolerance: float | None = None,
                  relative_tolerance: float = 0.05) -> AnalysisResult:
    """Analyse one response of a bath-level table (see the module docstring)."""
    if anova_type not in (1, 2, 3):
        raise AnalysisError(f"ANOVA type must be 1, 2 or 3, got {anova_type!r}")
    factors = tuple(factors)
    if not factors:
        raise AnalysisError("no factors given; name the factor columns (e.g. --factor "
                            "chelator --factor surfactant:categorical)")
    if sweep is not None:
        fac = next((f for f in factors if f.name == sweep), None)
        if fac is None:
            raise AnalysisError(f"sweep factor {sweep!r} is not among the factors "
                                f"{[f.name for f in factors]}")
        sw = fit_sweep(table, response, fac, goal=goal, tolerance=tolerance,
                       relative_tolerance=relative_tolerance, alpha=alpha, n_boot=n_boot,
                       seed=seed, block=block)
        return AnalysisResult(sw.fit, anova_type, sweep=sw, diagnostics=diagnose(sw.fit))
    text = model or default_model(table, response, factors)
    fit = fit_model(table, response, factors, text, block=block, alpha=alpha)
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
        surface = fit_surface(fit, goal=goal, seed=seed, n_boot=n_boot)
    diag = diagnose(fit) if fit.df_resid > 0 else None
    return AnalysisResult(fit, anova_type, red, effects, surface, None, diag)
