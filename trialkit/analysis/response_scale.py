"""The scale a response is modelled on: raw, log or logit (``[[response]] scale``).

A bounded response fitted on the raw scale can be predicted outside its range (removal
above 100 %, a rate below 0); :class:`~trialkit.analysis.model.ModelFit` then cuts its
predictions to the range and flags them.  On the **log** scale (a quantity above a lower
bound: ``ln(y - low)``) or the **logit** scale (a quantity between two bounds:
``ln(u / (1 - u))`` with ``u = (y - low) / (high - low)``) the model is linear in the
transformed response and every prediction and interval, transformed back, lies inside the
range.  Back-transformed, the fitted mean is the median of the response at those settings
(the transform is monotone, so the interval ends transform as they are).

The logit of 0 and 100 % is infinite: a value at a bound is read as half a percentage
point of the range inside it (``LOGIT_EDGE``; removal is read from coverage estimates in
whole percent, so 100 % means "at least 99.5 %" — common practice).  The log scale needs
every value above the lower bound; a value at it is refused with the reason.

Examples
--------
>>> s = ResponseScale.for_response("logit", (0.0, 100.0))
>>> [round(float(v), 3) for v in s.forward([50.0, 100.0])]
[0.0, 5.293]
>>> [round(float(v), 2) for v in s.back(s.forward([2.0, 50.0, 99.0]))]
[2.0, 50.0, 99.0]
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from trialkit.exceptions import AnalysisError

SCALES = ("raw", "log", "logit")
#: A value at a bound of a logit-scale response is read this share of the range inside.
LOGIT_EDGE = 0.005


@dataclass(frozen=True)
class ResponseScale:
    """How a response is transformed before fitting, and back.

    Attributes
    ----------
    kind : {"raw", "log", "logit"}
    low, high : float or None
        The response's physical range (``high`` unused on the log scale).
    """

    kind: str = "raw"
    low: float | None = None
    high: float | None = None

    @classmethod
    def for_response(cls, kind: str, limits: tuple = (None, None)) -> ResponseScale:
        """The scale ``kind`` for a response with physical range ``limits``.

        Raises
        ------
        AnalysisError
            An unknown kind, a log scale without a lower bound, a logit scale without
            both bounds.
        """
        lo, hi = (tuple(limits) + (None, None))[:2]
        if kind not in SCALES:
            raise AnalysisError(f"unknown scale {kind!r}; use one of {', '.join(SCALES)}")
        if kind == "log" and lo is None:
            raise AnalysisError("the log scale needs a lower bound of the response (give "
                                "range = [0, \"none\"] in its [[response]])")
        if kind == "logit" and (lo is None or hi is None or not hi > lo):
            raise AnalysisError("the logit scale needs both bounds of the response (give "
                                "range = [0, 100] in its [[response]])")
        return cls(kind, None if lo is None else float(lo), None if hi is None else float(hi))

    @property
    def is_raw(self) -> bool:
        return self.kind == "raw"

    def forward(self, values, name: str = "response") -> np.ndarray:
        """Transform response values for fitting (:class:`AnalysisError` if one cannot be)."""
        y = np.asarray(values, dtype=float)
        if self.kind == "log":
            bad = y[~(y > self.low)]
            if bad.size:
                raise AnalysisError(
                    f"{name} has values at or below {self.low:g} ({bad[:3].tolist()}), which "
                    "the log scale cannot take; use scale = \"raw\" for this response")
            return np.log(y - self.low)
        if self.kind == "logit":
            width = self.high - self.low
            outside = y[(y < self.low) | (y > self.high)]
            if outside.size:
                raise AnalysisError(f"{name} has values outside its range {self.low:g} to "
                                    f"{self.high:g}: {outside[:3].tolist()}")
            u = np.clip((y - self.low) / width, LOGIT_EDGE, 1 - LOGIT_EDGE)
            return np.log(u / (1 - u))
        return y

    def back(self, values) -> np.ndarray:
        """Transform fitted values (or interval ends) back to the response's unit."""
        z = np.asarray(values, dtype=float)
        if self.kind == "log":
            return self.low + np.exp(np.clip(z, -700, 700))
        if self.kind == "logit":
            return self.low + (self.high - self.low) / (1 + np.exp(-np.clip(z, -700, 700)))
        return z

    def describe(self) -> str:
        """The scale in a sentence (analysis output and report)."""
        if self.kind == "log":
            return (f"log scale (ln of the response above {self.low:g}); predictions and "
                    "intervals transformed back (the fitted value is a median)")
        if self.kind == "logit":
            return (f"logit scale over {self.low:g} to {self.high:g} (values at a bound read "
                    f"{100 * LOGIT_EDGE:g} % of the range inside it); predictions and "
                    "intervals transformed back (the fitted value is a median)")
        return "raw scale"


RAW = ResponseScale()
