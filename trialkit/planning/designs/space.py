"""One-factor sweeps and Latin hypercubes.

A *sweep* runs one continuous factor at listed natural values, or at ``count`` values
spaced linearly or geometrically (constant ratio) from low to high; other continuous
factors are held at the middle of their range and categorical factors are crossed.

A *Latin hypercube* (McKay, Beckman & Conover 1979; pyDOE3 ``lhs``) puts ``runs``
points so that each factor's range, cut into ``runs`` equal strata, has one point in
each stratum.  It is seeded by the trial seed.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence

import numpy as np

from trialkit.exceptions import DesignError
from trialkit.planning.designs._common import continuous, cross
from trialkit.planning.designs._pydoe import lhs
from trialkit.planning.designs.base import Design
from trialkit.trial.factors import Factor

#: How a Latin hypercube spreads its points (``spread`` option) -> pyDOE3's criterion.
#: ``least-correlated`` is done here (see :func:`_least_correlated`).
LHS_SPREADS = {
    "cell-centres": "center",          # each point at the centre of its cell
    "widest-gaps": "maximin",          # largest smallest distance between points
    "centred-gaps": "centermaximin",   # the same, points at their cells' centres
    "least-correlated": None,          # lowest largest correlation between factors
}


def sweep_factor(factors: Sequence[Factor], options: Mapping) -> Factor:
    cont = continuous(factors)
    name = options.get("factor")
    if name is None:
        if len(cont) != 1:
            raise DesignError(f"a sweep needs option factor = '<name>' when there are "
                              f"{len(cont)} continuous factors")
        return cont[0]
    for f in cont:
        if f.name == name:
            return f
    raise DesignError(f"sweep factor {name!r} is not a continuous factor; continuous "
                      f"factors: {', '.join(f.name for f in cont) or 'none'}")


def sweep_levels(f: Factor, options: Mapping) -> np.ndarray:
    """Natural values of a sweep (listed, or count with linear/geometric spacing)."""
    if options.get("levels") is not None:
        return np.asarray(options["levels"], dtype=float)
    if options.get("count") is not None:
        n = int(options["count"])
        if options.get("spacing", "linear") == "geometric":
            return np.geomspace(f.low, f.high, n)
        return np.linspace(f.low, f.high, n)
    if f.levels:
        return np.asarray(f.levels, dtype=float)
    return np.linspace(f.low, f.high, 5)


def build_sweep(factors: Sequence[Factor], options: Mapping) -> Design:
    f = sweep_factor(factors, options)
    values = sweep_levels(f, options)
    cont = continuous(factors)
    core = np.zeros((len(values), len(cont)))
    j = [c.name for c in cont].index(f.name)
    core[:, j] = f.to_coded(values)
    coded, point = cross(factors, core, ("sweep",) * len(values))
    notes = [f"sweep of {f.name} at " + ", ".join(f"{v:.4g}" for v in values)
             + (f" {f.unit}" if f.unit else "")]
    held = [c for c in cont if c.name != f.name]
    if held:
        notes.append("held at mid-range: " + ", ".join(
            f"{c.name} = {c.center:.4g}{' ' + c.unit if c.unit else ''}" for c in held))
    return Design("sweep", tuple(factors), coded, point, has_center=False, notes=notes)


def build_latin_hypercube(factors: Sequence[Factor], options: Mapping, seed) -> Design:
    if seed is None:
        raise DesignError("a Latin hypercube is random: give the trial seed")
    cont = continuous(factors)
    k = len(cont)
    if k < 1:
        raise DesignError("a Latin hypercube needs at least one continuous factor")
    runs = int(options.get("runs", 10 * k))
    rng = np.random.default_rng(seed)
    spread = options.get("spread")
    iterations = int(options.get("iterations") or 5)
    if spread == "least-correlated":
        u = _least_correlated(k, runs, iterations, rng)
    elif spread is not None:
        u = lhs(k, samples=runs, criterion=LHS_SPREADS[spread], iterations=iterations,
                seed=rng)
    else:
        u = lhs(k, samples=runs, seed=rng)
    core = 2.0 * u - 1.0  # pyDOE3 gives [0, 1]; we scale to coded -1..+1 ourselves
    coded, point = cross(factors, core, ("space-filling",) * runs)
    return Design("latin-hypercube", tuple(factors), coded, point, has_center=False,
                  notes=[f"Latin hypercube of {runs} points, seed {seed}"
                         + (f", spread {spread}" if spread else "")])


def _least_correlated(k: int, runs: int, iterations: int, rng) -> np.ndarray:
    """Of ``iterations`` random Latin hypercubes, the one with the smallest largest
    absolute correlation between factors.

    Done here because pyDOE3 1.6.2's own correlation criterion fails when every
    correlation is +1 (one factor, or two runs).
    """
    best, best_c = None, np.inf
    for _ in range(iterations):
        h = lhs(k, samples=runs, seed=rng)
        c = 0.0
        if k > 1:
            r = np.corrcoef(h.T)
            c = float(np.max(np.abs(r - np.eye(k))))
        if best is None or c < best_c:
            best, best_c = h, c
    return best
