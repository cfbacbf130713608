"""Errors and warnings raised by trialkit.

Every error is a ``ValueError`` subclass so that callers who do not care about the
detail can catch one familiar type.  Messages say what was received, what is allowed
and what to try.  Errors that gather several problems (a trial file, an ingested
sheet) carry them as a :class:`trialkit.problems.ProblemReport` in ``.problems``.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:  # pragma: no cover
    from trialkit.problems import ProblemReport


#: Exit codes of the ``trialkit`` command (also listed in ``trialkit --help``).
EXIT_DONE = 0
EXIT_REFUSED = 1
EXIT_USAGE = 2
EXIT_INTERNAL = 3


class TrialkitError(ValueError):
    """Base class of every error trialkit raises on bad input.

    ``exit_code`` is the command line's exit code for this error: 1 (:data:`EXIT_REFUSED`)
    when the input was read and refused with its problems listed (``.problems``), 2
    (:data:`EXIT_USAGE`) for a usage error or an input that cannot be read at all.
    """

    def __init__(self, message: str, problems: ProblemReport | None = None, *,
                 exit_code: int | None = None):
        super().__init__(message)
        self.problems = problems
        self._exit_code = exit_code

    @property
    def exit_code(self) -> int:
        if self._exit_code is not None:
            return self._exit_code
        return EXIT_REFUSED if self.problems else EXIT_USAGE


class TrialFileError(TrialkitError):
    """The trial file has one or more problems (see ``.problems``)."""


class DesignError(TrialkitError):
    """A design cannot be built from the factors and options given."""


class PlanError(TrialkitError):
    """The layout (replicates, blocks, controls, coupons) cannot be laid out."""


class ChemistryError(TrialkitError):
    """A bath cannot be computed: unknown ingredient, unreachable pH, solver failure."""


class SheetError(TrialkitError):
    """A recording sheet was refused on ingest (see ``.problems``)."""


class RecordLogError(TrialkitError):
    """The record log cannot be opened or written."""


class ResponseError(TrialkitError):
    """A response cannot be computed from the readings."""


class ModelSpecError(TrialkitError):
    """A model specification names unknown factors or is not in the grammar."""


class AnalysisError(TrialkitError):
    """A model cannot be fitted to the data given."""


class TrialkitWarning(UserWarning):
    """Something was computed, but the user should look at it."""


class PhotoError(TrialkitError):
    """A photograph cannot be read or measured (not an image, empty, no coupon found)."""
