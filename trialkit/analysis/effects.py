"""Two-level designs: effects, alias chains and Lenth's method.

For unreplicated and fractional two-level designs every effect is a contrast of the
runs.  Effects whose contrast columns are identical (or opposite) in the design are
*aliased*: only their sum (or difference) can be estimated, so they are reported as one
alias chain with one estimate (``"A:B = C:D"``) instead of being split between terms.
Significance comes from Lenth's (1989) pseudo standard error:
``s0 = 1.5 median|c|``, ``PSE = 1.5 median(|c| : |c| < 2.5 s0)``, ``d = m / 3``,
margin of error ``ME = t(0.975; d) PSE`` and simultaneous margin
``SME = t(gamma; d) PSE`` with ``gamma = (1 + 0.95^(1/m)) / 2``.

Examples
--------
>>> res = lenth([23.0, -5.0, 1.5, 1.5, 10.0, 0.0, 0.5])  # BHH pilot plant 2^3
>>> res.pse, round(res.me, 3)
(2.25, 8.469)
"""

from __future__ import annotations

import itertools
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd
from scipy import stats

from trialkit.analysis.data import finite, prepare, response_column
from trialkit.exceptions import AnalysisError
from trialkit.trial.factors import Factor


@dataclass(frozen=True)
class LenthResult:
    """Lenth's pseudo standard error and margins.

    Attributes
    ----------
    s0, pse : float
    d : float
        Degrees of freedom, m / 3.
    me, sme : float
        Margin of error and simultaneous margin of error (level 1 - alpha).
    alpha : float
    """

    s0: float
    pse: float
    d: float
    me: float
    sme: float
    alpha: float = 0.05


def lenth(effects: Sequence[float], alpha: float = 0.05) -> LenthResult:
    """Lenth's PSE, ME and SME for a set of effect estimates (contrasts)."""
    c = np.abs(np.asarray(effects, dtype=float))
    m = len(c)
    if m < 2:
        raise AnalysisError(f"Lenth's method needs at least two effects, got {m}")
    s0 = 1.5 * float(np.median(c))
    trimmed = c[c < 2.5 * s0]
    pse = 1.5 * float(np.median(trimmed)) if len(trimmed) else s0
    if pse <= 0:
        raise AnalysisError("Lenth's pseudo standard error is zero (most effects are exactly "
                            "zero); the response may be constant")
    d = m / 3.0
    me = float(stats.t.ppf(1 - alpha / 2, d)) * pse
    gamma = (1 + (1 - alpha) ** (1.0 / m)) / 2
    sme = float(stats.t.ppf(gamma, d)) * pse
    return LenthResult(s0, pse, d, me, sme, alpha)


@dataclass
class EffectsResult:
    """Effects of a two-level design with alias chains and Lenth's margins.

    Attributes
    ----------
    summary : DataFrame
        alias_order (1, 2, ... in the order of the alias table: main effects, then
        two-factor interactions, ...), term (alias chain), effect, coefficient, abs_effect,
        standardized (effect / PSE, Lenth's t-like ratio),
        p (Lenth t with d = m/3), half_normal_quantile, significant (|effect| > ME),
        significant_simultaneous (|effect| > SME); sorted by abs_effect descending.
    lenth : LenthResult
    mean : float
        Grand mean of the response.
    response : str
    """

    summary: pd.DataFrame
    lenth: LenthResult
    mean: float
    response: str

    def to_dict(self) -> dict:
        rows = [{k: (finite(v) if isinstance(v, (float, np.floating)) else v)
                 for k, v in r.items()} for r in self.summary.to_dict("records")]
        lr = self.lenth
        return {"response": self.response, "mean": self.mean, "effects": rows,
                "lenth": {"s0": lr.s0, "pse": lr.pse, "d": lr.d, "me": lr.me,
                          "sme": lr.sme, "alpha": lr.alpha}}

    def __repr__(self) -> str:
        return (f"EffectsResult({self.response!r}, PSE={self.lenth.pse:.6g}, "
                f"ME={self.lenth.me:.6g})\n{self.summary.to_string(index=False)}")

    def _repr_html_(self) -> str:
        return self.summary.to_html(index=False)


def _two_level_columns(prep_coded: pd.DataFrame, factors: Sequence[Factor]) -> np.ndarray:
    cols = []
    for f in factors:
        col = prep_coded[f.name]
        if f.is_continuous:
            x = col.astype(float).to_numpy()
        else:
            levels = f.levels or tuple(sorted(col.astype(str).unique()))
            if len(levels) != 2:
                raise AnalysisError(f"factor {f.name!r} has {len(levels)} levels; the "
                                    "two-level effects analysis needs exactly two")
            x = np.where(col.astype(str) == str(levels[0]), -1.0, 1.0)
        cols.append(x)
    return np.column_stack(cols)


def two_level_effects(table: pd.DataFrame, response: str, factors: Sequence[Factor], *,
                      max_order: int | None = None, alpha: float = 0.05) -> EffectsResult:
    """Effects of every interaction up to ``max_order`` with alias chains and Lenth's test.

    Centre points (any factor at coded 0) are left out of the contrasts.

    Parameters
    ----------
    table : DataFrame
        One row per bath; factor columns natural units; response column.
    response : str
    factors : sequence of Factor
        Two-level factors (continuous coded +-1 or categorical with two levels).
    max_order : int, optional
        Highest interaction order (default: number of factors).
    alpha : float
    """
    column = response_column(table, response)
    prep = prepare(table, column, factors)
    X = _two_level_columns(prep.coded, factors)
    on_corners = np.all(np.isclose(np.abs(X), 1.0), axis=1)
    X, y = X[on_corners], prep.natural[column].astype(float).to_numpy()[on_corners]
    n = len(y)
    if n < 3:
        raise AnalysisError(f"only {n} runs at the corners of the design; need at least 3")
    names = [f.name for f in factors]
    k = len(names)
    max_order = k if max_order is None else int(max_order)
    chains: dict[bytes, list[tuple[str, float]]] = {}
    contrasts: dict[bytes, np.ndarray] = {}
    for order in range(1, max_order + 1):
        for combo in itertools.combinations(range(k), order):
            col = np.prod(X[:, combo], axis=1)
            sign = 1.0 if col[0] > 0 else -1.0
            key = (col * sign).astype(np.int8).tobytes()
            if np.all(col * sign == 1.0):
                continue  # aliased with the mean (part of the defining relation)
            chains.setdefault(key, []).append((":".join(names[i] for i in combo), sign))
            contrasts[key] = col * sign
    rows = []
    for key, members in chains.items():
        col = contrasts[key]
        if abs(col.sum()) > 1e-9:
            raise AnalysisError("the design is not balanced (a contrast does not sum to "
                                "zero); fit a linear model instead of the effects analysis")
        effect = float(col @ y) / (n / 2)
        head_sign = members[0][1]
        label = members[0][0] + "".join(
            (" = " if s == head_sign else " = -") + nm for nm, s in members[1:])
        rows.append({"alias_order": len(rows) + 1, "term": label, "effect": effect * head_sign,
                     "coefficient": effect * head_sign / 2, "n_aliases": len(members)})
    if len(rows) < 2:
        raise AnalysisError("fewer than two estimable effects; nothing to compare")
    df = pd.DataFrame(rows)
    res = lenth(df.effect.to_numpy(), alpha)
    df["abs_effect"] = df.effect.abs()
    df["standardized"] = df.effect / res.pse
    df["p"] = 2 * stats.t.sf(df.standardized.abs(), res.d)
    df = df.sort_values("abs_effect", ascending=False, kind="mergesort").reset_index(drop=True)
    m = len(df)
    ranks = np.arange(m, 0, -1)  # largest effect gets the top quantile
    df["half_normal_quantile"] = stats.norm.ppf(0.5 + 0.5 * (ranks - 0.5) / m)
    df["significant"] = df.abs_effect > res.me
    df["significant_simultaneous"] = df.abs_effect > res.sme
    return EffectsResult(df, res, float(y.mean()), response)
