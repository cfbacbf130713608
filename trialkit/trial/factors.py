"""Factors of a trial: their kind, unit, levels, and coded <-> natural conversion.

A *continuous* factor spans ``low``..``high`` in its unit and is coded linearly so that
``low -> -1`` and ``high -> +1``.  A *categorical* factor has unordered text levels
(``"none"``, ``"added"``).  An *ordinal* factor has ordered levels; where a design needs
numbers it takes them as equally spaced codes from -1 to +1.

Examples
--------
>>> f = Factor.continuous("chelator", 2.0, 10.0, unit="% w/v")
>>> f.to_coded(6.0), f.to_natural(1.0)
(0.0, 10.0)
>>> s = Factor.categorical("surfactant", ["none", "added"])
>>> s.n_levels
2
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np

CONTINUOUS = "continuous"
CATEGORICAL = "categorical"
ORDINAL = "ordinal"
FACTOR_KINDS = (CONTINUOUS, CATEGORICAL, ORDINAL)

#: Letters used for two-level factors in generators and alias tables. ``I`` is skipped
#: because it names the identity in a defining relation (as in the usual tables).
FACTOR_LETTERS = "ABCDEFGHJKLMNOPQRSTUVWXYZ"


@dataclass(frozen=True)
class Factor:
    """One factor of a trial.

    Attributes
    ----------
    name : str
        Identifier used in plans, sheets and model specifications.
    kind : str
        ``"continuous"``, ``"categorical"`` or ``"ordinal"``.
    unit : str
        Unit of a continuous factor's values (``""`` when it has none).
    low, high : float or None
        Range of a continuous factor (natural units); ``None`` otherwise.
    levels : tuple
        Text levels of a categorical/ordinal factor; for a continuous factor, optional
        explicit numeric levels (used by full factorials and sweeps).
    description : str
        Free text for the report.
    """

    name: str
    kind: str = CONTINUOUS
    unit: str = ""
    low: float | None = None
    high: float | None = None
    levels: tuple = field(default_factory=tuple)
    description: str = ""

    # -- constructors -------------------------------------------------------------
    @classmethod
    def continuous(
        cls, name: str, low: float, high: float, *, unit: str = "",
        levels: Sequence[float] = (), description: str = "",
    ) -> Factor:
        """A continuous factor from ``low`` to ``high``."""
        return cls(name, CONTINUOUS, unit, float(low), float(high),
                   tuple(float(v) for v in levels), description)

    @classmethod
    def categorical(cls, name: str, levels: Sequence[str], *, description: str = "") -> Factor:
        """A categorical factor with unordered text levels."""
        return cls(name, CATEGORICAL, "", None, None, tuple(str(v) for v in levels), description)

    @classmethod
    def ordinal(cls, name: str, levels: Sequence[str], *, description: str = "") -> Factor:
        """An ordinal factor with ordered text levels."""
        return cls(name, ORDINAL, "", None, None, tuple(str(v) for v in levels), description)

    # -- properties ---------------------------------------------------------------
    @property
    def is_continuous(self) -> bool:
        return self.kind == CONTINUOUS

    @property
    def is_categorical(self) -> bool:
        """True for categorical *and* ordinal factors (text levels)."""
        return self.kind in (CATEGORICAL, ORDINAL)

    @property
    def n_levels(self) -> int:
        """Number of distinct levels (2 for a continuous factor without explicit levels)."""
        return len(self.levels) if self.levels else 2

    @property
    def center(self) -> float:
        """Midpoint of a continuous factor's range."""
        self._need_continuous()
        return (self.low + self.high) / 2.0

    @property
    def half_range(self) -> float:
        """Half the range of a continuous factor (natural units per coded unit)."""
        self._need_continuous()
        return (self.high - self.low) / 2.0

    def label(self) -> str:
        """Name with unit, e.g. ``"chelator (% w/v)"``."""
        return f"{self.name} ({self.unit})" if self.unit else self.name

    # -- conversions --------------------------------------------------------------
    def to_coded(self, natural):
        """Natural value(s) -> coded value(s) (continuous) or level code (ordinal)."""
        if self.kind == CONTINUOUS:
            return (np.asarray(natural, dtype=float) - self.center) / self.half_range \
                if np.ndim(natural) else (float(natural) - self.center) / self.half_range
        if self.kind == ORDINAL:
            codes = dict(zip(self.levels, self.level_codes(), strict=True))
            if np.ndim(natural):
                return np.array([codes[str(v)] for v in natural])
            return codes[str(natural)]
        raise TypeError(f"categorical factor {self.name!r} has no numeric coding")

    def to_natural(self, coded):
        """Coded value(s) -> natural value(s) of a continuous factor."""
        self._need_continuous()
        if np.ndim(coded):
            return self.center + np.asarray(coded, dtype=float) * self.half_range
        return self.center + float(coded) * self.half_range

    def level_codes(self) -> np.ndarray:
        """Equally spaced codes from -1 to +1, one per level (ordinal and two-level use)."""
        n = self.n_levels
        return np.linspace(-1.0, 1.0, n) if n > 1 else np.zeros(1)

    def _need_continuous(self) -> None:
        if self.kind != CONTINUOUS:
            raise TypeError(f"factor {self.name!r} is {self.kind}, not continuous")

    def to_dict(self) -> dict:
        """Plain-data form for JSON."""
        return {
            "name": self.name, "kind": self.kind, "unit": self.unit,
            "low": self.low, "high": self.high, "levels": list(self.levels),
        }


def factor_letters(factors: Sequence[Factor]) -> dict[str, str]:
    """Map factor names to the letters A, B, C ... (skipping I) in order.

    Examples
    --------
    >>> fs = [Factor.continuous(n, 0, 1) for n in "pqrstuvwxy"]
    >>> "".join(factor_letters(fs).values())
    'ABCDEFGHJK'
    """
    if len(factors) > len(FACTOR_LETTERS):
        raise ValueError(f"at most {len(FACTOR_LETTERS)} factors can be lettered")
    return {f.name: FACTOR_LETTERS[i] for i, f in enumerate(factors)}
