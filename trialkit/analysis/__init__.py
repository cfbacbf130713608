"""Analysis of bath-level responses: ANOVA, effects, reduction, diagnostics, surfaces,
sweeps, desirability and confirmation.

Modules: :mod:`~trialkit.analysis.model` (fit), :mod:`~trialkit.analysis.anova` (types
1-3, lack of fit, curvature), :mod:`~trialkit.analysis.exact` (exact decimal shift),
:mod:`~trialkit.analysis.effects` (two-level effects, alias chains, Lenth),
:mod:`~trialkit.analysis.reduction`, :mod:`~trialkit.analysis.diagnostics`,
:mod:`~trialkit.analysis.surface`, :mod:`~trialkit.analysis.sweep`,
:mod:`~trialkit.analysis.desirability`, :mod:`~trialkit.analysis.confirm`,
:mod:`~trialkit.analysis.pipeline` (everything for one response),
:mod:`~trialkit.analysis.config` (the ``[analysis]`` trial-file section),
:mod:`~trialkit.analysis.split_plot` (exact two-stratum ANOVA of a balanced split plot) and
:mod:`~trialkit.analysis.split_plot_mixed` (the same by REML with statsmodels MixedLM).
:mod:`~trialkit.analysis.trial_analysis` analyses a whole trial folder once
(``trialkit.analyze``) into a :class:`~trialkit.analysis.trial_data.TrialAnalysis`, with the
recommendation of :mod:`~trialkit.analysis.recommend`; :mod:`~trialkit.analysis.agreement`
gives the agreement of photo measurements with hand estimates (Bland–Altman, ICC(A,1)).
Public names are imported on first use so that importing this package stays light
(``confirm`` is not re-exported here: it is also the name of its module).

May import: ``trialkit.photos``, ``trialkit.responses`` and the stages before them; never
figures, the report or the demo.
"""

from __future__ import annotations

import importlib
from typing import Any

_EXPORTS: dict[str, str] = {
    "fit_model": "trialkit.analysis.model",
    "ModelFit": "trialkit.analysis.model",
    "AnovaTable": "trialkit.analysis.anova",
    "two_level_effects": "trialkit.analysis.effects",
    "lenth": "trialkit.analysis.effects",
    "EffectsResult": "trialkit.analysis.effects",
    "reduce_model": "trialkit.analysis.reduction",
    "ReductionResult": "trialkit.analysis.reduction",
    "diagnose": "trialkit.analysis.diagnostics",
    "Diagnostics": "trialkit.analysis.diagnostics",
    "fit_surface": "trialkit.analysis.surface",
    "SurfaceResult": "trialkit.analysis.surface",
    "fit_sweep": "trialkit.analysis.sweep",
    "SweepResult": "trialkit.analysis.sweep",
    "Aim": "trialkit.analysis.desirability",
    "optimize_desirability": "trialkit.analysis.desirability",
    "DesirabilityResult": "trialkit.analysis.desirability",
    "ConfirmationResult": "trialkit.analysis.confirm",
    "analyze_table": "trialkit.analysis.pipeline",
    "best_compromise": "trialkit.analysis.pipeline",
    "AnalysisResult": "trialkit.analysis.pipeline",
    "factors_from_table": "trialkit.analysis.data",
    "AnalysisConfig": "trialkit.analysis.config",
    "split_plot_anova": "trialkit.analysis.split_plot",
    "SplitPlotAnova": "trialkit.analysis.split_plot",
    "split_plot_mixed_model": "trialkit.analysis.split_plot_mixed",
    "SplitPlotMixedFit": "trialkit.analysis.split_plot_mixed",
}

__all__ = sorted(_EXPORTS)


def __getattr__(name: str) -> Any:
    if name in _EXPORTS:
        return getattr(importlib.import_module(_EXPORTS[name]), name)
    raise AttributeError(f"module 'trialkit.analysis' has no attribute {name!r}")


def __dir__() -> list[str]:
    return __all__
