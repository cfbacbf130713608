"""Refusals of response values no analysis can use, shared by every analysis path.

Examples
--------
>>> import pandas as pd
>>> check_response_values(pd.DataFrame({"removal": [50.0, 50.0]}), "removal")  # doctest: +ELLIPSIS
Traceback (most recent call last):
...
trialkit.exceptions.AnalysisError: response 'removal' is constant (every value is 50): ...
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from trialkit.exceptions import AnalysisError
from trialkit.numbers import readable
from trialkit.trial.limits import short

#: Response values must lie within this magnitude (beyond it, give them in another unit).
MAX_MAGNITUDE = 1e100


def check_response_values(table: pd.DataFrame, column: str) -> None:
    """Refuse a response that cannot be analysed: constant, non-finite, or so large or so
    small that sums of squares leave the range of floating point.  Missing values are
    ignored (the fit leaves those rows out); a missing column is left to the caller."""
    if column not in table:
        return
    values = pd.to_numeric(table[column], errors="coerce").to_numpy(dtype=float)
    values = values[~np.isnan(values)]
    if np.isinf(values).any():
        raise AnalysisError(f"response {short(column)!r} holds infinite values; remove them")
    if len(values) and values.min() == values.max():
        raise AnalysisError(f"response {short(column)!r} is constant (every value is "
                            f"{readable(values[0])}): there is no variation to analyse")
    big = np.abs(values).max() if len(values) else 0.0
    spread = values.max() - values.min() if len(values) else 0.0
    if big > MAX_MAGNITUDE or (len(values) and 0 < spread < 1 / MAX_MAGNITUDE):
        raise AnalysisError(f"response {short(column)!r} has values of magnitude "
                            f"{big:.3g} and spread {spread:.3g}, outside what the analysis "
                            f"handles (1e-100 to 1e100): give it in another unit")
