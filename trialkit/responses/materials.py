"""Coupon metals and their densities (for corrosion rates), read from ``data/metals.toml``.

Each entry carries its source (ASTM G1 Appendix X1, Table X1.1) and says whether the
number was read from the standard or recalled.

Examples
--------
>>> metal("mild steel").density_g_cm3
7.86
>>> metal("Stainless 316").name
'stainless steel 316'
"""

from __future__ import annotations

import tomllib
from dataclasses import asdict, dataclass
from functools import lru_cache
from importlib import resources

import pandas as pd

from trialkit.exceptions import ResponseError
from trialkit.problems import did_you_mean


class MetalError(ResponseError):
    """A metal that is not in the density table."""


@dataclass(frozen=True)
class Metal:
    """One coupon metal.

    Attributes
    ----------
    name : str
        Canonical name (as written in the trial's ``[coupons] metal``).
    aliases : tuple of str
        Other accepted spellings.
    uns : str
        UNS number where one applies.
    density_g_cm3 : float
        Density in g/cm³.
    source : str
        Where the density comes from.
    from_memory : bool
        True when the value was recalled rather than read from the source.
    """

    name: str
    aliases: tuple[str, ...]
    uns: str
    density_g_cm3: float
    source: str
    from_memory: bool


@lru_cache(maxsize=1)
def _table() -> tuple[Metal, ...]:
    text = resources.files("trialkit").joinpath("data/metals.toml").read_text("utf-8")
    raw = tomllib.loads(text)
    return tuple(
        Metal(
            name=m["name"],
            aliases=tuple(m.get("aliases", ())),
            uns=m.get("uns", ""),
            density_g_cm3=float(m["density_g_cm3"]),
            source=m["source"],
            from_memory=bool(m.get("from_memory", False)),
        )
        for m in raw["metal"]
    )


def metal_names() -> tuple[str, ...]:
    """Canonical names of the metals in the table, in table order."""
    return tuple(m.name for m in _table())


def metal(name: str) -> Metal:
    """Look a metal up by name or alias (case and extra spaces ignored).

    Raises
    ------
    MetalError
        The name is not in the table; the message suggests near names.
    """
    key = " ".join(str(name).lower().split())
    for m in _table():
        if key == m.name or key in m.aliases:
            return m
    choices = [m.name for m in _table()] + [a for m in _table() for a in m.aliases]
    raise MetalError(
        f"unknown coupon metal {name!r}; {did_you_mean(str(name), choices)} "
        "Set [coupons] metal to one of: " + ", ".join(repr(n) for n in metal_names())
        + ", or pass density_g_cm3 directly."
    )


def density_g_cm3(name: str) -> float:
    """Density of a metal in g/cm³ (see :func:`metal`)."""
    return metal(name).density_g_cm3


def metals_table() -> pd.DataFrame:
    """The whole table as a DataFrame (columns: the :class:`Metal` attributes)."""
    return pd.DataFrame([asdict(m) for m in _table()])


#: Measures computed with the metal's density (ASTM G1 corrosion rate).
DENSITY_MEASURES = ("corrosion_rate_mm_per_y",)


def check_coupon_metal(trial) -> None:
    """Refuse, before anything is written, a trial whose coupons are of a metal not in the
    density table when one of its responses needs the density.

    Raises
    ------
    TrialFileError
        Naming the metal, the responses that need it, the nearest known names and the fix.
    """
    from trialkit.exceptions import TrialFileError
    from trialkit.problems import ProblemReport

    coupons = getattr(trial, "coupons", None)
    needing = [r.name for r in trial.responses if (r.measure or r.name) in DENSITY_MEASURES]
    if coupons is None or not needing:
        return
    try:
        metal(coupons.metal)
    except MetalError as exc:
        problems = ProblemReport(str(getattr(trial, "path", None) or "trial file"))
        problems.add("coupons.metal", f"{exc} (needed by {', '.join(needing)})",
                     value=coupons.metal, check="unknown_metal",
                     fix="name a metal of the density table (ASTM G1 Table X1.1), e.g. "
                         "metal = \"carbon steel\"")
        problems.raise_if_any(TrialFileError, "The trial's coupon metal has no density for "
                                              "its corrosion rate; nothing was written.")

