"""Helpers shared by the design builders: full factorials in standard order, crossing with
categorical factors, center points.

Full factorials are built here with numpy rather than by pyDOE3's ``fullfact``: importing
pyDOE3 imports scipy.stats, which would make every plan of a factorial pay seconds at start
up.  Row order and values are those of ``fullfact`` (checked against it in
``tests/test_designs_common.py``).
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import pandas as pd

from trialkit.exceptions import DesignError
from trialkit.planning.designs.base import Design
from trialkit.trial.factors import Factor


def full_factorial_index(levels: Sequence[int]) -> np.ndarray:
    """Every combination of level indices, first factor changing fastest (standard order).

    Parameters
    ----------
    levels : sequence of int
        Number of levels of each factor, each at least 1.

    Returns
    -------
    numpy.ndarray
        Integer matrix of ``prod(levels)`` rows and ``len(levels)`` columns; column ``j``
        holds 0 .. ``levels[j] - 1``.

    Examples
    --------
    >>> full_factorial_index([2, 3]).tolist()
    [[0, 0], [1, 0], [0, 1], [1, 1], [0, 2], [1, 2]]
    """
    counts = [int(n) for n in levels]
    if any(n < 1 for n in counts):
        raise DesignError(f"every factor needs at least one level; got {counts}")
    if not counts:
        return np.zeros((1, 0), dtype=int)
    grids = np.meshgrid(*(np.arange(n) for n in reversed(counts)), indexing="ij")
    return np.column_stack([g.ravel() for g in reversed(grids)])


def two_level_full(k: int) -> np.ndarray:
    """2^k factorial in standard order (first factor fastest), coded -1/+1 as floats.

    Examples
    --------
    >>> two_level_full(2).tolist()
    [[-1.0, -1.0], [1.0, -1.0], [-1.0, 1.0], [1.0, 1.0]]
    """
    return full_factorial_index([2] * k) * 2.0 - 1.0


def continuous(factors: Sequence[Factor]) -> list[Factor]:
    return [f for f in factors if f.is_continuous]


def categorical(factors: Sequence[Factor]) -> list[Factor]:
    return [f for f in factors if not f.is_continuous]


def level_combinations(cats: Sequence[Factor]) -> list[tuple[str, ...]]:
    """Every combination of the categorical factors' levels, first factor changing fastest."""
    if not cats:
        return [()]
    idx = full_factorial_index([len(f.levels) for f in cats])
    return [tuple(f.levels[i] for f, i in zip(cats, row, strict=True)) for row in idx]


def cross(factors: Sequence[Factor], core: np.ndarray, core_points: Sequence[str]
          ) -> tuple[pd.DataFrame, tuple[str, ...]]:
    """Cross a coded design of the continuous factors with every categorical combination.

    The categorical combination changes slowest: the whole continuous design is run at
    the first combination, then at the second, and so on.
    """
    cont, cats = continuous(factors), categorical(factors)
    combos = level_combinations(cats)
    n = core.shape[0]
    cols: dict[str, object] = {}
    for j, f in enumerate(cont):
        cols[f.name] = np.tile(core[:, j].astype(float), len(combos))
    for j, f in enumerate(cats):
        cols[f.name] = np.repeat([c[j] for c in combos], n).astype(object)
    frame = pd.DataFrame({f.name: cols[f.name] for f in factors})
    return frame, tuple(core_points) * len(combos)


def two_level_frame(factors: Sequence[Factor], x: np.ndarray) -> pd.DataFrame:
    """Coded frame from a +-1 matrix: continuous as floats, two-level categorical as labels."""
    cols: dict[str, object] = {}
    for j, f in enumerate(factors):
        if f.is_continuous:
            cols[f.name] = x[:, j].astype(float)
        else:
            cols[f.name] = np.where(x[:, j] < 0, f.levels[0], f.levels[1]).astype(object)
    return pd.DataFrame(cols)


def sign_matrix(design: Design) -> np.ndarray:
    """The +-1 matrix of a two-level design (two-level categorical: first level -1).

    Raises :class:`DesignError` when some factor takes other values.
    """
    cols = []
    for f in design.factors:
        v = design.coded[f.name]
        if f.is_continuous:
            x = v.to_numpy(dtype=float)
            if not np.all(np.isin(x, (-1.0, 1.0))):
                raise DesignError(f"factor {f.name!r} is not at two levels (-1, +1) in this "
                                  f"{design.kind} design; two-level methods do not apply")
        else:
            if len(f.levels) != 2:
                raise DesignError(f"factor {f.name!r} has {len(f.levels)} levels; "
                                  "two-level methods need exactly 2")
            x = np.where(v.to_numpy() == f.levels[0], -1.0, 1.0)
        cols.append(x)
    return np.column_stack(cols)


def center_points(design: Design, n: int) -> pd.DataFrame:
    """``n`` center points for ``design``, in coded units.

    Continuous factors are at 0.  Categorical factors have no center: they cycle
    through every combination of their levels (first factor fastest), so that ``n``
    a multiple of the number of combinations gives each combination equally often and
    any other ``n`` gives counts differing by at most one.

    Examples
    --------
    >>> from trialkit.planning.designs import build_design
    >>> from trialkit.trial.factors import Factor
    >>> fs = (Factor.continuous("ph", 5, 8), Factor.categorical("stir", ["off", "on"]))
    >>> d = build_design(fs, "full-factorial", {}, seed=1)
    >>> center_points(d, 3)
        ph stir
    0  0.0  off
    1  0.0   on
    2  0.0  off
    """
    if not isinstance(n, (int, np.integer)) or isinstance(n, bool) or n < 0:
        raise DesignError(f"number of center points must be a whole number >= 0; got {n!r}")
    if not design.has_center:
        raise DesignError(f"a {design.kind} design of these factors has no center point; "
                          "set center_points = 0 for it")
    cats = categorical(design.factors)
    combos = level_combinations(cats)
    cols: dict[str, object] = {}
    for f in design.factors:
        if f.is_continuous:
            cols[f.name] = np.zeros(n)
    for j, f in enumerate(cats):
        cols[f.name] = np.array([combos[i % len(combos)][j] for i in range(n)], dtype=object)
    return pd.DataFrame({f.name: cols[f.name] for f in design.factors},
                        index=pd.RangeIndex(n))
