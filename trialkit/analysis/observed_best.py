"""The best setting the trial actually ran: the recommendation when the model is weak.

A model that predicts left-out baths poorly (predicted R² below 0.5) should not choose a
recipe on its own: its best point may be a corner where it is merely extrapolating noise.
The honest fallback is the treatment whose baths did best on average (`common practice`:
pick the best bath you saw and confirm it), among the treatments whose observed means
keep every stated limit.

Examples
--------
>>> import pandas as pd
>>> baths = pd.DataFrame({"point": ["factorial"] * 4, "a": [1, 1, 2, 2],
...                       "y": [5.0, 7.0, 9.0, 8.0]})
>>> best_observed(baths, ["a"], "y", "higher")
({'a': 2}, 8.5, 2)
"""

from __future__ import annotations

from collections.abc import Callable, Sequence

import pandas as pd


def best_observed(baths: pd.DataFrame, factors: Sequence[str], response: str, aim: str,
                  keeps: Callable[[pd.Series], bool] | None = None
                  ) -> tuple[dict, float, int] | None:
    """The treatment (factor settings) with the best mean ``response``, its mean and its
    number of baths; controls and references left out; ``keeps`` (a row of treatment
    means -> bool) filters treatments that break a stated limit.  None when no treated
    bath has a value."""
    treated = baths[~baths["point"].isin(["control", "reference"])]
    treated = treated.dropna(subset=[*factors, response])
    if treated.empty:
        return None
    grouped = treated.groupby(list(factors), sort=True)
    means = grouped.mean(numeric_only=True)
    means["_n"] = grouped.size()
    if keeps is not None:
        ok = means.apply(keeps, axis=1)
        means = means[ok.astype(bool)] if ok.any() else means
    row = means[response].idxmin() if aim == "lower" else means[response].idxmax()
    key = row if isinstance(row, tuple) else (row,)
    settings = {f: (v.item() if hasattr(v, "item") else v)
                for f, v in zip(factors, key, strict=True)}
    return settings, float(means.loc[row, response]), int(means.loc[row, "_n"])
