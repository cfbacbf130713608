"""Coefficients in the factors' own units from a model fitted in coded units.

A continuous factor is coded ``x = (z - c) / h``.  Every coded column is a product of
``x`` terms (and categorical contrast columns), so it expands exactly into monomials of
the natural values ``z``; the natural coefficients are the matching linear combination
``A @ beta`` with covariance ``A V A'``.  Nothing is refitted, so nothing loses digits to
an ill-conditioned natural-unit matrix.
"""

from __future__ import annotations

import numpy as np

from trialkit.trial.model_grammar import INTERCEPT
from trialkit.trial.model_matrix import LEVEL_SEPARATOR, ModelMatrix, level_label

Monomial = tuple[tuple[str, int], ...]  # ((factor or contrast column, power), ...)


def _column_parts(mm: ModelMatrix) -> list[list[tuple[str, str, int]]]:
    """For each column: list of (factor, item, power); item '' for continuous."""
    spec = mm.spec
    parts: list[list[tuple[str, str, int]]] = [[]]
    for t in spec.terms:
        per_factor: list[list[tuple[str, str, int]]] = []
        for name in t.factors:
            f = spec.factor(name)
            if f.is_continuous:
                per_factor.append([(name, "", t.power)])
            else:
                levels = mm.levels[name]
                shown = levels[:-1] if mm.coding == "sum" else levels[1:]
                per_factor.append([(name, level_label(name, lv), 1) for lv in shown])
        combos: list[list[tuple[str, str, int]]] = [[]]
        for options in per_factor:
            combos = [c + [o] for c in combos for o in options]
        parts.extend(combos)
    return parts


def natural_transform(mm: ModelMatrix) -> tuple[np.ndarray, list[str]]:
    """Matrix ``A`` (natural monomials x coded columns) and the monomial names."""
    spec = mm.spec
    order = {f.name: i for i, f in enumerate(spec.factors)}
    monos: dict[Monomial, dict[int, float]] = {}
    for j, col in enumerate(_column_parts(mm)):
        # polynomial as dict monomial -> coefficient
        poly: dict[Monomial, float] = {(): 1.0}
        for name, item, power in col:
            if item:
                factor_poly = {((item, 1),): 1.0}
            else:
                f = spec.factor(name)
                a, b = 1.0 / f.half_range, -f.center / f.half_range
                factor_poly = ({((name, 1),): a, (): b} if power == 1 else
                               {((name, 2),): a * a, ((name, 1),): 2 * a * b, (): b * b})
            new: dict[Monomial, float] = {}
            for m1, c1 in poly.items():
                for m2, c2 in factor_poly.items():
                    key = tuple(sorted(m1 + m2, key=lambda p: (
                        order[p[0].split(LEVEL_SEPARATOR)[0]], p[0])))
                    new[key] = new.get(key, 0.0) + c1 * c2
            poly = new
        for m, c in poly.items():
            if c != 0.0:
                monos.setdefault(m, {})[j] = c
    keys = sorted(monos, key=lambda m: (sum(p for _, p in m), list(monos).index(m)))
    A = np.zeros((len(keys), mm.X.shape[1]))
    for i, m in enumerate(keys):
        for j, c in monos[m].items():
            A[i, j] = c
    return A, [_name(m) for m in keys]


def _name(m: Monomial) -> str:
    if not m:
        return INTERCEPT
    return ":".join(n if p == 1 else f"{n}^{p}" for n, p in m)


def natural_coefficients(mm: ModelMatrix, beta: np.ndarray, cov: np.ndarray
                         ) -> tuple[list[str], np.ndarray, np.ndarray]:
    """Names, estimates and covariance of the natural-unit coefficients."""
    A, names = natural_transform(mm)
    return names, A @ beta, A @ cov @ A.T


