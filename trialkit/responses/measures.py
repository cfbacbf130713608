"""The measures a trial's ``[[response]]`` may name, and the check of a trial against them.

Known measures are the responses computed from the readings
(:data:`trialkit.responses.definitions.RESPONSES`, per coupon, summarised per bath) and
the cost measures worked out from the recipes (:data:`trialkit.responses.bath_cost.
COST_MEASURES`).  ``trialkit plan`` checks a trial's measures before anything is laid out.
"""

from __future__ import annotations

from trialkit.exceptions import TrialFileError
from trialkit.problems import ProblemReport, did_you_mean
from trialkit.responses.bath_cost import COST_MEASURES
from trialkit.responses.definitions import RESPONSES


def known_measures() -> dict[str, str]:
    """Measure name -> one line saying what it is (unit first)."""
    out = {name: f"[{unit or 'no unit'}] {method}"
           for name, (unit, _, method) in RESPONSES.items()}
    out.update({name: f"[{unit}] {text}" for name, (unit, _, text) in COST_MEASURES.items()})
    return out


def measures_text() -> str:
    """The measures a response may name, one per line (``trialkit new --measures``)."""
    known = known_measures()
    width = max(map(len, known))
    return "\n".join(f"{name:<{width}}  {text}" for name, text in known.items())


def check_measures(trial) -> None:
    """Refuse a trial whose responses name a measure trialkit does not compute.

    Raises
    ------
    TrialFileError
        Listing every unknown measure, with the nearest known one.

    Examples
    --------
    >>> from types import SimpleNamespace
    >>> from trialkit.trial.spec import ResponseSpec
    >>> t = SimpleNamespace(path=None, responses=(ResponseSpec("r", measure="removal_pc"),))
    >>> try:
    ...     check_measures(t)
    ... except TrialFileError as exc:
    ...     print("removal_pct" in str(exc))
    True
    """
    names = list(known_measures())
    problems = ProblemReport(str(getattr(trial, "path", None) or "trial file"))
    for i, spec in enumerate(trial.responses, start=1):
        measure = spec.measure or spec.name
        if measure not in names:
            problems.add(f"response[{i}].measure", f"unknown measure {measure!r} for "
                         f"response {spec.name!r}", value=measure, check="unknown_measure",
                         fix=did_you_mean(measure, names) + " ('trialkit new --measures' "
                         "lists every measure)")
    problems.raise_if_any(TrialFileError, "The trial's responses name measures trialkit "
                                          "does not compute; nothing was written.")
