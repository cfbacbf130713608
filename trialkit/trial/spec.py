"""What a checked trial file says, as plain dataclasses (no checking here).

:mod:`trialkit.trial.file` reads and checks the TOML and builds these objects; every later
stage of the pipeline reads them.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from trialkit.trial.factors import Factor


@dataclass(frozen=True)
class DesignSpec:
    """The ``[design]`` section: the design kind and its kind-specific options."""

    kind: str
    options: dict = field(default_factory=dict)


@dataclass(frozen=True)
class Layout:
    """The ``[layout]`` section: how design points become baths and coupons."""

    replicates: int = 1
    blocks: int = 1
    block_label: str = "block"
    center_points: int = 0
    controls: tuple[str, ...] = ()
    coupons_per_bath: int = 1
    witness_coupons: int = 0


@dataclass(frozen=True)
class ResponseSpec:
    """One ``[[response]]``: what is measured and what the trial wants of it.

    ``aim`` is ``"higher"``, ``"lower"``, ``"on-target"`` (then ``ideal`` is the value
    wanted and ``unacceptable`` the pair of values below and above it that are of no use)
    or ``"record-only"``.  ``unacceptable`` and ``satisfactory`` are the limits of the
    Derringer–Suich desirability scale, ``shape`` its exponent and ``priority`` the
    response's relative weight in a compromise.
    """

    name: str
    unit: str = ""
    aim: str = "higher"
    unacceptable: float | tuple[float, float] | None = None
    satisfactory: float | None = None
    ideal: float | None = None
    shape: float = 1.0
    priority: float = 1.0
    measure: str = ""
    description: str = ""
    range: tuple | None = None  # (low, high) the values can take; None ends unbounded
    margin: float | None = None  # a difference too small to matter, in the response's unit
    scale: str = "raw"  # the scale it is modelled on: raw, log or logit

    @property
    def is_wanted(self) -> bool:
        """True when the trial wants something of this response (not record-only)."""
        return self.aim in ("higher", "lower", "on-target")

    @property
    def has_limits(self) -> bool:
        """True when the trial file gives both ends of the desirability scale."""
        if self.aim == "on-target":
            return self.unacceptable is not None and self.ideal is not None
        return self.unacceptable is not None and self.satisfactory is not None

    def to_dict(self) -> dict:
        return dict(self.__dict__)


@dataclass(frozen=True)
class CouponSpec:
    """The ``[coupons]`` section: default coupon geometry (mm) and metal."""

    shape: str = "plate"
    length_mm: float | None = None
    width_mm: float | None = None
    thickness_mm: float | None = None
    diameter_mm: float | None = None
    holes: tuple[float, ...] = ()
    area_cm2: float | None = None
    metal: str = "carbon steel"
    cleaning_cycles: int = 0
    description: str = ""


@dataclass
class Trial:
    """Everything the trial file says, checked.

    Attributes
    ----------
    path : Path or None
        The trial file (``None`` when parsed from text).
    title, seed, question, notes : str, int, str, str
        From ``[trial]``.
    factors : tuple of Factor
    design : DesignSpec
    layout : Layout
    responses : tuple of ResponseSpec
    coupons : CouponSpec or None
    sections : dict
        Parsed extension sections (``bath``, ``sheet`` ...), keyed by section name.
    raw : dict
        The TOML document as read.
    """

    path: Path | None
    title: str
    seed: int
    factors: tuple[Factor, ...]
    design: DesignSpec
    layout: Layout
    responses: tuple[ResponseSpec, ...] = ()
    coupons: CouponSpec | None = None
    question: str = ""
    notes: str = ""
    operator: str = ""
    sections: dict[str, Any] = field(default_factory=dict)
    raw: dict = field(default_factory=dict, repr=False)

    @property
    def folder(self) -> Path | None:
        """The trial folder (the folder holding the trial file)."""
        return None if self.path is None else self.path.parent

    def factor(self, name: str) -> Factor:
        """The factor called ``name`` (KeyError if none)."""
        for f in self.factors:
            if f.name == name:
                return f
        raise KeyError(name)

    def response(self, name: str) -> ResponseSpec:
        """The response called ``name`` (KeyError if none)."""
        for r in self.responses:
            if r.name == name:
                return r
        raise KeyError(name)
