"""Acid or base dose that brings a bath to a target pH, by a bracketed search on PHREEQC.

The titration curve of a bath against an adjuster is pH as a function of the adjuster's
concentration (g of product per litre of bath).  The dose is the *smallest* one reaching
the target: the curve is scanned on a geometric grid (one PHREEQC call holding every grid
point), and the first interval that crosses the target is narrowed by the Illinois
variant of regula falsi (one PHREEQC solution per step, until the pH is within
:data:`PH_TOLERANCE` of the target).  The curve need not be monotonic (at high ionic
strength the model curve can fold), which is why the scan comes first.

Examples
--------
>>> curve = titration_curve({"Na": 0.526, "Edta": 0.1315}, {"Citrate": 1 / 192.12},
...                         [0.0, 20.0])
>>> bool(curve.ph[0] > 10 > curve.ph[1])
True
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from trialkit.chemistry.speciation import DEFAULT_DATABASE, solve
from trialkit.exceptions import ChemistryError

#: Grid points of the first scan.
SCAN_POINTS = 13
#: Root iterations at most, and the pH tolerance that ends them.
MAX_ITERATIONS = 40
PH_TOLERANCE = 0.002
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
    a, b = float(grid[i]), float(grid[i + 1])
    fa, fb = float(curve.ph[i]) - target_ph, float(curve.ph[i + 1]) - target_ph
    # Illinois (modified regula falsi) inside the bracket: one solution per call.
    dose, ph_dose, mu_dose, side = b, fb + target_ph, float("nan"), 0
    for _ in range(MAX_ITERATIONS):
        dose = (a * fb - b * fa) / (fb - fa) if fb != fa else 0.5 * (a + b)
        res = titration_curve(base, per_g, [dose], temperature_c, database=database,
                              label=label)
        calls += 1
        ph_dose, mu_dose = float(res.ph[0]), float(res.ionic_strength[0])
        f = ph_dose - target_ph
        if abs(f) < PH_TOLERANCE or (b - a) < 1e-9 * max(b, 1e-12):
            break
        if np.sign(f) == np.sign(fb):
            b, fb = dose, f
            if side == -1:
                fa /= 2
            side = -1
        else:
            a, fa = dose, f
            if side == 1:
                fb /= 2
            side = 1
    check = titration_curve(base, per_g, [0.9 * dose], temperature_c, database=database,
                            label=label)
    calls += 1
    ph90 = float(check.ph[0])
    return Dose(dose, ph_dose, mu_dose, ph90, abs(ph90 - target_ph) > STEEP_PH, calls,
                database, float(phs[0]))

def local_dose(base: dict[str, float], per_g: dict[str, float], target_ph: float,
               near: float, temperature_c: float = 25.0, *,
               database: str = DEFAULT_DATABASE, label: str = "the bath",
               adjuster: str = "the adjuster") -> Dose:
    """Dose near ``near`` (found by another model) giving ``target_ph``: a cheap search
    for cross-checks.

    One call evaluates 0.8, 1.0 and 1.25 times ``near``; a second narrows the crossing
    interval with two more points, and the last bracket is interpolated.  Without a
    crossing it falls back to :func:`find_dose` started at ``near``.  ``ph_at_zero`` of
    the result holds the pH *at* ``near`` (the other model's dose) in this database.
    """
    xs = near * np.array([0.8, 1.0, 1.25])
    curve = titration_curve(base, per_g, xs, temperature_c, database=database, label=label)
    ph_near = float(curve.ph[1])
    d = curve.ph - target_ph
    hit = np.nonzero(np.sign(d[:-1]) != np.sign(d[1:]))[0]
    if hit.size == 0:
        full = find_dose(base, per_g, target_ph, temperature_c, database=database,
                         label=label, adjuster=adjuster, near=near)
        return Dose(full.g_per_l, full.predicted_ph, full.ionic_strength, full.ph_at_90,
                    full.steep, full.calls + 1, database, ph_near)
    j = int(hit[0])
    a, b, pa, pb = xs[j], xs[j + 1], curve.ph[j], curve.ph[j + 1]
    pts = np.linspace(a, b, 4)[1:-1]
    sub = titration_curve(base, per_g, pts, temperature_c, database=database, label=label)
    xx = np.concatenate([[a], pts, [b]])
    pp = np.concatenate([[pa], sub.ph, [pb]])
    dd = pp - target_ph
    k = int(np.nonzero(np.sign(dd[:-1]) != np.sign(dd[1:]))[0][0])
    a, b, pa, pb = xx[k], xx[k + 1], pp[k], pp[k + 1]
    dose = float(a + (target_ph - pa) * (b - a) / (pb - pa)) if pb != pa else float(a)
    return Dose(dose, float(target_ph), float("nan"), float("nan"), False, 2, database,
                ph_near)
