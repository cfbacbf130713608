"""Confirmation baths: do they fall inside the prediction intervals?

The rule: a response is confirmed when the mean of its ``m`` confirmation baths lies in
the prediction interval for the mean of ``m`` new baths.  Under a correct model (normal
errors) that fails with probability ``alpha`` exactly.  With several responses checked at
once the level is split (Bonferroni): each mean is judged at ``alpha / R`` for ``R``
responses, so a correct model passes all of them at least ``1 - alpha`` of the time.
Each bath's own single-bath interval is shown beside, for information; requiring every
bath inside as well (the former rule) fails a correct model far more often (about 17 %
for three baths and one response), so it does not decide.

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
from scipy import stats

from trialkit.analysis.data import finite
from trialkit.analysis.exact import to_decimals
from trialkit.exceptions import AnalysisError
from trialkit.numbers import readable, readable_interval


@dataclass
class ConfirmationResult:
    """Confirmation baths against the model's prediction.

    Attributes
    ----------
    settings : dict
    table : DataFrame
        bath, observed, pi_low, pi_high, inside (single-bath prediction interval).
    mean : dict
        observed mean, predicted, pi_low, pi_high for the mean of the m baths (at the
        rule's level), inside.
    level : float
        Level of the mean's interval, ``1 - alpha / n_responses``.
    n_responses : int
        Responses checked together (the Bonferroni split).
    """

    settings: dict
    table: pd.DataFrame
    mean: dict
    level: float = 0.95
    n_responses: int = 1

    @property
    def all_inside(self) -> bool:
        """The verdict of the rule (module docstring): the mean inside its interval."""
        return bool(self.mean["inside"])

    @property
    def false_alarm_rate(self) -> float:
        """Chance that a correct model fails this response's check (``1 - level``)."""
        return 1.0 - self.level

    @property
    def rule(self) -> str:
        return (f"confirmed when the mean of the {self.mean['n']} confirmation baths lies in "
                f"the {readable(100 * self.level)} % prediction interval for such a mean "
                f"(Bonferroni over {self.n_responses} response"
                f"{'s' if self.n_responses != 1 else ''}: a correct model fails one "
                f"response's check {readable(100 * self.false_alarm_rate, 2)} % of the time, all "
                f"together at most "
                f"{readable(100 * self.false_alarm_rate * self.n_responses, 2)} %)")

    @property
    def summary(self) -> pd.DataFrame:
        return self.table

    def to_dict(self) -> dict:
        return {"settings": self.settings, "all_inside": self.all_inside,
                "rule": self.rule, "level": self.level, "n_responses": self.n_responses,
                "false_alarm_rate": self.false_alarm_rate,
                "every_bath_inside": bool(self.table.inside.all()),
                "baths": self.table.to_dict("records"),
                "mean": {k: finite(v) if isinstance(v, float) else v
                         for k, v in self.mean.items()}}

    def __repr__(self) -> str:
        mean, lo, hi = readable_interval(self.mean["observed"], self.mean["pi_low"],
                                         self.mean["pi_high"])
        return (f"ConfirmationResult(mean {mean} in [{lo}, {hi}]: "
                f"{'inside' if self.all_inside else 'NOT inside'})")

    def _repr_html_(self) -> str:
        return self.table.to_html(index=False)


def confirm(fit, settings: Mapping[str, object], observed: Sequence[float], *,
            baths: Sequence[str] | None = None, n_responses: int = 1) -> ConfirmationResult:
    """Compare confirmation baths run at ``settings`` with the prediction there.

    ``n_responses``: how many responses are checked on the same baths; the mean's
    interval is at level ``1 - fit.alpha / n_responses`` (module docstring).
    """
    if int(n_responses) < 1:
        raise AnalysisError(f"n_responses must be 1 or more, got {n_responses!r}")
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
    level = 1.0 - fit.alpha / int(n_responses)
    lo, hi = float(many.pi_low), float(many.pi_high)
    if n_responses > 1 and fit.df_resid > 0:
        X = fit.design_rows(dict(settings))
        var = float(X[0] @ fit.ls.xtx_inv @ X[0]) * fit.sigma2 + fit.sigma2 / len(y)
        half = float(stats.t.ppf(1 - (1 - level) / 2, fit.df_resid)) * np.sqrt(var)
        raw = float(fit.predict(dict(settings), clip=False).predicted.iloc[0])
        low_lim, high_lim = fit.limits
        lo = max(raw - half, -np.inf if low_lim is None else low_lim)
        hi = min(raw + half, np.inf if high_lim is None else high_lim)
    mean = {"observed": m, "n": len(y), "predicted": float(many.predicted),
            "pi_low": lo, "pi_high": hi, "inside": bool(lo <= m <= hi)}
    return ConfirmationResult(dict(settings), table, mean, level, int(n_responses))
