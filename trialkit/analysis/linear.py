"""Least squares underneath every analysis: one QR fit, batched refits, rank checks.

Nothing here knows about factors; it works on a model matrix and a response vector.

Examples
--------
>>> import numpy as np
>>> X = np.column_stack([np.ones(4), [-1.0, 1, -1, 1]])
>>> ls = least_squares(X, np.array([1.0, 3, 2, 4]))
>>> ls.beta.round(12).tolist(), ls.df_resid
([2.5, 1.0], 2)
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import scipy.linalg

from trialkit.exceptions import AnalysisError


@dataclass(frozen=True)
class LeastSquares:
    """An ordinary least-squares solution.

    Attributes
    ----------
    beta : ndarray
        Coefficients.
    xtx_inv : ndarray
        ``(X'X)^-1`` (unscaled covariance).
    fitted, resid : ndarray
    rss : float
        Residual sum of squares.
    df_resid : int
    leverage : ndarray
        Diagonal of the hat matrix.
    q_effects : ndarray
        ``Q'y`` of the thin QR factorisation, in column order (sequential sums of squares
        are sums of its squares).
    """

    beta: np.ndarray
    xtx_inv: np.ndarray
    fitted: np.ndarray
    resid: np.ndarray
    rss: float
    df_resid: int
    leverage: np.ndarray
    q_effects: np.ndarray

    @property
    def sigma2(self) -> float:
        """Residual mean square (NaN without residual degrees of freedom)."""
        return self.rss / self.df_resid if self.df_resid > 0 else float("nan")


def rank_problems(X: np.ndarray, columns: Sequence[str], tol: float = 1e-9) -> list[list[str]]:
    """Groups of column names that are linearly dependent on earlier columns.

    Each group lists a dependent column first, then the earlier columns it is a
    combination of (empty list when ``X`` has full column rank).
    """
    n, p = X.shape
    scale = np.linalg.norm(X, axis=0)
    scale[scale == 0] = 1.0
    Xs = X / scale
    groups: list[list[str]] = []
    kept: list[int] = []
    for j in range(p):
        if kept:
            A = Xs[:, kept]
            coef, *_ = np.linalg.lstsq(A, Xs[:, j], rcond=None)
            r = Xs[:, j] - A @ coef
        else:
            coef, r = np.zeros(0), Xs[:, j]
        if np.linalg.norm(r) <= tol * max(1.0, np.sqrt(n)):
            partners = [columns[kept[i]] for i in np.flatnonzero(np.abs(coef) > 1e-8)]
            groups.append([columns[j], *partners])
        else:
            kept.append(j)
    return groups


def least_squares(X: np.ndarray, y: np.ndarray, columns: Sequence[str] | None = None
                  ) -> LeastSquares:
    """Fit ``y`` on ``X`` by Householder QR (no normal equations).

    Raises
    ------
    AnalysisError
        More columns than rows, or columns that are linear combinations of others
        (named, so the user can drop one of them).
    """
    X = np.asarray(X, dtype=float)
    y = np.asarray(y, dtype=float)
    n, p = X.shape
    columns = list(columns) if columns is not None else [f"x{j}" for j in range(p)]
    if p > n:
        raise AnalysisError(
            f"the model has {p} coefficients but there are only {n} observations; use a "
            "smaller model (fewer terms, e.g. 'main') or run more baths")
    Q, R = scipy.linalg.qr(X, mode="economic")
    d = np.abs(np.diag(R))
    if p and (d.min() <= 1e-10 * max(d.max(), 1.0) * max(n, p)):
        groups = rank_problems(X, columns)
        if groups:
            text = "; ".join(f"{g[0]} = combination of {', '.join(g[1:]) or '(nothing)'}"
                             for g in groups)
            raise AnalysisError(
                "the model's terms cannot all be estimated from these data (aliased or "
                f"constant columns: {text}); remove one term of each group, or analyse the "
                "design's effects with alias chains")
    qty = Q.T @ y
    beta = scipy.linalg.solve_triangular(R, qty)
    rinv = scipy.linalg.solve_triangular(R, np.eye(p))
    xtx_inv = rinv @ rinv.T
    fitted = X @ beta
    resid = y - fitted
    leverage = np.einsum("ij,ij->i", Q, Q)
    rss = float(resid @ resid)
    return LeastSquares(beta, xtx_inv, fitted, resid, rss, n - p, leverage, qty)


def rss_of(X: np.ndarray, y: np.ndarray) -> float:
    """Residual sum of squares of ``y`` on ``X`` (X may have zero columns)."""
    if X.shape[1] == 0:
        return float(y @ y)
    coef, *_ = np.linalg.lstsq(X, y, rcond=None)
    r = y - X @ coef
    return float(r @ r)


def batched_refit(X: np.ndarray, Y: np.ndarray) -> np.ndarray:
    """Coefficients for many responses at once: ``Y`` is (n, B), result (p, B).

    One QR of ``X`` serves every column; used by bootstrap intervals.
    """
    Q, R = np.linalg.qr(X)
    return scipy.linalg.solve_triangular(R, Q.T @ Y)


def modified_residuals(ls: LeastSquares) -> np.ndarray:
    """Residuals rescaled to the error's spread: ``r_i / sqrt(1 - h_i)``, centred.

    Raw residuals have variance ``sigma^2 (1 - h_i)``; resampling them shrinks the spread
    of every bootstrap replicate (by about ``sqrt((n - p) / n)`` on average) and the
    intervals cover too little.  Dividing by ``sqrt(1 - h_i)`` and subtracting the mean
    gives residuals of the error's variance (Davison & Hinkley 1997, *Bootstrap Methods
    and their Application*, section 6.2.3, the "modified residuals").  Rows of leverage
    1 (fitted exactly) carry no information about the error and are left out.
    """
    h = np.asarray(ls.leverage, dtype=float)
    keep = h < 1.0 - 1e-9
    r = ls.resid[keep] / np.sqrt(1.0 - h[keep])
    return r - r.mean()


def bootstrap_responses(ls: LeastSquares, n_boot: int, rng: np.random.Generator
                        ) -> np.ndarray:
    """Residual-bootstrap responses (n, n_boot): fitted values plus resampled modified
    residuals (:func:`modified_residuals`)."""
    r = modified_residuals(ls)
    n = ls.fitted.size
    idx = rng.integers(0, r.size, size=(n, n_boot))
    return ls.fitted[:, None] + r[idx]
