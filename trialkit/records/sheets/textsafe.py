"""Formula-safe text for the sheets: the functions live in :mod:`trialkit.trial.textsafe`
(so that ``plan.csv``, written by the planning stage, escapes text the same way)."""

from __future__ import annotations

from trialkit.trial.textsafe import FORMULA_STARTS, escape_text, needs_escape, unescape_text

__all__ = ["FORMULA_STARTS", "escape_text", "needs_escape", "unescape_text"]
