"""Confirmation baths: do they fall inside the prediction intervals?

Examples
--------
>>> import pandas as pd
>>> from trialkit.trial.factors import Factor
>>> from trialkit.analysis.model import fit_model
>>> df = pd.DataFrame({"a": [-1.0, 1, -1, 1, 0, 0], "y": [1.0, 3.1, 0.9, 3.0, 2.1, 1.9]})
>>> fit = fit_model(df, "y", [Factor.continuous("a", -1, 1)], "a", block=None)
>>> confirm(fit, {"a": 0.5}, [2.4, 2.6]).all_inside
True
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd

from trialkit.analysis.data import finite
from trialkit.analysis.exact import to_decimals
from trialkit.exceptions import AnalysisError


@dataclass
class ConfirmationResult:
    """Confirmation baths against the model's prediction.

    Attributes
    ----------
    settings : dict
    table : DataFrame
        bath, observed, pi_low, pi_high, inside (single-bath prediction interval).
    mean : dict
        observed mean, predicted, pi_low, pi_high for the mean of the m baths, inside.
    """

    settings: dict
    table: pd.DataFrame
    mean: dict

    @property
    def all_inside(self) -> bool:
        return bool(self.table.inside.all()) and bool(self.mean["inside"])

    @property
    def summary(self) -> pd.DataFrame:
        return self.table

    def to_dict(self) -> dict:
        return {"settings": self.settings, "all_inside": self.all_inside,
                "baths": self.table.to_dict("records"),
                "mean": {k: finite(v) if isinstance(v, float) else v
                         for k, v in self.mean.items()}}

    def __repr__(self) -> str:
        return (f"ConfirmationResult(mean {self.mean['observed']:.6g} in "
                f"[{self.mean['pi_low']:.6g}, {self.mean['pi_high']:.6g}]: "
                f"{'inside' if self.all_inside else 'NOT inside'})")

    def _repr_html_(self) -> str:
        return self.table.to_html(index=False)


def confirm(fit, settings: Mapping[str, object], observed: Sequence[float], *,
            baths: Sequence[str] | None = None) -> ConfirmationResult:
    """Compare confirmation baths run at ``settings`` with the prediction there."""
    y = np.array([float(v) for v in to_decimals(observed, name="confirmation")])
    if len(y) == 0:
        raise AnalysisError("no confirmation values were given")
    one = fit.predict(dict(settings)).iloc[0]
    many = fit.predict(dict(settings), n_new=len(y)).iloc[0]
    names = list(baths) if baths is not None else [f"C{i + 1}" for i in range(len(y))]
    table = pd.DataFrame({"bath": names, "observed": y, "predicted": float(one.predicted),
                          "pi_low": float(one.pi_low), "pi_high": float(one.pi_high)})
    table["inside"] = (table.observed >= table.pi_low) & (table.observed <= table.pi_high)
    m = float(y.mean())
    mean = {"observed": m, "n": len(y), "predicted": float(many.predicted),
            "pi_low": float(many.pi_low), "pi_high": float(many.pi_high),
            "inside": bool(many.pi_low <= m <= many.pi_high)}
    return ConfirmationResult(dict(settings), table, mean)
