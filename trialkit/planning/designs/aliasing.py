"""Aliasing of a two-level design, computed from its own matrix.

A *word* is a product of factor columns.  A word whose column is constant (+1 or -1 in
every row) belongs to the defining relation; the shortest such word gives the resolution,
and multiplying an effect by every word gives its aliases (with the word's sign).

The words are found as the null space over GF(2) of the design's sign bits (a -1 is a
1 bit; a product of columns is the exclusive-or of their bits), augmented with a column
of ones that carries the sign.  This works for any two-level matrix, regular or not,
and does not depend on how the design was generated (so aliases of negative generators
are never missed).

For non-regular designs (such as 12-run Plackett–Burman designs) some effects are only
*partially* aliased: their columns are correlated but not equal.  The integer part of
the generalized resolution of Deng & Tang (1999) is reported then: the length of the
shortest word whose column does not sum to zero.

Examples
--------
>>> import numpy as np
>>> from pyDOE3 import fracfact
>>> s = alias_structure(fracfact("a b c -abc"), "ABCD")
>>> s.defining_relation, s.resolution
(('I = -ABCD',), 4)
>>> s.table.loc[s.table.effect == "AB", "aliases"].item()
'-CD'
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from trialkit.exceptions import DesignError
from trialkit.trial.factors import FACTOR_LETTERS

#: At most this many defining-relation words are enumerated (2**20).
MAX_WORD_GROUP_RANK = 20


@dataclass
class AliasStructure:
    """Defining relation, resolution and alias table of a two-level design.

    Attributes
    ----------
    words : tuple of (str, int)
        Defining-relation words as (letters, sign), shortest first.
    defining_relation : tuple of str
        The same as text, ``"I = +ABCDE"``.
    resolution : int or None
        Length of the shortest word (``None`` for a design with no aliasing at all);
        for a non-regular design, the integer generalized resolution.
    regular : bool
        True when every pair of effects is either orthogonal or fully aliased.
    table : pandas.DataFrame
        Columns ``effect`` and ``aliases`` (``"+CDE, -ABF"``, or ``""``): each main
        effect and two-factor interaction with its full aliases up to ``max_order``.
    partial : pandas.DataFrame
        Columns ``effect``, ``term``, ``correlation``: partial aliases (correlation
        strictly between -1 and 1, non-zero) of main effects and two-factor
        interactions with two-factor interactions; empty for regular designs.
    """

    words: tuple[tuple[str, int], ...]
    defining_relation: tuple[str, ...]
    resolution: int | None
    regular: bool
    table: pd.DataFrame
    partial: pd.DataFrame = field(default_factory=lambda: pd.DataFrame(
        columns=["effect", "term", "correlation"]))

    def to_dict(self) -> dict:
        return {
            "defining_relation": list(self.defining_relation),
            "resolution": self.resolution,
            "regular": self.regular,
            "aliases": self.table.to_dict("records"),
            "partial": self.partial.to_dict("records"),
        }

    def __repr__(self) -> str:
        res = "none" if self.resolution is None else roman(self.resolution)
        return (f"AliasStructure(resolution={res}, words={len(self.words)}, "
                f"regular={self.regular})")

    def _repr_html_(self) -> str:
        head = "<p>" + ", ".join(self.defining_relation or ("no defining relation",)) + "</p>"
        return head + self.table.to_html(index=False)


def roman(n: int) -> str:
    """Roman numeral of a resolution (``roman(4) == 'IV'``)."""
    vals = [(10, "X"), (9, "IX"), (5, "V"), (4, "IV"), (1, "I")]
    out = ""
    for v, s in vals:
        while n >= v:
            out += s
            n -= v
    return out


def word_text(mask: int, letters: str) -> str:
    """Letters of a word given as a bit mask over the factors."""
    return "".join(letters[i] for i in range(len(letters)) if mask >> i & 1)


def _signed(mask: int, sign: int, letters: str) -> str:
    return ("+" if sign > 0 else "-") + word_text(mask, letters)


def as_sign_matrix(matrix) -> np.ndarray:
    """Return ``matrix`` as a float array of +-1, or raise :class:`DesignError`."""
    x = np.asarray(matrix, dtype=float)
    if x.ndim != 2 or x.shape[0] < 2:
        raise DesignError(f"a two-level design matrix needs 2 dimensions and 2+ rows; "
                          f"got shape {x.shape}")
    if not np.all(np.isin(x, (-1.0, 1.0))):
        bad = sorted(set(np.unique(x)) - {-1.0, 1.0})[:5]
        raise DesignError(f"a two-level design matrix holds only -1 and +1; got {bad}; "
                          "remove center and axial rows before computing aliases")
    return x


def _gf2_null_space(bits: np.ndarray) -> list[np.ndarray]:
    """Basis of the null space of a 0/1 matrix over GF(2)."""
    a = bits.copy().astype(np.uint8) % 2
    n_rows, n_cols = a.shape
    pivots = []
    r = 0
    for c in range(n_cols):
        if r >= n_rows:
            break
        hit = np.nonzero(a[r:, c])[0]
        if hit.size == 0:
            continue
        p = r + hit[0]
        if p != r:
            a[[r, p]] = a[[p, r]]
        others = np.nonzero(a[:, c])[0]
        others = others[others != r]
        a[others] ^= a[r]
        pivots.append(c)
        r += 1
    free = [c for c in range(n_cols) if c not in pivots]
    basis = []
    for f in free:
        v = np.zeros(n_cols, dtype=np.uint8)
        v[f] = 1
        for i, pc in enumerate(pivots):
            v[pc] = a[i, f]
        basis.append(v)
    return basis


def defining_words(matrix) -> list[tuple[int, int]]:
    """All words (bit mask, sign) whose product column is constant, shortest first."""
    x = as_sign_matrix(matrix)
    n_rows, k = x.shape
    bits = (x < 0).astype(np.uint8)
    aug = np.hstack([bits, np.ones((n_rows, 1), dtype=np.uint8)])
    basis = _gf2_null_space(aug)
    if len(basis) > MAX_WORD_GROUP_RANK:
        raise DesignError(f"the design has 2^{len(basis)} defining words, too many to list; "
                          "use fewer factors or more runs")
    vecs = [(int(sum(int(b) << i for i, b in enumerate(v[:k]))), int(v[k])) for v in basis]
    words: dict[int, int] = {}
    for r in range(1, len(vecs) + 1):
        for combo in itertools.combinations(vecs, r):
            m, s = 0, 0
            for vm, vs in combo:
                m ^= vm
                s ^= vs
            if m:
                words[m] = -1 if s else 1
    return sorted(words.items(), key=lambda w: (bin(w[0]).count("1"), _order_key(w[0], k)))


def _order_key(mask: int, k: int) -> tuple:
    return tuple(i for i in range(k) if mask >> i & 1)


def _effects(k: int, max_len: int) -> list[int]:
    out = []
    for r in range(1, max_len + 1):
        for combo in itertools.combinations(range(k), r):
            out.append(sum(1 << i for i in combo))
    return out


def _column(x: np.ndarray, mask: int) -> np.ndarray:
    idx = [i for i in range(x.shape[1]) if mask >> i & 1]
    return np.prod(x[:, idx], axis=1)


def alias_structure(matrix, letters: str | None = None, *, max_order: int = 3) -> AliasStructure:
    """Defining relation, resolution and signed alias table of a two-level matrix.

    Parameters
    ----------
    matrix : array-like or DataFrame of +-1
        One column per factor (no center or axial rows).
    letters : str, optional
        One letter per column; default A, B, C ... skipping I.
    max_order : int
        Highest interaction order listed among the aliases (default 3).

    Returns
    -------
    AliasStructure

    Examples
    --------
    >>> from pyDOE3 import fracfact
    >>> s = alias_structure(fracfact("a b c d abcd"))
    >>> s.defining_relation, s.resolution
    (('I = +ABCDE',), 5)
    """
    x = as_sign_matrix(matrix)
    n, k = x.shape
    if letters is None:
        letters = FACTOR_LETTERS[:k]
    if len(letters) != k:
        raise DesignError(f"need one letter per column: {k} columns, {len(letters)} letters")
    words = defining_words(x)
    distinct = len({tuple(r) for r in x}) == n
    regular = distinct and n * (len(words) + 1) == 2 ** k
    if regular:
        resolution = bin(words[0][0]).count("1") if words else None
    else:
        resolution = _generalized_resolution(x)
    rows = []
    for e in _effects(k, 2):
        als = []
        for w, s in words:
            a = e ^ w
            if a and bin(a).count("1") <= max_order:
                als.append((bin(a).count("1"), _order_key(a, k), _signed(a, s, letters)))
        als.sort()
        rows.append({"effect": word_text(e, letters), "aliases": ", ".join(t[2] for t in als)})
    table = pd.DataFrame(rows, columns=["effect", "aliases"])
    partial = _partial_aliases(x, letters) if not regular else pd.DataFrame(
        columns=["effect", "term", "correlation"])
    return AliasStructure(
        words=tuple((word_text(w, letters), s) for w, s in words),
        defining_relation=tuple(f"I = {_signed(w, s, letters)}" for w, s in words),
        resolution=resolution, regular=regular, table=table, partial=partial,
    )


def _generalized_resolution(x: np.ndarray) -> int | None:
    n, k = x.shape
    for r in range(1, min(k, 8) + 1):
        for combo in itertools.combinations(range(k), r):
            if abs(np.prod(x[:, combo], axis=1).sum()) > 1e-9:
                return r
    return None


def _partial_aliases(x: np.ndarray, letters: str) -> pd.DataFrame:
    n, k = x.shape
    pairs = list(itertools.combinations(range(k), 2))
    rows = []
    if len(pairs) > 300:  # 25+ factors: main effects only
        effects = [(i,) for i in range(k)]
    else:
        effects = [(i,) for i in range(k)] + pairs
    p_cols = np.column_stack([x[:, a] * x[:, b] for a, b in pairs]) if pairs else None
    if p_cols is None:
        return pd.DataFrame(columns=["effect", "term", "correlation"])
    for eff in effects:
        col = np.prod(x[:, eff], axis=1)
        corr = col @ p_cols / n
        for j, c in enumerate(corr):
            if 1e-9 < abs(c) < 1 - 1e-9 and set(pairs[j]) != set(eff):
                rows.append({"effect": "".join(letters[i] for i in eff),
                             "term": "".join(letters[i] for i in pairs[j]),
                             "correlation": float(round(c, 12))})
    return pd.DataFrame(rows, columns=["effect", "term", "correlation"])
