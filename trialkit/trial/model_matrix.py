"""Model matrices: a parsed model (:mod:`trialkit.trial.model_grammar`) on a data table.

Continuous factors enter in coded units, categorical ones in sum (or treatment) contrasts,
one column per level but the last, named ``factor = level``.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd

from trialkit.exceptions import AnalysisError, ModelSpecError
from trialkit.trial.factors import Factor
from trialkit.trial.model_grammar import CODINGS, INTERCEPT, ModelSpec

#: Between a categorical factor and its level in a model column name.
LEVEL_SEPARATOR = " = "


@dataclass(frozen=True)
class ModelMatrix:
    """The numeric model matrix of a model on a data table.

    Attributes
    ----------
    X : ndarray, shape (n_rows, n_columns)
        Intercept column first.
    columns : tuple of str
        Column names (``"intercept"``, ``"chelator"``, ``"surfactant = none"`` ...).
    term_columns : dict
        Term name (and ``"intercept"``) -> slice of columns of ``X``.
    spec : ModelSpec
    coding : str
        ``"sum"`` or ``"treatment"``.
    levels : dict
        Categorical factor name -> the level order used.
    """

    X: np.ndarray
    columns: tuple[str, ...]
    term_columns: dict[str, slice]
    spec: ModelSpec
    coding: str
    levels: dict[str, tuple[str, ...]]


def _levels_of(factor: Factor, column: pd.Series, given: Mapping[str, Sequence[str]] | None
               ) -> tuple[str, ...]:
    if given and factor.name in given:
        return tuple(str(v) for v in given[factor.name])
    if factor.levels:
        return tuple(str(v) for v in factor.levels)
    return tuple(sorted({str(v) for v in column.dropna()}))


def _factor_block(factor: Factor, column: pd.Series, coding: str,
                  levels: tuple[str, ...]) -> tuple[np.ndarray, list[str]]:
    if factor.is_continuous:
        try:
            x = pd.to_numeric(column, errors="raise").to_numpy(dtype=float)
        except (ValueError, TypeError) as exc:
            raise AnalysisError(
                f"factor {factor.name!r} is continuous but its column holds text "
                f"({exc}); give numbers, or declare it categorical") from None
        if not np.all(np.isfinite(x)):
            bad = np.flatnonzero(~np.isfinite(x))[:5] + 1
            raise AnalysisError(f"factor {factor.name!r} has missing values in rows "
                                f"{bad.tolist()}; drop those rows (controls?) first")
        return x[:, None], [factor.name]
    labels = column.astype(str).to_numpy()
    unknown = sorted(set(labels) - set(levels))
    if unknown:
        raise AnalysisError(f"factor {factor.name!r} has levels {unknown} not among "
                            f"{list(levels)}; fix the labels or the factor's levels")
    if len(levels) < 2:
        raise AnalysisError(f"factor {factor.name!r} has only the level {list(levels)}; "
                            "a factor needs at least two levels to be in a model")
    k = len(levels)
    idx = np.array([levels.index(v) for v in labels])
    if coding == "sum":
        block = np.zeros((len(labels), k - 1))
        for j in range(k - 1):
            block[:, j] = (idx == j).astype(float)
        block[idx == k - 1, :] = -1.0
        names = [level_label(factor.name, lv) for lv in levels[:-1]]
    else:
        block = np.zeros((len(labels), k - 1))
        for j in range(1, k):
            block[:, j - 1] = (idx == j).astype(float)
        names = [level_label(factor.name, lv) for lv in levels[1:]]
    return block, names


def level_label(factor: str, level: object) -> str:
    """Name of the model column of one level of a categorical factor.

    >>> level_label("surfactant", "none")
    'surfactant = none'
    """
    return f"{factor}{LEVEL_SEPARATOR}{level}"


def model_matrix(spec: ModelSpec, data: pd.DataFrame, *, coding: str = "sum",
                 levels: Mapping[str, Sequence[str]] | None = None) -> ModelMatrix:
    """Build the model matrix of ``spec`` on ``data`` (coded units / labels).

    Parameters
    ----------
    spec : ModelSpec
    data : DataFrame
        One column per factor used by the model.
    coding : {"sum", "treatment"}
        Contrasts for categorical factors: sum-to-zero (deviation) or treatment (dummy,
        first level as baseline).
    levels : mapping, optional
        Level order per categorical factor (defaults: the factor's own levels, else the
        sorted observed labels).  Pass ``ModelMatrix.levels`` to predict on new rows.

    Returns
    -------
    ModelMatrix
    """
    if coding not in CODINGS:
        raise ModelSpecError(f"coding must be one of {CODINGS}, got {coding!r}")
    missing = [f.name for f in spec.used_factors if f.name not in data.columns]
    if missing:
        raise AnalysisError(f"the data have no column for factor(s) {missing}; columns: "
                            f"{list(map(str, data.columns))}")
    n = len(data)
    blocks: dict[str, tuple[np.ndarray, list[str]]] = {}
    used_levels: dict[str, tuple[str, ...]] = {}
    for f in spec.used_factors:
        lv = _levels_of(f, data[f.name], levels) if f.is_categorical else ()
        if f.is_categorical:
            used_levels[f.name] = lv
        blocks[f.name] = _factor_block(f, data[f.name], coding, lv)
    cols = [np.ones((n, 1))]
    names = [INTERCEPT]
    term_columns = {INTERCEPT: slice(0, 1)}
    start = 1
    for t in spec.terms:
        if t.power == 2:
            x, nm = blocks[t.factors[0]]
            block, bnames = x ** 2, [t.name]
        else:
            block, bnames = blocks[t.factors[0]]
            for other in t.factors[1:]:
                ob, on = blocks[other]
                block = (block[:, :, None] * ob[:, None, :]).reshape(n, -1)
                bnames = [f"{a}:{b}" for a in bnames for b in on]
        cols.append(block)
        names.extend(bnames)
        term_columns[t.name] = slice(start, start + block.shape[1])
        start += block.shape[1]
    X = np.hstack(cols) if cols else np.ones((n, 1))
    return ModelMatrix(X, tuple(names), term_columns, spec, coding, used_levels)


def coded_frame(data_natural: pd.DataFrame, factors: Sequence[Factor]) -> pd.DataFrame:
    """Convert factor columns from natural to coded units (labels stay text).

    Other columns are kept unchanged.

    Examples
    --------
    >>> from trialkit.trial.factors import Factor
    >>> df = pd.DataFrame({"chelator": [2.0, 6.0, 10.0], "y": [1, 2, 3]})
    >>> coded_frame(df, [Factor.continuous("chelator", 2, 10)])["chelator"].tolist()
    [-1.0, 0.0, 1.0]
    """
    out = data_natural.copy()
    for f in factors:
        if f.name not in out.columns:
            continue
        if f.is_continuous:
            try:
                x = pd.to_numeric(out[f.name], errors="raise").astype(float)
            except (ValueError, TypeError):
                raise AnalysisError(f"factor {f.name!r} is continuous but its column holds "
                                    "text; give numbers or declare it categorical") from None
            out[f.name] = (x - f.center) / f.half_range
        else:
            out[f.name] = out[f.name].astype(str)
    return out
