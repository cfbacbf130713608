"""The trial-file options of ``kind = "optimal"`` and its criteria, as plain data.

Kept apart from :mod:`trialkit.planning.designs.optimal` so that the option catalogue
(:mod:`trialkit.planning.designs.options`) can list them without importing the search
and its power computations; a plan of another kind then never loads them.
"""

from __future__ import annotations

CRITERIA = ("D", "I")
#: Trial-file options of ``kind = "optimal"`` -> description.
OPTION_DESCRIPTIONS: dict[str, str] = {
    "runs": "whole number (required): runs the search chooses, besides runs to keep",
    "model": "model the design must estimate: main, interactions, quadratic (default) or "
             "terms joined by '+'",
    "criterion": "\"D\" (default; precise coefficients) or \"I\" (precise predictions)",
    "tries": "random starting designs, best kept (default 10)",
    "grid": "levels per continuous factor tried by the exchange (default 5)",
    "constraints": "list of linear constraints in natural units, "
                   "e.g. [\"ph >= 4 + 0.2*chelator\"]",
    "cannot_mix": "list of combinations that cannot be mixed, e.g. "
                "[{surfactant = \"added\", temperature = [40, 50]}]",
    "keep_runs": "list of runs that must be in the design, every factor in natural units",
    "runs_done": "path of an earlier plan.csv whose runs the new ones complement",
    "max_passes": "passes over all coordinates per try (default 50)",
}
OPTION_KEYS = tuple(OPTION_DESCRIPTIONS)

__all__ = ["CRITERIA", "OPTION_DESCRIPTIONS", "OPTION_KEYS"]
