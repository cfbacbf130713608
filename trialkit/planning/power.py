"""Numerical core of design evaluation: model matrices, power, efficiency, variance.

Everything here works on plain numpy arrays so that the optimal-design search and the
evaluation of a plan share one fast implementation.

*Coded points.*  A design point is a row of numbers, one per factor: a continuous factor
in coded units (``-1 .. +1``), a categorical or ordinal factor as the *index* of its
level (both enter models in sum contrasts, as in :mod:`trialkit.trial.model_grammar`).

*Model.*  A :class:`DesignModel` holds the terms of a model (``"chelator"``,
``"chelator:ph"``, ``"chelator^2"``) and expands coded points into model-matrix rows:
intercept first, categorical factors in sum (effect) contrasts.

*Effect sizes.*  The effect of a term is the change in mean response it causes across
the design region: for a main effect the change from the factor's low to its high level
(twice its coded coefficient), for an interaction the classical factorial interaction
effect (also twice the coefficient), for a squared term the curvature, the difference
between the mean at the ends and at the centre (the coefficient itself).  A term with
several columns (a factor with three levels) is judged in its least favourable direction:
two levels apart by the effect, the rest in between.

Examples
--------
>>> import numpy as np
>>> from trialkit.trial.factors import Factor
>>> fs = (Factor.continuous("a", 0, 1), Factor.continuous("b", 0, 1))
>>> m = DesignModel.from_spec("interactions", fs)
>>> m.columns
('intercept', 'a', 'b', 'a:b')
>>> X = m.expand(np.array([[-1.0, -1], [1, -1], [-1, 1], [1, 1]]))
>>> round(d_efficiency(X), 6)
100.0
"""

from __future__ import annotations

import itertools
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from trialkit.exceptions import ModelSpecError
from trialkit.trial.factors import Factor

#: Model shorthands understood by :meth:`DesignModel.from_spec`.
MODEL_SHORTHANDS = ("main", "linear", "interactions", "quadratic")



@dataclass(frozen=True)
class Term:
    """One model term: factor indices with powers, e.g. ``((0, 1), (2, 1))`` for a:c."""

    name: str
    parts: tuple[tuple[int, int], ...]

    @property
    def order(self) -> int:
        return sum(p for _, p in self.parts)


def parse_terms(spec: str | Sequence[str], factors: Sequence[Factor]) -> list[Term]:
    """Parse a model specification with :func:`trialkit.trial.model_grammar.parse_model` (the
    project's one model grammar; never evaluates Python) into :class:`Term` objects.

    ``spec`` is a keyword (``"main"``, ``"interactions"``, ``"quadratic"``), terms joined
    by ``+`` (``"a + b + a:b + a^2"``), or a sequence of term strings.

    Examples
    --------
    >>> from trialkit.trial.factors import Factor
    >>> fs = (Factor.continuous("ph", 5, 8), Factor.categorical("mix", ["x", "y"]))
    >>> [t.name for t in parse_terms("quadratic", fs)]
    ['ph', 'mix', 'ph:mix', 'ph^2']
    """
    from trialkit.trial.model_grammar import parse_model

    factors = tuple(factors)
    text = spec if isinstance(spec, str) else " + ".join(str(s) for s in spec)
    index = {f.name: i for i, f in enumerate(factors)}
    terms = []
    for t in parse_model(text, factors).terms:
        parts = tuple(sorted((index[n], t.power) for n in t.factors))
        terms.append(Term(t.name, parts))
    if not terms:
        raise ModelSpecError(f"model {spec!r} has no terms; use main, interactions, "
                             "quadratic or terms such as 'a + b + a:b'")
    return terms


class DesignModel:
    """Expands coded points into model-matrix rows (intercept first, sum contrasts).

    Parameters
    ----------
    factors : sequence of Factor
    terms : sequence of Term
    """

    def __init__(self, factors: Sequence[Factor], terms: Sequence[Term]):
        from trialkit.trial.model_matrix import level_label

        self.factors = tuple(factors)
        self.terms = tuple(terms)
        k = len(self.factors)
        # basis functions per factor: index 0 is the constant 1
        max_pow = [1] * k
        for t in self.terms:
            for i, p in t.parts:
                max_pow[i] = max(max_pow[i], p)
        self._nbasis = []
        for i, f in enumerate(self.factors):
            self._nbasis.append(f.n_levels if f.is_categorical else max_pow[i] + 1)
        self._offset = np.concatenate([[0], np.cumsum(self._nbasis)[:-1]]).astype(int)
        idx_rows = [np.zeros(k, dtype=int)]
        columns = ["intercept"]
        term_columns: dict[str, slice] = {}
        for t in self.terms:
            choices = []
            for i, p in t.parts:
                if self.factors[i].is_categorical:
                    choices.append([(i, j, self.factors[i].levels[j - 1])
                                    for j in range(1, self.factors[i].n_levels)])
                else:
                    choices.append([(i, p, None)])
            start = len(columns)
            for combo in itertools.product(*choices):
                row = np.zeros(k, dtype=int)
                label = []
                for i, j, lev in combo:
                    row[i] = j
                    f = self.factors[i]
                    if lev is not None:
                        label.append(level_label(f.name, lev))
                    else:
                        label.append(f.name + (f"^{j}" if j > 1 else ""))
                idx_rows.append(row)
                columns.append(":".join(label))
            term_columns[t.name] = slice(start, len(columns))
        self._idx = np.array(idx_rows)            # p x k
        self.columns = tuple(columns)
        self.term_columns = term_columns
        self.p = len(columns)

    @classmethod
    def from_spec(cls, spec, factors: Sequence[Factor]) -> DesignModel:
        """Build from a shorthand, a ``+``-joined string or a list of term names."""
        return cls(factors, parse_terms(spec, factors))

    # -- encoding -----------------------------------------------------------------
    def encode(self, coded) -> np.ndarray:
        """DataFrame of coded values / level labels -> numeric point array (n x k)."""
        out = np.empty((len(coded), len(self.factors)))
        for i, f in enumerate(self.factors):
            col = coded[f.name]
            if f.is_categorical:
                pos = {lev: j for j, lev in enumerate(f.levels)}
                out[:, i] = [pos[str(v)] for v in col]
            else:
                out[:, i] = np.asarray(col, dtype=float)
        return out

    def decode(self, U: np.ndarray):
        """Numeric point array -> DataFrame of coded values / level labels."""
        import pandas as pd

        data = {}
        for i, f in enumerate(self.factors):
            if f.is_categorical:
                data[f.name] = [f.levels[int(round(v))] for v in U[:, i]]
            else:
                data[f.name] = U[:, i].astype(float)
        return pd.DataFrame(data)

    # -- expansion ----------------------------------------------------------------
    def factor_basis(self, i: int, u) -> np.ndarray:
        """Basis values of factor ``i`` at values ``u`` (len(u) x basis size); column 0
        is the constant 1, categorical levels in sum contrasts."""
        u = np.atleast_1d(np.asarray(u, dtype=float))
        nb = self._nbasis[i]
        if self.factors[i].is_categorical:
            lev = np.rint(u).astype(int)
            b = np.zeros((len(u), nb))
            b[:, 0] = 1.0
            for j in range(1, nb):       # column j: level j-1 -> +1, last level -> -1
                b[:, j] = (lev == j - 1).astype(float) - (lev == nb - 1)
            return b
        return u[:, None] ** np.arange(nb)[None, :]

    def factor_columns(self, i: int, u) -> np.ndarray:
        """Factor ``i``'s contribution to every model column at values ``u`` (m x p):
        a model row is the product of these over the factors."""
        return self.factor_basis(i, u)[:, self._idx[:, i]]

    def basis(self, U: np.ndarray) -> np.ndarray:
        """Per-factor basis values, concatenated (n x sum of basis sizes)."""
        U = np.atleast_2d(np.asarray(U, dtype=float))
        return np.hstack([self.factor_basis(i, U[:, i]) for i in range(len(self.factors))])

    def expand(self, U: np.ndarray) -> np.ndarray:
        """Model matrix (n x p) of coded points ``U`` (n x k)."""
        B = self.basis(U)
        gathered = B[:, self._idx + self._offset[None, :]]     # n x p x k
        return gathered.prod(axis=2)

    # -- design region ------------------------------------------------------------
    def region_axes(self, continuous_nodes: int | None = None) -> list[tuple]:
        """Per factor (values, weights) of the uniform region (Gauss-Legendre nodes)."""
        axes = []
        for i, f in enumerate(self.factors):
            if f.is_categorical:
                n = f.n_levels
                axes.append((np.arange(n, dtype=float), np.full(n, 1.0 / n)))
            else:
                n = continuous_nodes or (self._nbasis[i] + 1)  # exact for degree 2n-1
                x, w = np.polynomial.legendre.leggauss(n)
                axes.append((x, w / 2.0))
        return axes

    def moment_matrix(self, *, max_points: int = 50_000, seed: int = 0) -> np.ndarray:
        """Average of ``x x'`` over the design region (uniform over the coded cube and
        over categorical levels): exact by quadrature, Monte Carlo when too large."""
        axes = self.region_axes()
        size = int(np.prod([len(a[0]) for a in axes]))
        if size <= max_points:
            grids = np.meshgrid(*[a[0] for a in axes], indexing="ij")
            wgrids = np.meshgrid(*[a[1] for a in axes], indexing="ij")
            U = np.column_stack([g.ravel() for g in grids])
            w = np.prod(np.column_stack([g.ravel() for g in wgrids]), axis=1)
        else:
            U = self.sample_region(max_points, np.random.default_rng(seed))
            w = np.full(len(U), 1.0 / len(U))
        X = self.expand(U)
        return (X * w[:, None]).T @ X

    def sample_region(self, n: int, rng: np.random.Generator) -> np.ndarray:
        """``n`` points drawn uniformly from the design region."""
        cols = []
        for f in self.factors:
            if f.is_categorical:
                cols.append(rng.integers(0, f.n_levels, n).astype(float))
            else:
                cols.append(rng.uniform(-1.0, 1.0, n))
        return np.column_stack(cols) if cols else np.empty((n, 0))

    def term_directions(self, name: str) -> np.ndarray:
        """Unit-effect coefficient directions of a term (rows), least favourable first
        candidates: each column alone and each difference of two columns, scaled so the
        term's contribution changes by exactly 1 across the design region."""
        sl = self.term_columns[name]
        term = next(t for t in self.terms if t.name == name)
        inv = {i for i, _ in term.parts}
        axes = []
        for i, f in enumerate(self.factors):
            if i not in inv:
                axes.append(np.zeros(1))
            elif f.is_categorical:
                axes.append(np.arange(f.n_levels, dtype=float))
            else:
                axes.append(np.array([-1.0, 0.0, 1.0]))
        grids = np.meshgrid(*axes, indexing="ij")
        U = np.column_stack([g.ravel() for g in grids])
        Z = self.expand(U)[:, sl]
        m = Z.shape[1]
        dirs = [np.eye(m)[j] for j in range(m)]
        dirs += [np.eye(m)[a] - np.eye(m)[b] for a, b in itertools.combinations(range(m), 2)]
        out = []
        for d in dirs:
            spread = np.ptp(Z @ d)
            if spread > 1e-12:
                out.append(d / spread)
        return np.array(out)


def sum_contrasts(labels: Sequence) -> np.ndarray:
    """Sum-contrast columns (n x (L-1)) for a nuisance factor such as blocks."""
    levels = sorted(set(labels), key=lambda v: (str(type(v)), v))
    L = len(levels)
    pos = {v: j for j, v in enumerate(levels)}
    out = np.zeros((len(labels), max(L - 1, 0)))
    for r, v in enumerate(labels):
        j = pos[v]
        if j < L - 1:
            out[r, j] = 1.0
        else:
            out[r, :] = -1.0
    return out


# -- power ------------------------------------------------------------------------
def f_test_power(noncentrality, df1: int, df2: int, alpha: float = 0.05):
    """Power of the F test (``df1``, ``df2``) at non-centrality ``noncentrality``.

    Examples
    --------
    >>> round(float(f_test_power(0.0, 1, 10, 0.05)), 6)
    0.05
    """
    from scipy import stats

    lam = np.asarray(noncentrality, dtype=float)
    if df2 < 1:
        return np.full(lam.shape, np.nan) if lam.ndim else float("nan")
    fcrit = stats.f.isf(alpha, df1, df2)
    out = np.where(lam > 0, stats.ncf.sf(fcrit, df1, df2, np.maximum(lam, 1e-300)), alpha)
    return out if out.ndim else float(out)


def noncentrality_needed(power: float, df1: int, df2: int, alpha: float = 0.05) -> float:
    """Non-centrality at which the F test reaches ``power``."""
    from scipy.optimize import brentq

    if not alpha < power < 1:
        raise ValueError(f"power must lie between alpha ({alpha}) and 1, got {power}")
    hi = 1.0
    while f_test_power(hi, df1, df2, alpha) < power:
        hi *= 2.0
        if hi > 1e8:
            return float("inf")
    return brentq(lambda lam: f_test_power(lam, df1, df2, alpha) - power, 0.0, hi,
                  xtol=1e-10, rtol=1e-12)


def information(X: np.ndarray, cols: slice) -> np.ndarray | None:
    """Information matrix of the coefficients ``cols`` adjusted for all the others,
    ``inv([(X'X)^-1]_cols)``; ``None`` if the model is not estimable from ``X``."""
    if np.linalg.matrix_rank(X) < X.shape[1]:
        return None
    cov = np.linalg.inv(X.T @ X)[cols, cols]
    return np.linalg.inv(cov)


def term_noncentrality(info: np.ndarray, directions: np.ndarray, effect: float,
                       sd: float) -> np.ndarray:
    """Non-centrality for each unit-effect direction scaled to ``effect``."""
    q = np.einsum("ij,jk,ik->i", directions, info, directions)
    return q * (effect / sd) ** 2


# -- efficiency and variance ---------------------------------------------------------
def log_det_information(X: np.ndarray) -> float:
    """``log det(X'X/n)``; ``-inf`` when singular (compared in logs, never as a det)."""
    n = X.shape[0]
    sign, logdet = np.linalg.slogdet(X.T @ X / n)
    return float(logdet) if sign > 0 else float("-inf")


def d_efficiency(X: np.ndarray) -> float:
    """D-efficiency ``100 * det(X'X/n)^(1/p)`` of a model matrix in coded units."""
    return float(100.0 * np.exp(log_det_information(X) / X.shape[1]))


def average_variance(X: np.ndarray, moments: np.ndarray) -> float:
    """Average prediction variance over the region, in units of the error variance:
    ``trace(M (X'X)^-1)``; ``inf`` if singular."""
    if np.linalg.matrix_rank(X) < X.shape[1]:
        return float("inf")
    return float(np.trace(moments @ np.linalg.inv(X.T @ X)))


def i_efficiency(X: np.ndarray, moments: np.ndarray) -> float:
    """I-efficiency ``100 trace(M) / (n trace(M (X'X)^-1))``: the average prediction
    variance of a design with ``X'X = n I`` (the reference D-efficiency also uses)
    relative to this design's; 100 for an orthogonal two-level design and a
    first-order model."""
    v = average_variance(X, moments)
    return float(100.0 * np.trace(moments) / (X.shape[0] * v)) if np.isfinite(v) else 0.0


def vifs(X: np.ndarray) -> np.ndarray:
    """Variance inflation factor of every column after the first (the intercept)."""
    Z = X[:, 1:] - X[:, 1:].mean(axis=0)
    ss = (Z ** 2).sum(axis=0)
    out = np.full(Z.shape[1], np.inf)
    ok = ss > 1e-12
    if np.linalg.matrix_rank(Z[:, ok]) < ok.sum():
        return out
    inv = np.linalg.inv(Z[:, ok].T @ Z[:, ok])
    out[ok] = np.diag(inv) * ss[ok]
    return out


def prediction_variances(X: np.ndarray, points: np.ndarray) -> np.ndarray:
    """Prediction variance ``x'(X'X)^-1 x`` (units of the error variance) at rows of
    ``points`` (a model matrix)."""
    inv = np.linalg.pinv(X.T @ X)
    return np.einsum("ij,jk,ik->i", points, inv, points)


# -- simulation ---------------------------------------------------------------------
def simulate_power(X: np.ndarray, cols: slice, beta: np.ndarray, sd: float, *,
                   alpha: float = 0.05, n_sim: int = 10_000, seed: int = 0,
                   chunk: int = 5_000) -> tuple[float, float]:
    """Power of the F test of ``cols`` by simulation, all trials in batched algebra.

    Returns ``(power, standard_error)``.
    """
    from scipy import stats

    n, p = X.shape
    df1 = cols.stop - cols.start
    df2 = n - p
    rng = np.random.default_rng(seed)
    Q, R = np.linalg.qr(X)
    Rinv = np.linalg.inv(R)
    info = np.linalg.inv((Rinv @ Rinv.T)[cols, cols])
    fcrit = stats.f.isf(alpha, df1, df2)
    mean = X @ beta
    hits = 0
    done = 0
    while done < n_sim:
        m = min(chunk, n_sim - done)
        Y = mean[:, None] + sd * rng.standard_normal((n, m))
        qty = Q.T @ Y
        b = np.linalg.solve(R, qty)[cols]
        rss = (Y ** 2).sum(axis=0) - (qty ** 2).sum(axis=0)
        ss_term = np.einsum("im,ij,jm->m", b, info, b)
        F = (ss_term / df1) / (rss / df2)
        hits += int((F > fcrit).sum())
        done += m
    pw = hits / n_sim
    return pw, float(np.sqrt(pw * (1 - pw) / n_sim))
