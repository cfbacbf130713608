"""Factorial designs: full factorial (mixed levels), two-level fractional, Plackett–Burman.

Full factorials and regular fractions are built with numpy (standard order, generated
columns as signed products of the base columns: the rows and signs pyDOE3's ``fullfact``
and ``fracfact`` give, checked against them in the tests) so that planning a factorial does
not import pyDOE3 and, through it, scipy.stats; Plackett–Burman comes from pyDOE3's
``pbdesign``, imported on first use.  The defining relation, resolution and alias table
always come from the built matrix itself
(:func:`trialkit.planning.designs.aliasing.alias_structure`).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence

import numpy as np
import pandas as pd

from trialkit.exceptions import DesignError
from trialkit.planning.designs._common import (
    full_factorial_index,
    two_level_frame,
    two_level_full,
)
from trialkit.planning.designs._pydoe import pbdesign
from trialkit.planning.designs.aliasing import AliasStructure, alias_structure, roman, word_text
from trialkit.planning.designs.base import Design
from trialkit.planning.designs.generators import (
    FRACTION_TABLE,
    TABLE_RESOLUTION,
    check_generator_set,
)
from trialkit.trial.factors import FACTOR_LETTERS, Factor


def _levels_note(factors: Sequence[Factor]) -> list[str]:
    listed = [f.name for f in factors if f.is_continuous and f.levels]
    if not listed:
        return []
    return [f"listed levels of {', '.join(listed)} not used: a two-level design runs each "
            "continuous factor at its low and high"]


def _attach(design: Design, s: AliasStructure) -> Design:
    design.resolution = s.resolution
    design.defining_relation = s.defining_relation
    design.aliases = s.table
    if not s.regular:
        design.notes.append(
            f"non-regular design: {len(s.partial)} partial aliases (correlations between "
            "-1 and 1) between effects and two-factor interactions")
    return design


def build_full_factorial(factors: Sequence[Factor], options: Mapping) -> Design:
    """Every combination of levels (first factor changing fastest)."""
    n_opt = options.get("levels")
    values: list[np.ndarray] = []
    for f in factors:
        if f.is_continuous:
            if f.levels:
                values.append(np.sort(np.asarray(f.to_coded(np.asarray(f.levels)), float)))
            elif n_opt is not None:
                values.append(np.linspace(-1.0, 1.0, int(n_opt)))
            else:
                values.append(np.array([-1.0, 1.0]))
        else:
            values.append(np.array(f.levels, dtype=object))
    idx = full_factorial_index([len(v) for v in values])
    coded = pd.DataFrame({f.name: values[j][idx[:, j]] for j, f in enumerate(factors)})
    for f in factors:
        if f.is_continuous:
            coded[f.name] = coded[f.name].astype(float)
    design = Design("full-factorial", tuple(factors), coded, ("factorial",) * len(coded),
                    has_center=any(f.is_continuous for f in factors))
    if all(len(v) == 2 for v in values):
        letters = FACTOR_LETTERS[:len(factors)]
        x = np.column_stack([np.where(idx[:, j] == 0, -1.0, 1.0) for j in range(len(factors))])
        _attach(design, alias_structure(x, letters))
    return design


def fraction_matrix(k: int, generators: Sequence[str]) -> np.ndarray:
    """+-1 matrix of the 2^(k-p) design with these generators, base in standard order.

    The ``k - p`` base factors form a full factorial, first factor changing fastest; each
    generated factor is its generator's sign times the product of the base columns in its
    word.

    Examples
    --------
    >>> fraction_matrix(3, ["C = -AB"]).tolist()
    [[-1.0, -1.0, -1.0], [1.0, -1.0, 1.0], [-1.0, 1.0, 1.0], [1.0, 1.0, -1.0]]
    """
    letters = FACTOR_LETTERS[:k]
    parsed = check_generator_set(list(generators), letters)
    base = k - len(parsed)
    x = np.empty((2 ** base, k))
    x[:, :base] = two_level_full(base)
    for t, sign, mask in parsed:
        word = [i for i in range(base) if mask >> i & 1]
        x[:, t] = (-1.0 if sign < 0 else 1.0) * np.prod(x[:, word], axis=1)
    return x


def normal_generator(text: str, letters: str) -> str:
    from trialkit.planning.designs.generators import parse_generator

    t, s, m = parse_generator(text, letters)
    return f"{letters[t]} = {'-' if s < 0 else ''}{word_text(m, letters)}"


def build_fractional(factors: Sequence[Factor], options: Mapping) -> Design:
    """Two-level fractional factorial from ``generators`` or a required ``resolution``."""
    k = len(factors)
    letters = FACTOR_LETTERS[:k]
    notes: list[str] = []
    if options.get("generators") is not None:
        gens = tuple(normal_generator(g, letters) for g in options["generators"])
        x = fraction_matrix(k, gens)
        s = alias_structure(x, letters)
        notes.append(f"generators as given: {', '.join(gens)}")
        wanted = options.get("resolution")
        if wanted is not None and (s.resolution is None or s.resolution < wanted):
            raise DesignError(f"the generators give resolution {s.resolution}, below the "
                              f"resolution {wanted} asked for; change the generators or "
                              "drop one of the two options")
    else:
        wanted = int(options["resolution"])
        gens, x, s = _by_resolution(k, wanted, notes)
    design = Design("fractional-factorial", tuple(factors), two_level_frame(factors, x),
                    ("factorial",) * len(x), has_center=any(f.is_continuous for f in factors),
                    generators=gens, notes=notes + _levels_note(factors))
    return _attach(design, s)


def _by_resolution(k: int, wanted: int, notes: list[str]):
    if wanted > k:
        raise DesignError(f"no fraction of {k} two-level factors reaches resolution "
                          f"{roman(wanted)} (the half fraction reaches {roman(k)}); lower the "
                          "resolution or use kind = 'full-factorial'")
    letters = FACTOR_LETTERS[:k]
    candidates = sorted((p for (kk, p) in FRACTION_TABLE if kk == k), reverse=True)
    for p in candidates:
        if TABLE_RESOLUTION[(k, p)] < wanted:
            continue
        gens = FRACTION_TABLE[(k, p)]
        x = fraction_matrix(k, gens)
        s = alias_structure(x, letters)
        if s.resolution is not None and s.resolution >= wanted:
            notes.append(f"2^({k}-{p}) resolution {roman(s.resolution)} from the e-Handbook "
                         f"table 3.17 ({2 ** (k - p)} runs)")
            return gens, x, s
    if k > 10:
        raise DesignError(f"no tabulated fraction for {k} factors at resolution {wanted}; "
                          "give generators = [...] explicitly, or use kind = "
                          "'plackett-burman' for a resolution III screening design")
    gens = (f"{letters[-1]} = {letters[:-1]}",)
    x = fraction_matrix(k, gens)
    s = alias_structure(x, letters)
    notes.append(f"no smaller tabulated fraction reaches resolution {roman(wanted)}: half "
                 f"fraction I = {letters} (resolution {roman(k)}, {2 ** (k - 1)} runs)")
    return gens, x, s


def build_plackett_burman(factors: Sequence[Factor], options: Mapping) -> Design:
    """Plackett–Burman screening design (pyDOE3 ``pbdesign``)."""
    k = len(factors)
    x = pbdesign(k)
    design = Design("plackett-burman", tuple(factors), two_level_frame(factors, x),
                    ("screening",) * len(x), has_center=any(f.is_continuous for f in factors),
                    notes=[f"Plackett–Burman design in {len(x)} runs for {k} factors",
                           *_levels_note(factors)])
    return _attach(design, alias_structure(x, FACTOR_LETTERS[:k]))
