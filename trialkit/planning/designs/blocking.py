"""Blocking a two-level design by confounding interactions with blocks.

For 2^m blocks, m block generators are chosen among the interaction words of the design
so that every confounded effect (each generator and each product of generators, taken
modulo the design's own defining relation) is of the highest possible lowest order:
never a main effect, a two-factor interaction only when unavoidable.  This is the
classical construction (Box, Hunter & Hunter 2005, ch. 5; Montgomery, *Design and
Analysis of Experiments*, ch. 7).  With two blocks this confounds the highest-order
interaction (ABCD... for a full factorial).

Examples
--------
>>> from trialkit.planning.designs import build_design
>>> from trialkit.trial.factors import Factor
>>> fs = [Factor.continuous(n, 0, 1) for n in "pqr"]
>>> d = build_design(fs, "full-factorial", {}, seed=0)
>>> labels, confounded = two_level_block_columns(d, 2)
>>> labels.tolist(), confounded
([1, 2, 2, 1, 2, 1, 1, 2], ['ABC'])
"""

from __future__ import annotations

import itertools

import numpy as np

from trialkit.exceptions import DesignError
from trialkit.planning.designs._common import sign_matrix
from trialkit.planning.designs.aliasing import defining_words, word_text
from trialkit.planning.designs.base import Design
from trialkit.trial.factors import FACTOR_LETTERS

_MAX_ENUMERATED = 300_000
_MAX_CANDIDATES = 60


def _key(col: np.ndarray) -> int:
    bits = (col < 0).astype(np.uint8)
    bits ^= bits[0]
    return int("".join(map(str, bits)), 2)


def effect_classes(x: np.ndarray) -> dict[int, int]:
    """Map each non-constant effect column (as a sign-free key) to its shortest word."""
    n, k = x.shape
    classes: dict[int, int] = {}
    seen = 0
    for r in range(1, k + 1):
        for combo in itertools.combinations(range(k), r):
            seen += 1
            col = np.prod(x[:, combo], axis=1)
            key = _key(col)
            if key and key not in classes:
                classes[key] = sum(1 << i for i in combo)
            if len(classes) == n - 1 or seen > _MAX_ENUMERATED:
                return classes
    return classes


def two_level_block_columns(design: Design, n_blocks: int) -> tuple[np.ndarray, list[str]]:
    """Block labels (1..n_blocks per row) and the confounded effects for a two-level design.

    Parameters
    ----------
    design : Design
        A two-level design (full factorial of two-level factors, fractional factorial,
        or a regular Plackett–Burman design).
    n_blocks : int
        A power of two, at most half the number of design points.

    Returns
    -------
    labels : numpy.ndarray of int
        Block of each design row; the first row (all factors low) is in block 1.
    confounded : list of str
        Shortest word of every effect confounded with blocks, shortest first.
    """
    n = design.n_points
    if not isinstance(n_blocks, (int, np.integer)) or isinstance(n_blocks, bool) \
            or n_blocks < 1:
        raise DesignError(f"number of blocks must be a whole number >= 1; got {n_blocks!r}")
    if n_blocks == 1:
        return np.ones(n, dtype=int), []
    m = int(n_blocks).bit_length() - 1
    if 2 ** m != n_blocks:
        raise DesignError(f"a two-level design splits into 2, 4, 8 ... blocks by confounding; "
                          f"got {n_blocks}; use a power of two, or randomised complete blocks")
    if n_blocks > n // 2:
        raise DesignError(f"{n_blocks} blocks for {n} design points leaves fewer than 2 per "
                          "block; use fewer blocks or replicate the design across blocks")
    x = sign_matrix(design)
    k = x.shape[1]
    words = defining_words(x)
    if len({tuple(r) for r in x}) != n or n * (len(words) + 1) != 2 ** k:
        raise DesignError(f"the {design.kind} design is not a regular fraction, so its "
                          "interactions cannot be confounded cleanly with blocks; use "
                          "randomised complete blocks (replicate the design in each block)")
    classes = effect_classes(x)
    length = {key: bin(w).count("1") for key, w in classes.items()}
    cands = sorted((key for key in classes if length[key] > 1),
                   key=lambda c: (-length[c], _std(classes[c], k)))[:_MAX_CANDIDATES]
    best, best_score = None, None
    for combo in itertools.combinations(cands, m):
        prods = []
        for r in range(1, m + 1):
            for sub in itertools.combinations(combo, r):
                acc = 0
                for c in sub:
                    acc ^= c
                prods.append(acc)
        if 0 in prods or len(set(prods)) != len(prods) or any(p not in length for p in prods):
            continue
        lens = sorted(length[p] for p in prods)
        score = (lens[0], -lens.count(lens[0]), sum(lens))
        if best_score is None or score > best_score:
            best, best_score = (combo, prods), score
    if best is None or best_score[0] < 2:
        raise DesignError(f"{n_blocks} blocks would confound a main effect with blocks in "
                          f"this {n}-point design; use fewer blocks or a larger design")
    letters = FACTOR_LETTERS[:k]
    combo, prods = best
    labels = np.ones(n, dtype=int)
    for i, c in enumerate(combo):
        col = np.prod(x[:, [j for j in range(k) if classes[c] >> j & 1]], axis=1)
        labels += (col != col[0]).astype(int) << i
    confounded = sorted((word_text(classes[p], letters) for p in prods),
                        key=lambda w: (len(w), w))
    return labels, confounded


def _std(mask: int, k: int) -> tuple:
    return tuple(i for i in range(k) if mask >> i & 1)
