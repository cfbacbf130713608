"""Design builders: from factors, a design kind and its options to a coded :class:`Design`.

Examples
--------
>>> from trialkit.trial.factors import Factor
>>> fs = [Factor.continuous("chelator", 2, 10, unit="% w/v"),
...       Factor.continuous("ph", 5, 8), Factor.continuous("temperature", 20, 50, unit="degC")]
>>> d = build_design(fs, "central-composite", {"alpha": "rotatable"}, seed=1)
>>> d.n_points, round(d.alpha, 3), d.point.count("axial")
(14, 1.682, 6)
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from pathlib import Path

from trialkit.exceptions import DesignError
from trialkit.planning.designs._common import center_points
from trialkit.planning.designs.aliasing import AliasStructure, alias_structure
from trialkit.planning.designs.base import POINT_TYPES, Design
from trialkit.planning.designs.blocking import two_level_block_columns
from trialkit.planning.designs.options import DESIGN_KINDS, DESIGN_OPTIONS, check_design_options
from trialkit.planning.designs.space import build_latin_hypercube, build_sweep
from trialkit.planning.designs.surface import build_box_behnken, build_central_composite
from trialkit.planning.designs.twolevel import (
    build_fractional,
    build_full_factorial,
    build_plackett_burman,
)
from trialkit.problems import ProblemReport
from trialkit.trial.factors import Factor

__all__ = [
    "DESIGN_KINDS", "DESIGN_OPTIONS", "POINT_TYPES", "AliasStructure", "Design",
    "alias_structure", "build_design", "center_points", "check_design_options",
    "two_level_block_columns",
]


def build_design(factors: Sequence[Factor], kind: str, options: Mapping | None = None, *,
                 seed: int | None, folder: str | Path | None = None) -> Design:
    """Build the design points of ``kind`` for ``factors``.

    Parameters
    ----------
    factors : sequence of Factor
        In trial-file order.
    kind : str
        One of :data:`DESIGN_KINDS`.
    options : mapping
        Kind-specific options (see :data:`DESIGN_OPTIONS`).
    seed : int or None
        The trial seed (used by random designs: Latin hypercube, optimal tries).
    folder : path, optional
        The trial folder, against which an optimal design's ``runs_done`` path is read.

    Returns
    -------
    Design
        No center points; see :func:`center_points`.

    Raises
    ------
    DesignError
        With every problem of the options (``.problems``), or when the design cannot be
        built.
    """
    factors = tuple(factors)
    options = dict(options or {})
    names = [f.name for f in factors]
    if len(set(names)) != len(names):
        raise DesignError(f"factor names must be unique; got {names}")
    report = ProblemReport("design")
    check_design_options(factors, kind, options, report)
    report.raise_if_any(DesignError, f"cannot build a {kind} design:")
    if kind == "full-factorial":
        return build_full_factorial(factors, options)
    if kind == "fractional-factorial":
        return build_fractional(factors, options)
    if kind == "plackett-burman":
        return build_plackett_burman(factors, options)
    if kind == "central-composite":
        return build_central_composite(factors, options)
    if kind == "box-behnken":
        return build_box_behnken(factors, options)
    if kind == "sweep":
        return build_sweep(factors, options)
    if kind == "optimal":
        from trialkit.planning.designs.optimal import build_optimal  # loads the search

        return build_optimal(factors, options, seed=seed, folder=folder)
    return build_latin_hypercube(factors, options, seed)
