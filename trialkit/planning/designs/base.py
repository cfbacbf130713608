"""The :class:`Design`: a coded matrix of design points, before any layout.

A design knows nothing of replicates, blocks, controls or coupons (that is the Plan's
job).  Its rows are the distinct design points in standard order; continuous factors are
coded (``-1 .. +1``, axial points beyond), categorical and ordinal factors carry their
level labels.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import pandas as pd

from trialkit.trial.factors import Factor

#: Point types a design row (or a plan bath) can have.
POINT_TYPES = ("factorial", "axial", "center", "edge", "sweep", "control", "reference",
               "screening", "space-filling", "optimal")


@dataclass
class Design:
    """Design points of one design kind.

    Attributes
    ----------
    kind : str
        Design kind as written in the trial file (``"central-composite"`` ...).
    factors : tuple of Factor
        Factors in trial-file order; ``coded`` has one column per factor, same order.
    coded : pandas.DataFrame
        One row per design point (standard order, index 0..n-1).  Continuous factors as
        floats in coded units; categorical/ordinal factors as their level labels.
    point : tuple of str
        Point type of each row (one of :data:`POINT_TYPES`).
    has_center : bool
        Whether center points are meaningful (all-continuous part has a center).
    resolution : int or None
        Resolution of a two-level fractional design (computed from its matrix).
    generators : tuple of str
        Generators such as ``"E = ABCD"`` (fractional factorials).
    defining_relation : tuple of str
        Words of the defining relation with signs, e.g. ``"I = +ABCDE"``.
    aliases : pandas.DataFrame or None
        Alias table with columns ``effect`` and ``aliases`` (signed, e.g. ``"+CDE"``).
    alpha : float or None
        Axial distance of a central composite design, in coded units.
    notes : list of str
        Plain-language remarks for the plan summary and report.
    """

    kind: str
    factors: tuple[Factor, ...]
    coded: pd.DataFrame
    point: tuple[str, ...]
    has_center: bool = False
    resolution: int | None = None
    generators: tuple[str, ...] = ()
    defining_relation: tuple[str, ...] = ()
    aliases: pd.DataFrame | None = None
    alpha: float | None = None
    notes: list[str] = field(default_factory=list)

    @property
    def n_points(self) -> int:
        return len(self.coded)

    def natural(self) -> pd.DataFrame:
        """Design points in natural units (continuous factors decoded, labels kept)."""
        out = self.coded.copy()
        for f in self.factors:
            if f.is_continuous:
                out[f.name] = f.to_natural(out[f.name].to_numpy(dtype=float))
        return out

    def summary(self) -> pd.DataFrame:
        """Count of design points per point type (columns ``point``, ``points``)."""
        counts = pd.Series(self.point, dtype=object).value_counts(sort=False)
        return pd.DataFrame({"point": counts.index.astype(str), "points": counts.to_numpy()})

    def __repr__(self) -> str:
        parts = [f"{self.kind}", f"{self.n_points} points", f"{len(self.factors)} factors"]
        if self.resolution is not None:
            parts.append(f"resolution {self.resolution}")
        if self.alpha is not None:
            parts.append(f"alpha {self.alpha:.4g}")
        if self.generators:
            parts.append("generators " + ", ".join(self.generators))
        return f"Design({'; '.join(parts)})"

    def _repr_html_(self) -> str:
        from html import escape

        head = f"<p><b>{escape(repr(self))}</b></p>"
        notes = "".join(f"<li>{escape(n)}</li>" for n in self.notes)
        table = self.natural().assign(point=list(self.point)).to_html(escape=True)
        return head + (f"<ul>{notes}</ul>" if notes else "") + table

    def to_dict(self) -> dict:
        """Plain-data summary for JSON (no matrix)."""
        return {
            "kind": self.kind,
            "points": self.n_points,
            "resolution": self.resolution,
            "generators": list(self.generators),
            "defining_relation": list(self.defining_relation),
            "aliases": [] if self.aliases is None else self.aliases.to_dict("records"),
            "alpha": self.alpha,
            "notes": list(self.notes),
        }
