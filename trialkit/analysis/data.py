"""Getting analysis data ready: factors for plain tables, dropping unusable rows, checks.

Examples
--------
>>> import pandas as pd
>>> df = pd.DataFrame({"chelator": [2, 6, 10], "surfactant": ["no", "yes", "no"]})
>>> [(f.name, f.kind, f.low, f.high) for f in factors_from_table(
...     df, ["chelator", "surfactant:categorical"])]
[('chelator', 'continuous', 2.0, 10.0), ('surfactant', 'categorical', None, None)]
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd

from trialkit.exceptions import AnalysisError
from trialkit.problems import did_you_mean
from trialkit.trial.factors import Factor

KINDS = ("continuous", "categorical", "ordinal")



def _level_text(value) -> str:
    """A level as a person writes it: ``40``, ``5.5``, ``added`` (no Python repr)."""
    from trialkit.numbers import readable

    return readable(value) if isinstance(value, (int, float)) else str(value)

def factors_from_table(table: pd.DataFrame, specs: Sequence[str]) -> tuple[Factor, ...]:
    """Factors for a plain table from ``NAME`` or ``NAME:categorical`` (``:ordinal``).

    A continuous factor's low/high are the observed minimum and maximum; a categorical
    factor's levels are the observed labels in order of first appearance.
    """
    out = []
    cols = [str(c) for c in table.columns]
    for spec in specs:
        name, _, kind = str(spec).partition(":")
        name, kind = name.strip(), (kind.strip().lower() or "continuous")
        if kind not in KINDS:
            raise AnalysisError(f"factor {spec!r}: kind {kind!r} is not one of {KINDS}; "
                                "write NAME, NAME:categorical or NAME:ordinal")
        if name not in cols:
            raise AnalysisError(f"factor {name!r} is not a column of the table; "
                                + did_you_mean(name, cols))
        col = table[name]
        if kind == "continuous":
            x = pd.to_numeric(col, errors="coerce")
            text = col[x.isna() & col.notna()]
            if len(text):
                raise AnalysisError(
                    f"factor {name!r} holds text ({text.iloc[0]!r} in row "
                    f"{int(text.index[0]) + 2}); declare it {name}:categorical or fix it")
            x = x.dropna()
            if x.nunique() < 2:
                raise AnalysisError(f"factor {name!r} has only one level "
                                    f"({x.iloc[0] if len(x) else 'none'}); a factor needs "
                                    "two or more levels — drop it from the analysis")
            out.append(Factor.continuous(name, float(x.min()), float(x.max())))
        else:
            levels = list(dict.fromkeys(str(v) for v in col.dropna()))
            if len(levels) < 2:
                raise AnalysisError(f"factor {name!r} has only one level {levels}; a factor "
                                    "needs two or more levels — drop it from the analysis")
            maker = Factor.categorical if kind == "categorical" else Factor.ordinal
            out.append(maker(name, levels))
    return tuple(out)


@dataclass(frozen=True)
class Prepared:
    """Rows fit for a model: natural values, coded values, dropped-row count."""

    natural: pd.DataFrame
    coded: pd.DataFrame
    n_dropped: int


def response_column(table: pd.DataFrame, response: str) -> str:
    """The column holding ``response``: the name itself or ``<name>_mean``."""
    cols = [str(c) for c in table.columns]
    for cand in (response, f"{response}_mean"):
        if cand in cols:
            return cand
    raise AnalysisError(f"no response column {response!r} (nor {response + '_mean'!r}); "
                        + did_you_mean(response, cols))


def prepare(table: pd.DataFrame, response: str, factors: Sequence[Factor],
            extra: Sequence[str] = ()) -> Prepared:
    """Keep rows with every factor and the response present; code the factors.

    Raises
    ------
    AnalysisError
        Text in the response column, a factor column missing, fewer than two levels of a
        factor among the usable rows.
    """
    from trialkit.trial.model_matrix import coded_frame

    missing = [f.name for f in factors if f.name not in table.columns]
    if missing:
        raise AnalysisError(f"the table has no column for factor(s) {missing}; columns: "
                            f"{list(map(str, table.columns))}")
    raw = table[response]
    as_num = pd.to_numeric(raw, errors="coerce")
    text = raw[as_num.isna() & raw.notna() & (raw.astype(str).str.strip() != "")]
    if len(text):
        rows = ", ".join(f"row {int(i) + 1}: {v!r}" for i, v in text.head(5).items())
        raise AnalysisError(f"response {response!r} must hold numbers; found text ({rows}). "
                            "Fix those cells or leave them empty to drop the rows.")
    keep = as_num.notna()
    for f in factors:
        col = table[f.name]
        keep &= col.notna() & (col.astype(str).str.strip() != "")
    for e in extra:
        if e in table.columns:
            keep &= table[e].notna()
    natural = table.loc[keep].reset_index(drop=True)
    if len(natural) == 0:
        raise AnalysisError(f"no row has both {response!r} and every factor value; nothing "
                            "to analyse")
    for f in factors:
        if natural[f.name].astype(str).nunique() < 2:
            raise AnalysisError(
                f"factor {f.name!r} has only one level ({_level_text(natural[f.name].iloc[0])})"
                " among the usable rows; a factor needs two or more levels — remove it "
                "from the model or add baths at other levels")
    coded = coded_frame(natural, factors)
    return Prepared(natural, coded, int((~keep).sum()))


def finite(x: object) -> float | None:
    """A float, or None for NaN/inf (for JSON)."""
    try:
        v = float(x)
    except (TypeError, ValueError):
        return None
    return v if np.isfinite(v) else None
