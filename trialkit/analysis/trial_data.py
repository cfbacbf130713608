"""What the analysis of a whole trial holds: :class:`TrialAnalysis`, filled in once by
:func:`trialkit.analysis.trial_analysis.analyze` (with :mod:`trialkit.analysis.recommend`)
and read by the report, the demo, the notebooks and the command line.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import pandas as pd

from trialkit.numbers import settings_text

TWO_LEVEL_KINDS = ("full-factorial", "fractional-factorial", "plackett-burman")
SURFACE_KINDS = ("central-composite", "box-behnken")


@dataclass
class TrialAnalysis:
    """The analysis of one trial folder (plain objects of the other stages).

    ``results`` holds each response's :class:`trialkit.analysis.pipeline.AnalysisResult`,
    ``recommendation`` the recommended settings with their predictions, ``notes`` a plain
    sentence for everything that could not be done and why.  :meth:`to_dict` gives plain
    data for JSON.
    """

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
    comparisons: list = field(default_factory=list)  # Tukey, levels of categorical factors
    versus_controls: list = field(default_factory=list)  # Dunnett, against the controls
    bench: pd.DataFrame | None = None  # baths whose recorded pH / temperature is off plan
    log_check: object | None = None  # trialkit.records.chain.LogVerification of the log
    censoring: dict = field(default_factory=dict)  # time response -> censoring (plain)
    censored_fits: dict = field(default_factory=dict)  # time response -> CensoredFit
    coverage_source: str = "hand"  # [photos] coverage_from: the coverages the responses use
    photos: pd.DataFrame | None = None  # coverages measured from photos (photo_readings)
    agreement: object | None = None  # analysis.agreement.CoverageAgreement, hand vs photo
    split_plots: dict = field(default_factory=dict)  # response -> SplitPlotResult
    derived_units: dict = field(default_factory=dict)  # response -> unit the data give
    notes: dict = field(default_factory=dict)  # topic -> list of sentences

    def note(self, topic: str, text: str) -> None:
        self.notes.setdefault(topic, []).append(text)

    @property
    def specs(self) -> dict:
        return {r.name: r for r in self.trial.responses}

    def unit(self, response: str) -> str:
        """The response's unit: as the trial file states it, else as the data give it (a
        cost's currency, e.g. ``EUR/L``)."""
        spec = self.specs.get(response)
        stated = spec.unit if spec is not None else ""
        return stated or self.derived_units.get(response, "")

    def recommendation_dict(self) -> dict | None:
        """The recommendation as plain data: ``settings``, ``predicted`` (every response
        with an aim: ``response, value, low, high``, a 95 % confidence interval of the
        mean), ``limits_met``, ``reasons`` (sentences), ``source``, ``predictions`` (all
        intervals of every fitted response)."""
        rec = self.recommendation
        if rec is None:
            return None
        table = rec["predictions"]
        wanted = table[table["aim"] != "record-only"]
        return {"settings": rec["settings"], "source": rec["source"],
                "predicted": [{"response": r.response, "value": r.predicted,
                               "low": r.ci_low, "high": r.ci_high, "unit": r.unit}
                              for r in wanted.itertuples()],
                "limits_met": bool(rec.get("limits_met", True)),
                "reasons": list(rec.get("reasons", [])),
                "set_to_cheapest": dict(rec.get("set_to_cheapest", {})),
                "predictions": table.to_dict("records")}

    def to_dict(self) -> dict:
        """Plain data: the trial, every response's analysis, the recommendation, notes."""
        return {
            "trial": getattr(self.trial, "title", ""),
            "fingerprint": self.plan.fingerprint, "seed": self.trial.seed,
            "responses": {**{name: self._response_dict(name, res)
                             for name, res in self.results.items()},
                          **{name: self._censored_only_dict(name) for name in self.censoring
                             if name not in self.results}},
            "recommendation": self.recommendation_dict(),
            "comparisons": list(self.comparisons),
            "versus_controls": list(self.versus_controls),
            "bench_deviations": ([] if self.bench is None
                                 else self.bench.to_dict("records")),
            "record_log": None if self.log_check is None else self.log_check.to_dict(),
            "confirmation": {k: v.to_dict() for k, v in self.confirmations.items()},
            "coverage_source": self.coverage_source,
            "photos": [] if self.photos is None else self.photos.to_dict("records"),
            "coverage_agreement": (None if self.agreement is None
                                   else self.agreement.to_dict()),
            "notes": {k: list(v) for k, v in self.notes.items()},
        }

    def _censored_only_dict(self, name: str) -> dict:
        """A time response with no linear model: its censored time model alone."""
        return {"response": name, "scale": "log scale (log-normal time model, slow baths "
                "right-censored)", "physical_range": [0.0, None],
                "censoring": self.censoring[name]}

    def _response_dict(self, name: str, res) -> dict:
        """One response's analysis; in a split-plot trial every ANOVA row tested on its own
        stratum (the bath-level F and p kept as ``F_baths_as_randomised`` and
        ``p_baths_as_randomised``)."""
        out = res.to_dict()
        if name in self.censoring:
            out["censoring"] = self.censoring[name]
        split = self.split_plots.get(name)
        if split is not None:
            out["split_plot"] = split.to_dict()
            tests = {r["term"]: r for r in out["split_plot"]["tests"]}
            for row in out.get("anova", []):
                row["F_baths_as_randomised"] = row.pop("F")
                row["p_baths_as_randomised"] = row.pop("p")
                test = tests.get(row["term"], {})
                row.update(F=test.get("f"), p=test.get("p_value"),
                           error_stratum=test.get("error_stratum", "not tested"),
                           error_df=test.get("error_df"))
        return out

    def __repr__(self) -> str:
        lines = [f"TrialAnalysis of {getattr(self.trial, 'title', self.folder)!s} "
                 f"(plan {self.plan.fingerprint})"]
        for name, res in self.results.items():
            lines.append(f"  {name}: modelled on {res.fit.spec.to_text()}")
        rec = self.recommendation
        if rec is not None:
            settings = settings_text(rec["settings"],
                                     {f.name: f.unit for f in self.trial.factors})
            lines.append(f"  recommended: {settings}")
            lines += [f"    {r}" for r in rec.get("reasons", [])]
        if self.comparisons or self.versus_controls:
            lines.append(f"  {len(self.comparisons)} comparisons of levels (Tukey), "
                         f"{len(self.versus_controls)} of treatments with the controls "
                         "(Dunnett); see to_dict()")
        for topic, sentences in self.notes.items():
            lines += [f"  note ({topic}): {s}" for s in sentences]
        return "\n".join(lines)

    def _repr_html_(self) -> str:
        import html

        return "<pre>" + html.escape(repr(self)) + "</pre>"


def first_line(exc: Exception) -> str:
    return str(exc).strip().splitlines()[0] if str(exc).strip() else type(exc).__name__
