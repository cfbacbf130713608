"""Coordinate exchange (Meyer & Nachtsheim 1995): the search behind optimal designs.

:class:`Region` knows which coded points are allowed (ranges, linear constraints,
combinations that cannot be mixed) and which values each coordinate may take;
:func:`coordinate_exchange` improves one start by replacing every coordinate of every free
run in turn with the value that most improves the D or I criterion, until a pass brings
no gain.  The criterion runs on ``X'X + eps I`` so that a singular start never stalls.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from trialkit.exceptions import DesignError
from trialkit.planning import power as pw
from trialkit.planning.designs.constraints import CannotMix, LinearConstraint

#: Ridge added to X'X during the search (a singular start still has a gradient).
RIDGE = 1e-7
#: Relative gain below which an exchange is not taken.
GAIN = 1e-10


class Region:
    """Feasibility and coordinate candidates of the design region."""

    def __init__(self, factors, constraints: Sequence[LinearConstraint],
                 cannot_mix: Sequence[CannotMix], grid: int):
        self.factors = tuple(factors)
        self.constraints = tuple(constraints)
        self.cannot_mix = tuple(cannot_mix)
        self.values = []
        for f in self.factors:
            if f.is_categorical:
                self.values.append(np.arange(f.n_levels, dtype=float))
            else:
                self.values.append(np.linspace(-1.0, 1.0, grid))
        self.cont = np.array([f.is_continuous for f in self.factors], dtype=bool)
        # coordinates whose candidates are always the plain level list (no checks needed)
        touched = set()
        for c in self.constraints:
            touched |= set(np.flatnonzero(np.abs(c.coefficients) > 1e-12))
        for d in self.cannot_mix:
            touched |= {i for i, f in enumerate(self.factors) if f.name in d.spec}
        self.simple = [i not in touched for i in range(len(self.factors))]

    def feasible(self, U) -> np.ndarray:
        U = np.atleast_2d(U)
        ok = np.all(np.abs(U[:, self.cont]) <= 1 + 1e-9, axis=1)
        for c in self.constraints:
            ok &= c.satisfied(U)
        for d in self.cannot_mix:
            ok &= ~d.matches(U, self.factors)
        return ok

    def candidates(self, row: np.ndarray, j: int) -> np.ndarray:
        vals = self.values[j]
        if self.cont[j] and self.constraints:
            extra = []
            for c in self.constraints:
                a = c.coefficients[j]
                if abs(a) > 1e-12:
                    rest = c.coefficients @ row - a * row[j]
                    v = (c.bound - rest) / a
                    if -1 < v < 1:
                        extra.append(v)
            if extra:
                vals = np.concatenate([vals, extra])
        U = np.repeat(row[None, :], len(vals), axis=0)
        U[:, j] = vals
        return U[self.feasible(U)]

    def pool(self, rng, size: int = 4000) -> np.ndarray:
        """Feasible starting points: random grid points and random vertices."""
        k = len(self.factors)
        U = np.column_stack([rng.choice(v, size) for v in self.values]) if k else \
            np.empty((size, 0))
        pts = [U[self.feasible(U)]]
        if self.constraints and self.cont.any():
            pts.append(self._vertices(rng, 60))
        P = np.vstack(pts)
        return P

    def _vertices(self, rng, n) -> np.ndarray:
        from scipy.optimize import linprog

        k = len(self.factors)
        ci = np.flatnonzero(self.cont)
        A = np.array([c.coefficients[ci] for c in self.constraints])
        b = np.array([c.bound for c in self.constraints])
        out = []
        for _ in range(n):
            cats = np.array([rng.choice(v) for v in self.values])
            res = linprog(rng.standard_normal(len(ci)), A_ub=A,
                          b_ub=b - A @ np.zeros(len(ci)) - 1e-7, bounds=[(-1, 1)] * len(ci),
                          method="highs")
            if res.status == 0:
                row = cats.copy()
                row[ci] = res.x
                out.append(row)
        return np.array(out).reshape(-1, k)

    def check_feasible(self) -> None:
        """Raise DesignError naming the constraints when no point meets them all."""
        if self.constraints and self.cont.any():
            from scipy.optimize import linprog

            ci = np.flatnonzero(self.cont)
            A = np.array([c.coefficients[ci] for c in self.constraints])
            b = np.array([c.bound for c in self.constraints])
            res = linprog(np.zeros(len(ci)), A_ub=A, b_ub=b, bounds=[(-1, 1)] * len(ci),
                          method="highs")
            if res.status != 0:
                texts = "; ".join(c.text for c in self.constraints)
                raise DesignError(
                    f"no combination of factor levels inside their ranges meets all the "
                    f"constraints ({texts}); widen the factor ranges or relax a constraint")


def coordinate_exchange(model: pw.DesignModel, region: Region, U: np.ndarray, free: np.ndarray,
            criterion: str, W: np.ndarray | None, rng, max_passes: int,
            tables: list[np.ndarray]) -> np.ndarray:
    """Coordinate exchange from start ``U`` (rows ``free`` may move); returns ``U``."""
    X = model.expand(U)
    n, k = U.shape
    p = model.p
    A = np.linalg.inv(X.T @ X + RIDGE * np.eye(p))
    rows = np.flatnonzero(free)
    simple = region.simple
    others = [np.array([f for f in range(k) if f != j], dtype=int) for j in range(k)]
    eye = RIDGE * np.eye(p)
    # each factor's contribution to every model column, per run (n x p x k)
    G_all = np.stack([model.factor_columns(f, U[:, f]) for f in range(k)], axis=2)
    for _ in range(max_passes):
        improved = False
        for i in rng.permutation(rows):
            G = G_all[i]
            for j in range(k):
                rest = G[:, others[j]].prod(axis=1)
                if simple[j]:
                    vals = region.values[j]
                    Y = tables[j] * rest
                else:
                    cand = region.candidates(U[i], j)
                    if len(cand) == 0:
                        continue
                    vals = cand[:, j]
                    Y = model.factor_columns(j, vals) * rest
                x = X[i]
                Ax = A @ x
                d1 = 1.0 - x @ Ax
                if d1 <= 1e-12:
                    continue
                if criterion == "D":
                    # det ratio of swapping x for y: (1 - x'Ax)(1 + y'Ay) + (y'Ax)^2
                    YA = Y @ A
                    yAx = Y @ Ax
                    gain = d1 * (1.0 + np.einsum("ij,ij->i", YA, Y)) + yAx * yAx
                    best = int(np.argmax(gain))
                    ok = gain[best] > 1.0 + GAIN
                    if ok:
                        A1 = A + (Ax[:, None] * Ax[None, :]) / d1
                        Ay = A1 @ Y[best]
                        A = A1 - (Ay[:, None] * Ay[None, :]) / (1.0 + Y[best] @ Ay)
                else:
                    A1 = A + (Ax[:, None] * Ax[None, :]) / d1
                    YA = Y @ A1
                    q = 1.0 + np.einsum("ij,ij->i", YA, Y)
                    t0 = np.trace(W @ A)
                    t1 = t0 + (Ax @ W @ Ax) / d1
                    t2 = t1 - np.einsum("ij,jk,ik->i", YA, W, YA) / q
                    best = int(np.argmin(t2))
                    ok = t2[best] < t0 * (1.0 - GAIN)
                    if ok:
                        Ay = YA[best]
                        A = A1 - (Ay[:, None] * Ay[None, :]) / q[best]
                if ok:
                    U[i, j] = vals[best]
                    X[i] = Y[best]
                    G[:, j] = tables[j][best] if simple[j] else \
                        model.factor_columns(j, vals[best])[0]
                    improved = True
        A = np.linalg.inv(X.T @ X + eye)
        if not improved:
            break
    return U
