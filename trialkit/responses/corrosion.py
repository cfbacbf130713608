"""Corrosion rate from mass loss and the cleaning corrections of ASTM G1.

The corrosion rate of ASTM G1 is ``CR = K·W / (A·T·D)`` with W the mass loss in g
(corrected for what cleaning removes), A the area in cm², T the exposure time in h and D
the density in g/cm³.  K sets the unit of CR.  G1 tabulates K to three significant
figures; trialkit computes K from its definition (a 365-day year of 8760 h, 1 mil =
0.0254 mm exactly) so that conversions between units are exact, and keeps the tabulated
value beside it (:data:`K_CONSTANTS`).

Two cleaning corrections are offered, as described in ASTM G1 (and ISO 8407):

- :func:`blank_corrected_loss` — subtract the loss of a blank (uncorroded) specimen
  cleaned the same way;
- :func:`cycle_extrapolation` — weigh after each of several identical cleaning cycles and
  extrapolate the straight line through the cycles after the corrosion products are gone
  back to zero cycles.

Examples
--------
>>> round(corrosion_rate(0.65, 28.5, 168, 7.86, unit="mm/y"), 3)
1.513
>>> fit = cycle_extrapolation([0.41, 0.56, 0.612, 0.614, 0.616, 0.618])
>>> round(fit.intercept_g, 4), fit.first_cycle
(0.606, 3)
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from trialkit.exceptions import ResponseError

HOURS_PER_YEAR = 8760.0  # 365 d x 24 h, the year of ASTM G1's K constants
MM_PER_MIL = 0.0254  # exact: 1 mil = 0.001 in, 1 in = 25.4 mm (NIST SP 811)
MM_PER_INCH = 25.4


@dataclass(frozen=True)
class KConstant:
    """One K constant of ``CR = K·W/(A·T·D)``.

    Attributes
    ----------
    unit : str
        Canonical unit label of the corrosion rate.
    value : float
        K computed from its definition (multiplied by D for the mass-per-area units).
    times_density : bool
        True for rates in mass per area and time, where K = value·D and D cancels.
    tabulated : float
        The three-figure value tabulated in ASTM G1 (from memory except for mm/y).
    derivation : str
        How ``value`` follows from unit definitions.
    """

    unit: str
    value: float
    times_density: bool
    tabulated: float
    derivation: str


#: K constants by canonical unit. Source: ASTM G1, section "Calculation of corrosion rate";
#: mm/y read from secondary pages citing G1, the others from memory, each re-derived here.
K_CONSTANTS: dict[str, KConstant] = {
    k.unit: k
    for k in (
        KConstant("mm/y", 10.0 * HOURS_PER_YEAR, False, 8.76e4,
                  "10 mm/cm x 8760 h/y"),
        KConstant("um/y", 1.0e4 * HOURS_PER_YEAR, False, 8.76e7,
                  "1e4 um/cm x 8760 h/y"),
        KConstant("mils/y", 10.0 * HOURS_PER_YEAR / MM_PER_MIL, False, 3.45e6,
                  "K(mm/y) / 0.0254 mm per mil"),
        KConstant("in/y", 10.0 * HOURS_PER_YEAR / MM_PER_INCH, False, 3.45e3,
                  "K(mm/y) / 25.4 mm per in"),
        KConstant("in/month", 10.0 * HOURS_PER_YEAR / MM_PER_INCH / 12.0, False, 2.87e2,
                  "K(in/y) / 12 months"),
        KConstant("pm/s", 1.0e10 / 3600.0, False, 2.78e6,
                  "1e10 pm/cm / 3600 s/h"),
        KConstant("g/(m2*h)", 1.0e4, True, 1.00e4,
                  "1e4 cm2/m2, times D"),
        KConstant("g/(m2*d)", 1.0e4 * 24.0, True, 2.40e5,
                  "1e4 cm2/m2 x 24 h/d, times D (not tabulated in G1; derived)"),
        KConstant("mdd", 1.0e3 * 100.0 * 24.0, True, 2.40e6,
                  "1e3 mg/g x 100 cm2/dm2 x 24 h/d, times D"),
        KConstant("ug/(m2*s)", 1.0e6 * 1.0e4 / 3600.0, True, 2.78e6,
                  "1e6 ug/g x 1e4 cm2/m2 / 3600 s/h, times D"),
    )
}

#: Other spellings accepted for the canonical units.
UNIT_ALIASES: dict[str, str] = {
    "mm/a": "mm/y", "mm/yr": "mm/y", "mm/year": "mm/y", "mmpy": "mm/y",
    "µm/y": "um/y", "μm/y": "um/y", "um/a": "um/y", "um/yr": "um/y",
    "mpy": "mils/y", "mil/y": "mils/y", "mils/yr": "mils/y", "mil/yr": "mils/y",
    "ipy": "in/y", "in/yr": "in/y", "ipm": "in/month",
    "g/m2/h": "g/(m2*h)", "g/(m²·h)": "g/(m2*h)", "g/m²/h": "g/(m2*h)",
    "g/m2/d": "g/(m2*d)", "g/(m²·d)": "g/(m2*d)", "g/m²/d": "g/(m2*d)",
    "g/(m2·d)": "g/(m2*d)", "g/m2/day": "g/(m2*d)",
    "mg/dm2/d": "mdd", "ug/m2/s": "ug/(m2*s)", "µg/m2/s": "ug/(m2*s)",
}


def canonical_rate_unit(unit: str) -> str:
    """Canonical label of a corrosion-rate unit (raises :class:`ResponseError`)."""
    u = str(unit).strip()
    if u in K_CONSTANTS:
        return u
    if u in UNIT_ALIASES:
        return UNIT_ALIASES[u]
    low = u.lower().replace(" ", "")
    for label in (*K_CONSTANTS, *UNIT_ALIASES):
        if low == label.lower().replace(" ", ""):
            return UNIT_ALIASES.get(label, label)
    raise ResponseError(
        f"unknown corrosion-rate unit {unit!r}; allowed: "
        + ", ".join(repr(k) for k in K_CONSTANTS) + ". Pick one of these."
    )


def k_constant(unit: str, density_g_cm3: float | None = None) -> float:
    """K for ``unit``; mass-per-area units need the density (K = value·D)."""
    k = K_CONSTANTS[canonical_rate_unit(unit)]
    if not k.times_density:
        return k.value
    if density_g_cm3 is None:
        raise ResponseError(f"K for {k.unit} is {k.value:g}·D: give density_g_cm3.")
    return k.value * float(density_g_cm3)


def _positive(name: str, value, fix: str) -> np.ndarray:
    arr = np.asarray(value, dtype=float)
    bad = ~(arr > 0) & ~np.isnan(arr)
    if np.any(bad) or np.any(np.isinf(arr)):
        shown = arr[bad | np.isinf(arr)].ravel()[:3].tolist()
        raise ResponseError(f"{name} must be positive and finite; got {shown}. {fix}")
    return arr


def corrosion_rate(mass_loss_g, area_cm2, hours, density_g_cm3, *, unit: str = "mm/y"):
    """Uniform corrosion rate ``K·W/(A·T·D)`` of ASTM G1.

    Parameters
    ----------
    mass_loss_g : float or array
        Cleaning-corrected mass loss W, g (may be negative for a gain).
    area_cm2 : float or array
        Exposed area A, cm² (> 0).
    hours : float or array
        Exposure time T, h (> 0).
    density_g_cm3 : float or array
        Density D, g/cm³ (> 0).
    unit : str
        One of :data:`K_CONSTANTS` (or an alias such as ``"mpy"``).

    Returns
    -------
    float or numpy.ndarray
        Rate in ``unit``; NaN where an input is NaN.

    Examples
    --------
    >>> round(corrosion_rate(0.65, 28.5, 168, 7.86, unit="mpy"), 2)
    59.57
    """
    a = _positive("area_cm2", area_cm2, "Check the coupon dimensions or area.")
    t = _positive("exposure time (h)", hours, "Check that immersion end is after start.")
    d = _positive("density_g_cm3", density_g_cm3, "Check the coupon metal.")
    w = np.asarray(mass_loss_g, dtype=float)
    kc = K_CONSTANTS[canonical_rate_unit(unit)]
    if kc.times_density:  # K = c·D, so D cancels
        out = kc.value * w / (a * t)
    else:
        out = kc.value * w / (a * t * d)
    return float(out) if np.ndim(out) == 0 else out


def convert_rate(value, from_unit: str, to_unit: str, density_g_cm3: float | None = None):
    """Convert a corrosion rate between units of :data:`K_CONSTANTS`.

    Between a penetration rate (mm/y) and a mass rate (g/(m²·d)) the density is needed.

    Examples
    --------
    >>> round(convert_rate(1.0, "mils/y", "mm/y"), 10)
    0.0254
    """
    kf = K_CONSTANTS[canonical_rate_unit(from_unit)]
    kt = K_CONSTANTS[canonical_rate_unit(to_unit)]
    if kf.times_density != kt.times_density and density_g_cm3 is None:
        raise ResponseError(
            f"converting {kf.unit} to {kt.unit} needs the metal density; give density_g_cm3."
        )
    d = 1.0 if density_g_cm3 is None else float(density_g_cm3)
    ratio = (kt.value * (d if kt.times_density else 1.0)) / (
        kf.value * (d if kf.times_density else 1.0))
    out = np.asarray(value, dtype=float) * ratio
    return float(out) if np.ndim(out) == 0 else out


def blank_corrected_loss(mass_loss_g, blank_loss_g):
    """Mass loss minus the loss of a blank specimen cleaned the same way (ASTM G1).

    Examples
    --------
    >>> round(blank_corrected_loss(0.612, 0.006), 4)
    0.606
    """
    out = np.asarray(mass_loss_g, dtype=float) - np.asarray(blank_loss_g, dtype=float)
    return float(out) if np.ndim(out) == 0 else out


@dataclass(frozen=True)
class CycleFit:
    """Straight line through the cleaning cycles after the corrosion products are gone.

    Attributes
    ----------
    intercept_g : float
        The line at zero cycles: the corrected mass loss.
    slope_g_per_cycle : float
        Base metal removed per cleaning cycle.
    first_cycle : int
        First cycle on the line (the break point B of ASTM G1 Fig. 1).
    cycles_used : tuple of int
        Cycles the line was fitted to.
    max_residual_g : float
        Largest distance of a used point from the line.
    """

    intercept_g: float
    slope_g_per_cycle: float
    first_cycle: int
    cycles_used: tuple[int, ...]
    max_residual_g: float

    def to_dict(self) -> dict:
        return {
            "intercept_g": self.intercept_g,
            "slope_g_per_cycle": self.slope_g_per_cycle,
            "first_cycle": self.first_cycle,
            "cycles_used": list(self.cycles_used),
            "max_residual_g": self.max_residual_g,
        }


def cycle_extrapolation(
    cumulative_loss_g: Sequence[float],
    *,
    first_cycle: int | None = None,
    tolerance_g: float = 0.001,
) -> CycleFit:
    """Corrected mass loss from repeated cleaning cycles (ASTM G1, Fig. 1 line BC).

    Parameters
    ----------
    cumulative_loss_g : sequence of float
        Mass loss after cycle 1, 2, ... n (initial mass minus mass after the cycle), g.
    first_cycle : int, optional
        First cycle of the straight line BC.  If omitted, the line is grown back from
        the last two cycles while each earlier cycle lies within ``tolerance_g`` of the
        line through the later ones.
    tolerance_g : float
        Distance from the line still counted as "on the line"; default 1 mg, the
        weighing precision G1 asks of the mass loss.

    Returns
    -------
    CycleFit

    Raises
    ------
    ResponseError
        Fewer than two cycles, NaN among them, or ``first_cycle`` out of range.
    """
    y = np.asarray(cumulative_loss_g, dtype=float)
    n = y.size
    if n < 2 or np.any(~np.isfinite(y)):
        raise ResponseError(
            f"the cycle extrapolation needs the mass after at least 2 cleaning cycles, all "
            f"recorded; got {y.tolist()}. Record every cycle, or use a blank correction."
        )
    x = np.arange(1, n + 1, dtype=float)
    if first_cycle is None:
        start = n - 2  # index of the first used point; last two points to begin with
        while start > 0:
            slope, icpt = np.polyfit(x[start:], y[start:], 1)
            pred = icpt + slope * x[start - 1]
            if abs(y[start - 1] - pred) > tolerance_g:
                break
            start -= 1
    else:
        if not 1 <= int(first_cycle) <= n - 1:
            raise ResponseError(
                f"first_cycle must be between 1 and {n - 1} for {n} cycles; got {first_cycle}."
            )
        start = int(first_cycle) - 1
    slope, icpt = np.polyfit(x[start:], y[start:], 1)
    resid = y[start:] - (icpt + slope * x[start:])
    return CycleFit(
        intercept_g=float(icpt),
        slope_g_per_cycle=float(slope),
        first_cycle=start + 1,
        cycles_used=tuple(int(c) for c in x[start:]),
        max_residual_g=float(np.max(np.abs(resid))) if resid.size else math.nan,
    )
