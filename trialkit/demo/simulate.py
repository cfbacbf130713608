"""Invented readings for a plan, drawn from a documented truth model (demo data only).

:func:`simulate_readings` turns a :class:`~trialkit.planning.plan.Plan` and a
:class:`~trialkit.demo.truth_models.BathTruth` into the readings a bench would record, with
the exact field names of :mod:`trialkit.records.fields`: one row per coupon (plan columns plus
:data:`~trialkit.records.fields.COUPON_FIELDS`) and, when inspections are given, one row per
rusted coupon and inspection (:data:`~trialkit.records.fields.TIMECOURSE_FIELDS`).

The physics is self-consistent:

- every coupon loses base metal ``W = CR * A * T * D / K`` (ASTM G1 corrosion-rate
  relation ``CR = K W / (A T D)`` solved for W; K = 8.76e4 for mm/y with W in g, A in cm²,
  T in h, D in g/cm³; carbon steel D = 7.86 g/cm³, ASTM G1 Table X1.1, from memory);
- a rusted coupon also loses the rust the bath took off: ``(c0 - c(T)) / 100 *
  rust_g_per_m2 * A / 1e4`` with first-order decay ``c(t) = c0 exp(-k t)``;
- immersion times follow the blocks: block ``b`` starts on day ``b``, baths are set up in
  run order a few minutes apart.

The same plan, truth and seed give identical readings.  The data are invented.

Examples
--------
>>> from trialkit.trial.file import parse_trial_text
>>> from trialkit.planning.plan import make_plan
>>> from trialkit.demo.truth_models import BathTruth
>>> trial = parse_trial_text('''
... [trial]
... title = "Tiny sweep"
... seed = 3
... [[factor]]
... name = "chelator"
... unit = "% w/v"
... low = 2
... high = 8
... [design]
... kind = "sweep"
... count = 2
... [layout]
... witness_coupons = 1
... ''')
>>> sim = simulate_readings(make_plan(trial), BathTruth(), seed=1, inspections_h=[4, 8])
>>> sim.coupons.shape[0], sim.timecourse.shape[0]
(4, 4)
>>> bool((sim.coupons["mass_final_g"] < sim.coupons["mass_initial_g"]).all())
True
"""

from __future__ import annotations

import html
import math
from dataclasses import dataclass, field
from datetime import datetime, timedelta
from pathlib import Path

import numpy as np
import pandas as pd

from trialkit.demo.truth_models import ROLE_UNITS, BathTruth, SimulationError
from trialkit.planning.plan import Plan
from trialkit.records.fields import COUPON_FIELDS, TIMECOURSE_FIELDS, cleaning_cycle_fields

#: ASTM G1 corrosion-rate constant for mm/y (W in g, A in cm², T in h, D in g/cm³).
K_MM_PER_Y = 8.76e4
#: Densities (g/cm³), ASTM G1 Appendix X1 Table X1.1 (values from memory).
DENSITY_G_PER_CM3 = {"carbon steel": 7.86, "low-alloy steel": 7.85, "gray cast iron": 7.2}
#: Coupon geometry used when the trial has no [coupons] section (mm).
DEFAULT_PLATE = {"shape": "plate", "length_mm": 50.0, "width_mm": 25.0, "thickness_mm": 2.0,
                 "holes": (), "metal": "carbon steel"}
READINGS_FOLDER = "readings"
COUPONS_CSV = "coupons.csv"
TIMECOURSE_CSV = "timecourse.csv"
TIMECOURSE_COLUMNS = ("coupon", "bath", *[f.name for f in TIMECOURSE_FIELDS])
TIME_FORMAT = "%Y-%m-%dT%H:%M"


@dataclass
class SimulatedReadings:
    """Invented readings and the truth they were drawn from.

    Attributes
    ----------
    coupons : pandas.DataFrame
        One row per coupon: the plan's columns, then the coupon fields of
        :mod:`trialkit.records.fields` (``mass_cycle_<n>_g`` after ``mass_initial_g`` when the
        trial sets cleaning cycles).
    timecourse : pandas.DataFrame
        Columns ``coupon, bath, elapsed_h, coverage_pct, mass_g, operator, notes``; empty
        when there were no inspections.
    true_baths : pandas.DataFrame
        Per bath: ``bath, block, point, rate_per_h, corrosion_mm_per_y, time_to_90_h``,
        the true values including the bath's and block's random shifts.
    truth : dict
        Model parameters, seed, immersion time, inspections, block shifts.
    """

    coupons: pd.DataFrame
    timecourse: pd.DataFrame
    true_baths: pd.DataFrame
    truth: dict = field(default_factory=dict)

    def to_dict(self) -> dict:
        """Plain data: the three tables as lists of records plus ``truth``."""
        def records(df: pd.DataFrame) -> list[dict]:
            return [{k: (None if isinstance(v, float) and math.isnan(v) else v)
                     for k, v in row.items()} for row in df.to_dict("records")]
        return {"coupons": records(self.coupons), "timecourse": records(self.timecourse),
                "true_baths": records(self.true_baths), "truth": self.truth}

    def write(self, folder: str | Path) -> list[Path]:
        """Write ``coupons.csv`` (and ``timecourse.csv`` if any) into ``folder``."""
        folder = Path(folder)
        folder.mkdir(parents=True, exist_ok=True)
        paths = [folder / COUPONS_CSV]
        paths[0].write_text(self.coupons.to_csv(index=False, lineterminator="\n"),
                            encoding="utf-8", newline="")
        if len(self.timecourse):
            paths.append(folder / TIMECOURSE_CSV)
            paths[1].write_text(self.timecourse.to_csv(index=False, lineterminator="\n"),
                                encoding="utf-8", newline="")
        return paths

    def __repr__(self) -> str:
        return (f"<SimulatedReadings {self.truth.get('model', {}).get('name', '')!r}: "
                f"{len(self.coupons)} coupons, {len(self.timecourse)} inspections, "
                f"seed {self.truth.get('seed')} (invented data)>")

    def _repr_html_(self) -> str:
        return (f"<p><b>Invented readings</b> ({html.escape(repr(self))})</p>"
                + self.coupons.head(10).to_html(index=False, escape=True))


# -- geometry ---------------------------------------------------------------------------
def coupon_geometry(plan: Plan) -> dict:
    """Nominal coupon geometry (mm) and metal from the trial's ``[coupons]`` section."""
    spec = plan.trial.coupons
    if spec is None:
        return dict(DEFAULT_PLATE)
    if spec.shape in ("plate", "bar") and None in (spec.length_mm, spec.width_mm,
                                                     spec.thickness_mm):
        raise SimulationError(f"a {spec.shape} coupon needs length, width and thickness to "
                              "simulate masses; add them to [coupons]")
    if spec.shape in ("disc", "cylinder", "given"):
        raise SimulationError(f"the simulator models plate and bar coupons; got shape "
                              f"{spec.shape!r}. Use shape = 'plate' for invented data.")
    if spec.metal not in DENSITY_G_PER_CM3:
        raise SimulationError(f"no density for metal {spec.metal!r}; known: "
                              f"{', '.join(DENSITY_G_PER_CM3)}")
    return {"shape": spec.shape, "length_mm": spec.length_mm, "width_mm": spec.width_mm,
            "thickness_mm": spec.thickness_mm, "holes": tuple(spec.holes),
            "metal": spec.metal}


def plate_area_cm2(length_mm: float, width_mm: float, thickness_mm: float,
                   holes_mm: tuple[float, ...] = ()) -> float:
    """Total surface of a plate with through holes (cm²): faces, edges, hole bores.

    Examples
    --------
    >>> round(plate_area_cm2(50, 25, 2), 4)
    28.0
    """
    faces = 2.0 * length_mm * width_mm - sum(2.0 * math.pi * (d / 2.0) ** 2 for d in holes_mm)
    edges = 2.0 * (length_mm + width_mm) * thickness_mm
    bores = sum(math.pi * d * thickness_mm for d in holes_mm)
    return (faces + edges + bores) / 100.0


def plate_volume_cm3(length_mm: float, width_mm: float, thickness_mm: float,
                     holes_mm: tuple[float, ...] = ()) -> float:
    """Volume of a plate with through holes (cm³)."""
    holes = sum(math.pi * (d / 2.0) ** 2 for d in holes_mm)
    return (length_mm * width_mm - holes) * thickness_mm / 1000.0


def base_metal_loss_g(corrosion_mm_per_y: float, area_cm2: float, hours: float,
                      density_g_per_cm3: float) -> float:
    """Mass lost to uniform corrosion, W = CR A T D / K (ASTM G1, K = 8.76e4 for mm/y).

    Examples
    --------
    >>> round(base_metal_loss_g(1.513, 28.5, 168, 7.86), 4)  # ASTM G1 relation
    0.65
    """
    return corrosion_mm_per_y * area_cm2 * hours * density_g_per_cm3 / K_MM_PER_Y


def _round(x: float, step: float) -> float:
    if step <= 0:
        return float(x)
    digits = max(0, -int(math.floor(math.log10(step))))
    return round(round(x / step) * step, digits)


# -- simulation -------------------------------------------------------------------------
def _tank_shifts(plan: Plan, noise, rng) -> dict:
    """``whole_plot -> (ln k shift, temperature offset °C)`` of each tank run of a split-plot
    plan (empty for other plans, and no draws: their readings do not change)."""
    if "whole_plot" not in plan.baths:
        return {}
    tanks = sorted(set(plan.baths["whole_plot"].dropna().astype(int)))
    z = rng.normal(0.0, 1.0, (len(tanks), 2))
    return {t: (noise.whole_plot_log_rate_sd * a, noise.whole_plot_temperature_sd_c * b)
            for t, (a, b) in zip(tanks, z, strict=True)}


def simulate_readings(plan: Plan, truth: BathTruth, *, seed: int,
                      inspections_h=None, immersion_h: float | None = None,
                      start: str = "2026-11-02T09:00", minutes_between_baths: int = 5,
                      operators: tuple[str, ...] = ("AK", "MT"),
                      record_area: bool = True) -> SimulatedReadings:
    """Draw invented readings for every coupon of ``plan`` from ``truth``.

    Parameters
    ----------
    plan : Plan
    truth : BathTruth
        Its factor names must cover the plan's factors (see ``truth_models.ROLES``).
    seed : int
        Seed of :func:`numpy.random.default_rng`; separate streams (spawned from it) serve
        blocks, baths, coupons and inspections, so adding inspections leaves the coupon
        readings unchanged (and cleaning cycles leave the other readings unchanged).
    inspections_h : sequence of float, optional
        Inspection times (h) for the time-course table (rusted coupons only).
    immersion_h : float, optional
        Hours in the bath (default: the last inspection, else 24 h).
    start : str
        ISO 8601 date and time block 1 starts; block ``b`` starts ``b - 1`` days later.
    minutes_between_baths : int
        Set-up interval between baths of one block, in run order.
    operators : tuple of str
        Initials; block ``b`` is recorded by ``operators[(b - 1) % len(operators)]``.
    record_area : bool
        Write ``area_cm2`` (from the recorded dimensions, to 0.01 cm²); if False leave it
        empty so the responses compute it from the coupon geometry.

    Returns
    -------
    SimulatedReadings
    """
    if isinstance(seed, bool) or not isinstance(seed, (int, np.integer)) or seed < 0:
        raise SimulationError(f"seed must be a whole number >= 0 (the readings must be "
                              f"reproducible); got {seed!r}")
    inspections = sorted(float(t) for t in (inspections_h or ()))
    if any(t <= 0 for t in inspections):
        raise SimulationError(f"inspection times must be above 0 h; got {inspections}")
    hours = float(immersion_h) if immersion_h is not None else (
        inspections[-1] if inspections else 24.0)
    if hours <= 0 or (inspections and inspections[-1] > hours):
        raise SimulationError(f"immersion_h must be above 0 and not before the last "
                              f"inspection; got {hours} h with inspections {inspections}")
    minutes = round(hours * 60)
    if abs(minutes - hours * 60) > 1e-9:
        raise SimulationError(f"immersion_h must be a whole number of minutes; got {hours}")
    noise = truth.noise
    geo = coupon_geometry(plan)
    density = DENSITY_G_PER_CM3[geo["metal"]]
    cycles = plan.trial.coupons.cleaning_cycles if plan.trial.coupons else 0
    factor_names = plan.factor_names
    truth.conditions({n: np.nan for n in factor_names})  # refuses unknown factor names
    wrong = [f"{f.name} in {f.unit!r} (needs {ROLE_UNITS[f.name]!r})" for f in plan.trial.factors
             if f.is_continuous and f.unit not in ("", ROLE_UNITS.get(f.name, f.unit))]
    if wrong:
        raise SimulationError(f"the truth model reads factors in fixed units; got "
                              f"{', '.join(wrong)}. Give the factors those units.")

    # Six independent streams (the first five are those of earlier versions: spawn keys
    # are by index, so a trial without whole plots draws the same readings as before).
    streams = [np.random.default_rng(s) for s in np.random.SeedSequence(seed).spawn(6)]
    rng_block, rng_bath, rng_coupon, rng_inspect, rng_cycles, rng_tank = streams
    n_blocks = plan.n_blocks
    block_shift = rng_block.normal(0.0, 1.0, n_blocks) * noise.block_log_rate_sd
    tank_shift = _tank_shifts(plan, noise, rng_tank)
    t0 = datetime.fromisoformat(start)

    bath_rows: dict[str, dict] = {}
    position: dict[int, int] = {}
    for rec in plan.baths.to_dict("records"):
        z = rng_bath.normal(0.0, 1.0, 4)
        values = {n: rec[n] for n in factor_names}
        log_tank, tank_offset_c = tank_shift.get(rec.get("whole_plot"), (0.0, 0.0))
        if tank_offset_c and "temperature" in values:  # the tank runs off its set point
            values["temperature"] = float(values["temperature"]) + tank_offset_c
        if rec["point"] in ("control", "reference"):
            kind = "untreated" if rec["point"] == "control" else "reference"
            rate, corrosion = truth.control(kind)
            ph_target = truth.untreated_ph if kind == "untreated" else truth.reference_ph
            temp_target = float(truth.baseline["temperature"])
        else:
            x = truth.conditions(values)
            rate, corrosion = truth.rate_per_h(values), truth.corrosion_mm_per_y(values)
            ph_target, temp_target = float(x["ph"]), float(x["temperature"])
        blk = int(rec["block"])
        rate *= math.exp(block_shift[blk - 1] + log_tank + noise.bath_log_rate_sd * z[0])
        corrosion *= math.exp(noise.bath_log_corrosion_sd * z[1])
        pos = position.get(blk, 0)
        position[blk] = pos + 1
        begin = t0 + timedelta(days=blk - 1, minutes=pos * minutes_between_baths)
        bath_rows[rec["bath"]] = {
            "bath": rec["bath"], "block": blk, "point": rec["point"],
            "rate_per_h": rate, "corrosion_mm_per_y": corrosion,
            "time_to_90_h": math.log(10.0) / rate,
            "ph": _round(ph_target + noise.ph_meter_sd * z[2], 0.01 if noise.ph_meter_sd else 0),
            "temperature": _round(temp_target + noise.temperature_sd_c * z[3],
                                  0.1 if noise.temperature_sd_c else 0),
            "start": begin, "end": begin + timedelta(minutes=minutes),
            "operator": operators[(blk - 1) % len(operators)],
        }

    rows, course = [], []
    for rec in plan.table.to_dict("records"):
        b = bath_rows[rec["bath"]]
        z = rng_coupon.normal(0.0, 1.0, 9)
        dims = [_round(geo[k] + noise.dimension_sd_mm * z[i], noise.dimension_resolution_mm)
                for i, k in enumerate(("length_mm", "width_mm", "thickness_mm"))]
        area = _round(plate_area_cm2(*dims, geo["holes"]), noise.area_resolution_cm2)
        steel_g = plate_volume_cm3(*dims, geo["holes"]) * density
        rusted = rec["coupon_kind"] == "rusted"
        c0 = float(rng_coupon.uniform(70.0, 95.0)) if rusted else 0.0
        rate = b["rate_per_h"] * math.exp(noise.coupon_log_rate_sd * z[3])
        corrosion = b["corrosion_mm_per_y"] * math.exp(noise.coupon_log_corrosion_sd * z[4])
        rust_per_pct = (truth.rust_g_per_m2 * max(0.0, 1.0 + noise.rust_mass_sd_rel * z[5])
                        * area / 1e4 / 100.0)
        true_initial = steel_g + c0 * rust_per_pct

        def true_mass(t: float, c0=c0, rate=rate, corrosion=corrosion,
                      rust_per_pct=rust_per_pct, area=area, true_initial=true_initial):
            removed = c0 * (1.0 - math.exp(-rate * t)) * rust_per_pct
            return true_initial - removed - base_metal_loss_g(corrosion, area, t, density)

        def coverage_reading(t: float, zz: float, c0=c0, rate=rate) -> float:
            c = c0 * math.exp(-rate * t)
            c += noise.coverage_reading_sd_pct * math.sqrt(c * (100.0 - c)) / 50.0 * zz
            return _round(min(100.0, max(0.0, c)), noise.coverage_resolution_pct)

        def weigh(m: float, zz: float) -> float:
            return _round(m + noise.balance_sd_g * zz, noise.balance_resolution_g)

        end_mass = true_mass(hours)
        row = dict(rec)
        row.update(length_mm=dims[0], width_mm=dims[1], thickness_mm=dims[2],
                   area_cm2=area if record_area else np.nan,
                   mass_initial_g=weigh(true_initial, z[6]))
        if cycles:
            residue = truth.cleaning_residue_g_per_m2 * area / 1e4 if rusted else 0.0
            per_cycle = truth.cleaning_metal_loss_g_per_m2 * area / 1e4
            zc = rng_cycles.normal(0.0, 1.0, cycles)
            for i in range(1, cycles + 1):
                left = residue * (1.0 - truth.cleaning_removal_per_cycle) ** i
                row[f"mass_cycle_{i}_g"] = weigh(end_mass + left - i * per_cycle, zc[i - 1])
            row["mass_final_g"] = row[f"mass_cycle_{cycles}_g"]
        else:
            row["mass_final_g"] = weigh(end_mass, z[7])
        zz = rng_coupon.normal(0.0, 1.0, 2)
        row.update(coverage_before_pct=coverage_reading(0.0, zz[0]) if rusted else 0.0,
                   coverage_after_pct=coverage_reading(hours, zz[1]) if rusted else 0.0,
                   immersion_start=b["start"].strftime(TIME_FORMAT),
                   immersion_end=b["end"].strftime(TIME_FORMAT),
                   bath_ph=b["ph"], bath_temperature_c=b["temperature"],
                   operator=b["operator"], notes=_note(rec["point"]))
        rows.append(row)
        if rusted and inspections:
            zi = rng_inspect.normal(0.0, 1.0, (len(inspections), 2))
            for j, t in enumerate(inspections):
                at_end = t == hours
                course.append({
                    "coupon": rec["coupon"], "bath": rec["bath"], "elapsed_h": t,
                    "coverage_pct": row["coverage_after_pct"] if at_end
                    else coverage_reading(t, zi[j, 0]),
                    "mass_g": row["mass_final_g"] if at_end and not cycles
                    else weigh(true_mass(t), zi[j, 1]),
                    "operator": b["operator"], "notes": ""})

    cycle_names = [f.name for f in cleaning_cycle_fields(cycles)]
    fields = [f.name for f in COUPON_FIELDS]
    at = fields.index("mass_final_g")
    reading_cols = fields[:at] + cycle_names + fields[at:]
    coupons = pd.DataFrame(rows, columns=[*plan.table.columns, *reading_cols])
    timecourse = pd.DataFrame(course, columns=list(TIMECOURSE_COLUMNS))
    true_baths = pd.DataFrame(
        [{k: b[k] for k in ("bath", "block", "point", "rate_per_h", "corrosion_mm_per_y",
                            "time_to_90_h")} for b in bath_rows.values()])
    info = {"model": truth.to_dict(), "seed": int(seed), "immersion_h": hours,
            "inspections_h": inspections, "density_g_per_cm3": density,
            "block_log_rate_shift": [float(v) for v in block_shift],
            "plan_fingerprint": plan.fingerprint, "invented": True}
    if tank_shift:
        info["whole_plot_shifts"] = [{"whole_plot": int(t), "log_rate_shift": float(a),
                                      "temperature_offset_c": float(b)}
                                     for t, (a, b) in tank_shift.items()]
    return SimulatedReadings(coupons=coupons, timecourse=timecourse, true_baths=true_baths,
                             truth=info)


def _note(point: str) -> str:
    if point == "control":
        return "untreated control (water only)"
    if point == "reference":
        return "reference bath"
    return ""


def confirmation_plan(plan: Plan, recipe: dict, *, baths: int = 3) -> Plan:
    """A plan of ``baths`` confirmation baths at ``recipe``, on the day after the trial.

    Bath ids are ``C01``, ``C02`` ...; ``point`` is ``"confirmation"``; each bath has the
    trial's rusted and witness coupons.  Use it with :func:`simulate_readings` to invent
    confirmation readings.

    Examples
    --------
    >>> from trialkit.trial.file import parse_trial_text
    >>> from trialkit.planning.plan import make_plan
    >>> trial = parse_trial_text('''
    ... [trial]
    ... title = "t"
    ... seed = 1
    ... [[factor]]
    ... name = "chelator"
    ... low = 2
    ... high = 8
    ... [design]
    ... kind = "sweep"
    ... count = 2
    ... ''')
    >>> confirmation_plan(make_plan(trial), {"chelator": 5.0}).table["coupon"].tolist()
    ['C01-R1', 'C02-R1', 'C03-R1']
    """
    from dataclasses import replace

    names = plan.factor_names
    missing = [n for n in names if n not in recipe]
    extra = [n for n in recipe if n not in names]
    if missing or extra or baths < 1:
        raise SimulationError(f"a confirmation recipe gives every factor of the trial "
                              f"({', '.join(names)}) and baths >= 1; got {recipe} and "
                              f"baths = {baths}")
    layout = plan.trial.layout
    block = plan.n_blocks + 1
    bath_rows, coupon_rows = [], []
    for i in range(1, baths + 1):
        rec = {"run": i, "bath": f"C{i:02d}", "block": block, "point": "confirmation",
               **{n: recipe[n] for n in names}, "replicate": i, "std_order": i}
        bath_rows.append(rec)
        kinds = ([("rusted", f"R{j}") for j in range(1, layout.coupons_per_bath + 1)]
                 + [("witness", f"W{j}") for j in range(1, layout.witness_coupons + 1)])
        for kind, suffix in kinds:
            coupon_rows.append({**rec, "coupon": f"{rec['bath']}-{suffix}",
                                "coupon_kind": kind})
    table = pd.DataFrame(coupon_rows)[list(plan.table.columns)]
    bath_table = pd.DataFrame(bath_rows)[list(plan.baths.columns)]
    return replace(plan, table=table, baths=bath_table,
                   notes=[f"{baths} confirmation baths at {recipe}"])

