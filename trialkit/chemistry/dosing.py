"""Acid or base dose that brings a bath to a target pH, by a bracketed search on PHREEQC.

The titration curve of a bath against an adjuster is pH as a function of the adjuster's
concentration (g of product per litre of bath).  The dose is the *smallest* one reaching
the target: the curve is scanned on a geometric grid (one PHREEQC call holding every grid
point), the first interval that crosses the target is bracketed and narrowed by
subdivision (each round one call), and the last bracket is interpolated linearly.  The
scan need not be monotonic (at high ionic strength the model curve can fold), which is
why the scan comes first.

Examples
--------
>>> from trialkit.chemistry.speciation import solve
>>> curve = titration_curve({"Na": 0.526, "Edta": 0.1315}, {"Citrate": 1 / 192.12},
...                         [0.0, 20.0])
>>> curve.ph[0] > 10 > curve.ph[1]
True
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from trialkit.chemistry.speciation import DEFAULT_DATABASE, solve
from trialkit.exceptions import ChemistryError

#: Grid points of the first scan and subdivisions per refinement round.
SCAN_POINTS = 25
SUBDIVISIONS = 8
ROUNDS = 3
#: Largest adjuster concentration tried, g of product per litre of bath.
MAX_DOSE_G_L = 700.0
#: A dose is "steep" when 90 % of it leaves the pH more than this far from the target.
STEEP_PH = 0.3


@dataclass(frozen=True)
class TitrationCurve:
    """pH of a bath against adjuster concentration (g of product per litre)."""

    dose_g_l: np.ndarray
    ph: np.ndarray
    ionic_strength: np.ndarray
    database: str

    def table(self):
        import pandas as pd

        return pd.DataFrame({"dose_g_per_l": self.dose_g_l, "ph": self.ph,
                             "ionic_strength": self.ionic_strength})

    def to_dict(self) -> dict:
        return {"database": self.database, "dose_g_per_l": self.dose_g_l.tolist(),
                "ph": self.ph.tolist(), "ionic_strength": self.ionic_strength.tolist()}


@dataclass(frozen=True)
class Dose:
    """The adjuster dose for one bath.

    Attributes
    ----------
    g_per_l : float
        Adjuster (as supplied) per litre of bath.
    predicted_ph : float
        Model pH at that dose.
    ionic_strength : float
        Ionic strength at that dose, mol/kg.
    ph_at_90 : float
        pH after 90 % of the dose (shows how steep the curve is near the target).
    steep : bool
        True when 90 % of the dose leaves the pH more than :data:`STEEP_PH` away.
    calls : int
        PHREEQC calls the search made.
    database : str
    """

    g_per_l: float
    predicted_ph: float
    ionic_strength: float
    ph_at_90: float
    steep: bool
    calls: int
    database: str
    ph_at_zero: float = float("nan")


def _mix(base: dict[str, float], per_g: dict[str, float], dose: float) -> dict[str, float]:
    out = dict(base)
    for sp, n in per_g.items():
        out[sp] = out.get(sp, 0.0) + n * dose
    return out


def titration_curve(base: dict[str, float], per_g: dict[str, float], doses,
                    temperature_c: float = 25.0, *, database: str = DEFAULT_DATABASE,
                    label: str = "the bath") -> TitrationCurve:
    """pH at each dose (g/L of adjuster) in one PHREEQC call.

    ``base`` is the bath without adjuster (mol/L of master species); ``per_g`` the moles
    of each master species one gram of adjuster adds to a litre.
    """
    doses = np.asarray(doses, dtype=float)
    res = solve([_mix(base, per_g, d) for d in doses], temperature_c, database=database,
                label=label)
    return TitrationCurve(doses, np.array([r.ph for r in res]),
                          np.array([r.ionic_strength for r in res]), database)


def max_dose(base: dict[str, float], per_g: dict[str, float]) -> float:
    """Largest adjuster concentration scanned, g/L: four times the bath's total moles of
    solutes (at least 0.5 mol/L) of adjuster, capped at :data:`MAX_DOSE_G_L`."""
    mol_per_g = sum(per_g.values())
    if mol_per_g <= 0:
        return 0.0
    moles = max(0.5, 4.0 * sum(base.values()))
    return min(MAX_DOSE_G_L, moles / mol_per_g)


def find_dose(base: dict[str, float], per_g: dict[str, float], target_ph: float,
              temperature_c: float = 25.0, *, database: str = DEFAULT_DATABASE,
              label: str = "the bath", adjuster: str = "the adjuster",
              near: float | None = None) -> Dose:
    """Smallest adjuster dose (g/L) giving ``target_ph``.

    The scan covers the first quarter of :func:`max_dose` and, only when that does not
    reach the target, the rest.  With ``near`` (a dose found by another model) the scan
    covers 0 to 2.5 times ``near`` first.  Raises :class:`ChemistryError` naming the
    reachable pH range when no dose up to :func:`max_dose` reaches the target.
    """
    top = max_dose(base, per_g)
    if top <= 0:
        raise ChemistryError(f"{adjuster} has no acid-base species in the model, so it "
                             f"cannot set the pH of {label}; choose an acid or a base")
    first = min(top, 2.5 * near) if near else top / 4.0
    stages = [np.concatenate([[0.0], np.geomspace(first * 1e-3, first, SCAN_POINTS - 1)])]
    if first < top:
        stages.append(np.geomspace(first, top, SCAN_POINTS // 2 + 1)[1:])
    calls = 0
    grid = np.empty(0)
    phs = np.empty(0)
    crossing = np.empty(0, dtype=int)
    for stage in stages:
        curve = titration_curve(base, per_g, stage, temperature_c, database=database,
                                label=label)
        calls += 1
        grid = np.concatenate([grid, stage])
        phs = np.concatenate([phs, curve.ph])
        if abs(phs[0] - target_ph) < 1e-6:
            return Dose(0.0, float(phs[0]), float(curve.ionic_strength[0]), float(phs[0]),
                        False, calls, database, float(phs[0]))
        diff = phs - target_ph
        crossing = np.nonzero(np.sign(diff[:-1]) != np.sign(diff[1:]))[0]
        if crossing.size:
            break
    if crossing.size == 0:
        lo, hi = float(np.min(phs)), float(np.max(phs))
        raise ChemistryError(
            f"pH {target_ph:g} cannot be reached in {label} with {adjuster}: doses from 0 "
            f"to {top:.4g} g/L give pH {lo:.2f} to {hi:.2f} ({database}). Choose a target "
            f"in that range, or {'an acid' if target_ph < phs[0] else 'a base'} as "
            "adjuster."
        )
    curve = TitrationCurve(grid, phs, np.zeros_like(grid), database)
    i = int(crossing[0])
    a, b = grid[i], grid[i + 1]
    pa, pb = curve.ph[i], curve.ph[i + 1]
    for _ in range(ROUNDS):
        pts = np.linspace(a, b, SUBDIVISIONS + 1)[1:-1]
        sub = titration_curve(base, per_g, pts, temperature_c, database=database, label=label)
        calls += 1
        xs = np.concatenate([[a], pts, [b]])
        ps = np.concatenate([[pa], sub.ph, [pb]])
        d = ps - target_ph
        j = int(np.nonzero(np.sign(d[:-1]) != np.sign(d[1:]))[0][0])
        a, b, pa, pb = xs[j], xs[j + 1], ps[j], ps[j + 1]
    dose = float(a + (target_ph - pa) * (b - a) / (pb - pa)) if pb != pa else float(a)
    check = titration_curve(base, per_g, [dose, 0.9 * dose], temperature_c,
                            database=database, label=label)
    calls += 1
    ph90 = float(check.ph[1])
    return Dose(dose, float(check.ph[0]), float(check.ionic_strength[0]), ph90,
                abs(ph90 - target_ph) > STEEP_PH, calls, database, float(phs[0]))


def local_dose(base: dict[str, float], per_g: dict[str, float], target_ph: float,
               near: float, temperature_c: float = 25.0, *,
               database: str = DEFAULT_DATABASE, label: str = "the bath",
               adjuster: str = "the adjuster") -> Dose:
    """Dose near ``near`` (found by another model) giving ``target_ph``: a cheap search
    for cross-checks.  Five points from 0.7 to 1.4 times ``near`` in one call; the
    crossing interval is narrowed once more; without a crossing it falls back to
    :func:`find_dose` started at ``near``."""
    xs = near * np.array([0.7, 0.85, 1.0, 1.15, 1.4])
    curve = titration_curve(base, per_g, xs, temperature_c, database=database, label=label)
    d = curve.ph - target_ph
    hit = np.nonzero(np.sign(d[:-1]) != np.sign(d[1:]))[0]
    if hit.size == 0:
        return find_dose(base, per_g, target_ph, temperature_c, database=database,
                         label=label, adjuster=adjuster, near=near)
    j = int(hit[0])
    a, b, pa, pb = xs[j], xs[j + 1], curve.ph[j], curve.ph[j + 1]
    pts = np.linspace(a, b, 5)[1:-1]
    sub = titration_curve(base, per_g, pts, temperature_c, database=database, label=label)
    xx = np.concatenate([[a], pts, [b]])
    pp = np.concatenate([[pa], sub.ph, [pb]])
    dd = pp - target_ph
    k = int(np.nonzero(np.sign(dd[:-1]) != np.sign(dd[1:]))[0][0])
    a, b, pa, pb = xx[k], xx[k + 1], pp[k], pp[k + 1]
    dose = float(a + (target_ph - pa) * (b - a) / (pb - pa)) if pb != pa else float(a)
    ph90 = float(np.interp(0.9 * dose, xs, curve.ph)) if xs[0] <= 0.9 * dose else float("nan")
    return Dose(dose, float(target_ph), float("nan"), ph90, abs(ph90 - target_ph) > STEEP_PH,
                2, database, float("nan"))
