"""The optional ``[evaluation]`` section of a trial file: settings for design evaluation.

``sd`` (residual SD between baths, response units), ``effects`` (the smallest difference
that matters: one size for every term or a table ``{term = size}``), ``response`` (the
response ``sd`` and ``effects`` refer to; its limits give the effect size when
``effects`` is not stated), ``alpha``, ``target_power`` and ``model``.  Parsed by
:func:`parse_evaluation_section`, registered in :data:`trialkit.trial.file.SECTION_PARSERS`
through :mod:`trialkit.planning.evaluation`.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

from trialkit.exceptions import ModelSpecError
from trialkit.problems import ProblemReport, did_you_mean

#: Keys of the ``[evaluation]`` section.
EVALUATION_KEYS = ("sd", "effects", "response", "alpha", "model", "target_power")


@dataclass(frozen=True)
class EvaluationSettings:
    """The ``[evaluation]`` section of a trial file (every field optional)."""

    sd: float | None = None
    effects: dict[str, float] | float | None = None
    alpha: float | None = None
    model: str | None = None
    target_power: float | None = None
    response: str | None = None

    def to_dict(self) -> dict:
        return {"sd": self.sd, "effects": self.effects, "alpha": self.alpha,
                "model": self.model, "target_power": self.target_power,
                "response": self.response}


def _positive(value, where, key, problems) -> float | None:
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not value > 0:
        problems.add(f"{where}.{key}", f"{key} must be a positive number",
                     value=value, fix=f"write e.g. {key} = 0.5", check="not_positive")
        return None
    return float(value)


def parse_evaluation_section(raw, trial, problems: ProblemReport,
                             where: str = "evaluation") -> EvaluationSettings:
    """Parse the optional ``[evaluation]`` section: ``sd``, ``effects``, ``response``,
    ``alpha``, ``model``, ``target_power``.  Problems are added to ``problems``, never raised.

    ``effects`` is one number (every term) or a table ``{term = size}`` in response units.
    """
    allowed = EVALUATION_KEYS
    if not isinstance(raw, Mapping):
        problems.add(where, "the evaluation section must be a table", value=type(raw).__name__,
                     fix="write [evaluation] with keys " + ", ".join(allowed), check="not_table")
        return EvaluationSettings()
    for key in raw:
        if key not in allowed:
            problems.add(f"{where}.{key}", f"unknown key {key!r}", value=key,
                         fix=did_you_mean(key, list(allowed)), check="unknown_key")
    sd = _positive(raw["sd"], where, "sd", problems) if "sd" in raw else None
    alpha = target = None
    for key in ("alpha", "target_power"):
        if key in raw:
            v = raw[key]
            if isinstance(v, bool) or not isinstance(v, (int, float)) or not 0 < v < 1:
                problems.add(f"{where}.{key}", f"{key} must lie strictly between 0 and 1",
                             value=v, fix=f"write e.g. {key} = "
                             + ("0.05" if key == "alpha" else "0.8"), check="out_of_range")
            elif key == "alpha":
                alpha = float(v)
            else:
                target = float(v)
    model = None
    if "model" in raw:
        if isinstance(raw["model"], str) and raw["model"].strip():
            model = raw["model"]
            factors = getattr(trial, "factors", None)
            if factors:
                from trialkit.planning.power import parse_terms

                try:
                    parse_terms(model, factors)
                except ModelSpecError as exc:
                    problems.add(f"{where}.model", str(exc), value=model,
                                 check="bad_model", fix="use main, interactions, quadratic "
                                 "or terms joined by '+'")
        else:
            problems.add(f"{where}.model", "model must be a text such as 'quadratic'",
                         value=raw["model"], check="bad_model",
                         fix="main, interactions, quadratic or 'a + b + a:b'")
    effects = None
    if "effects" in raw:
        e = raw["effects"]
        if isinstance(e, Mapping):
            effects = {}
            for term, size in e.items():
                v = _positive(size, f"{where}.effects", str(term), problems)
                if v is not None:
                    effects[str(term)] = v
        else:
            effects = _positive(e, where, "effects", problems)
    response = None
    if "response" in raw:
        names = [r.name for r in getattr(trial, "responses", ()) or ()]
        value = raw["response"]
        if not isinstance(value, str) or (names and value not in names):
            problems.add(f"{where}.response", "response must name one of the trial's "
                         "[[response]] entries", value=value, check="unknown_response",
                         fix=did_you_mean(str(value), names) if names
                         else "add a [[response]] with that name")
        else:
            response = value
    return EvaluationSettings(sd, effects, alpha, model, target, response)
