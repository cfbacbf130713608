"""Response-surface designs: central composite and Box–Behnken.

Neither builder adds center points (the Plan adds them per block, see
:func:`trialkit.planning.designs.center_points`); categorical factors are crossed with the design
of the continuous factors.

Central composite (Box & Wilson 1951; types as in NIST/SEMATECH e-Handbook 5.3.3.6.1):
full 2^k factorial portion plus 2k axial points.  ``alpha`` is

- ``"rotatable"`` (default): circumscribed, axial at +-F^(1/4) with F = 2^k factorial
  points (Box & Hunter 1957); the factors' low/high are the factorial points (+-1);
- ``"face"``: axial on the faces, alpha = 1;
- ``"inscribed"``: the rotatable design divided by its alpha, so low/high are the axial
  points (+-1) and the factorial points sit at +-1/F^(1/4);
- a number > 0: circumscribed with that axial distance.

Box–Behnken (Box & Behnken 1960): 3 to 5 factors from pyDOE3 ``bbdesign`` (every pair
of factors at +-1, the others at 0); 6 and 7 factors from the balanced incomplete block
constructions of the paper, which pyDOE3 does not have (it gives 60 and 84 runs).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence

import numpy as np

from trialkit.exceptions import DesignError
from trialkit.planning.designs._common import continuous, cross, two_level_full
from trialkit.planning.designs._pydoe import bbdesign
from trialkit.planning.designs.base import Design
from trialkit.trial.factors import Factor

#: Blocks of factors (0-based) set to +-1 together in the 6- and 7-factor Box–Behnken
#: designs; Box & Behnken (1960), Technometrics 2(4):455-475, designs for k = 6 and 7
#: (block lists from memory; each pair of factors is in at least one block, checked in
#: the tests). k = 7 is the balanced incomplete block design (7, 3, 1).
BBD_BLOCKS: dict[int, tuple[tuple[int, ...], ...]] = {
    6: ((0, 1, 3), (1, 2, 4), (2, 3, 5), (0, 3, 4), (1, 4, 5), (0, 2, 5)),
    7: ((3, 4, 5), (0, 5, 6), (1, 4, 6), (0, 1, 3), (2, 3, 6), (0, 2, 4), (1, 2, 5)),
}


def rotatable_alpha(n_factorial: int) -> float:
    """Box & Hunter (1957) rotatable axial distance, F^(1/4)."""
    return float(n_factorial) ** 0.25


def ccd_alpha(k: int, alpha) -> tuple[str, float]:
    """(type, alpha) for a composite of ``k`` continuous factors; type ccc/cci/ccf."""
    rot = rotatable_alpha(2 ** k)
    if alpha is None or alpha == "rotatable":
        return "ccc", rot
    if alpha == "face":
        return "ccf", 1.0
    if alpha == "inscribed":
        return "cci", rot
    if isinstance(alpha, (int, float)) and not isinstance(alpha, bool) and alpha > 0:
        return "ccc", float(alpha)
    raise DesignError(f"alpha must be 'rotatable', 'face', 'inscribed' or a number > 0; "
                      f"got {alpha!r}")


def build_central_composite(factors: Sequence[Factor], options: Mapping) -> Design:
    cont = continuous(factors)
    k = len(cont)
    if k < 2:
        raise DesignError(f"a central composite design needs 2 or more continuous factors; "
                          f"got {k}")
    kind, a = ccd_alpha(k, options.get("alpha"))
    fact = two_level_full(k)
    axial = np.zeros((2 * k, k))
    for i in range(k):
        axial[2 * i, i], axial[2 * i + 1, i] = -a, a
    if kind == "cci":
        fact = fact / a
        axial = axial / a
    core = np.vstack([fact, axial])
    points = ("factorial",) * len(fact) + ("axial",) * len(axial)
    coded, point = cross(factors, core, points)
    axial_coded = float(np.max(np.abs(axial)))
    notes = [{"ccc": f"circumscribed composite, axial points at +-{a:.4g} coded units",
              "ccf": "face-centred composite (alpha = 1)",
              "cci": f"inscribed composite: factorial points at +-1/{a:.4g} = "
                     f"+-{1 / a:.4g}, axial points at the factor limits"}[kind]]
    if kind == "ccc" and a > 1:
        lo = [f"{f.name} {f.to_natural(-a):.4g}..{f.to_natural(a):.4g}" for f in cont]
        notes.append("axial points go beyond low/high: " + ", ".join(lo))
    return Design("central-composite", tuple(factors), coded, point, has_center=True,
                  alpha=axial_coded, notes=notes)


def box_behnken_core(k: int) -> np.ndarray:
    """Edge points (no center) of the Box–Behnken design for ``k`` = 3..7 factors."""
    if 3 <= k <= 5:
        return bbdesign(k, center=0).astype(float)
    if k in BBD_BLOCKS:
        sq = two_level_full(3)
        rows = []
        for block in BBD_BLOCKS[k]:
            part = np.zeros((len(sq), k))
            part[:, list(block)] = sq
            rows.append(part)
        return np.vstack(rows)
    raise DesignError(f"Box–Behnken designs are available for 3 to 7 continuous factors; "
                      f"got {k}")


def build_box_behnken(factors: Sequence[Factor], options: Mapping) -> Design:
    cont = continuous(factors)
    core = box_behnken_core(len(cont))
    coded, point = cross(factors, core, ("edge",) * len(core))
    return Design("box-behnken", tuple(factors), coded, point, has_center=True,
                  notes=[f"Box–Behnken design, {len(core)} edge points for {len(cont)} "
                         "factors"])
