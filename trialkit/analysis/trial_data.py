"""What the analysis of a whole trial holds: :class:`TrialData`, filled in by
:mod:`trialkit.analysis.trial_analysis` and :mod:`trialkit.analysis.recommend`, read by the
report, the demo and the command line.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import pandas as pd

TWO_LEVEL_KINDS = ("full-factorial", "fractional-factorial", "plackett-burman")
SURFACE_KINDS = ("central-composite", "box-behnken")


@dataclass
class TrialData:
    """Everything gathered for one report (plain objects of the other stages)."""

    folder: Path
    trial: object
    plan: object
    log: object | None = None
    history: pd.DataFrame | None = None
    current: pd.DataFrame | None = None
    responses: object | None = None
    baths: pd.DataFrame | None = None
    timecourse: pd.DataFrame | None = None
    kinetics: dict = field(default_factory=dict)
    fits: dict = field(default_factory=dict)
    models: dict = field(default_factory=dict)
    results: dict = field(default_factory=dict)  # response -> AnalysisResult
    effects: dict = field(default_factory=dict)
    surfaces: dict = field(default_factory=dict)
    sweeps: dict = field(default_factory=dict)
    desirability: object | None = None
    detectable: dict = field(default_factory=dict)
    recommendation: dict | None = None
    recipe: object | None = None
    confirmations: dict = field(default_factory=dict)  # response -> ConfirmationResult
    notes: dict = field(default_factory=dict)  # topic -> list of sentences

    def note(self, topic: str, text: str) -> None:
        self.notes.setdefault(topic, []).append(text)

    @property
    def specs(self) -> dict:
        return {r.name: r for r in self.trial.responses}

    def unit(self, response: str) -> str:
        spec = self.specs.get(response)
        return spec.unit if spec is not None else ""


def first_line(exc: Exception) -> str:
    return str(exc).strip().splitlines()[0] if str(exc).strip() else type(exc).__name__
