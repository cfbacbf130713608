"""Responses from coupon readings: corrected mass loss, base-metal attack, rust removed.

:func:`compute_responses` turns the current readings (one row per coupon: plan columns
plus the entry fields of :mod:`trialkit.records.fields`) into a :class:`Responses` object with
a coupon table and a bath table.  Coupons in one bath are subsamples of that bath, so
the bath table summarises each response by mean, SD and n; the analysis works on baths.

Per coupon (standard corrosion-testing practice, ASTM G1 / G31):

- area from the recorded area or from the dimensions (:mod:`trialkit.trial.geometry`);
- mass loss ``mass_initial_g - mass_final_g`` and per area;
- cleaning correction: repeated cleaning cycles extrapolated to zero cycles where two or
  more cycles are recorded, else a blank specimen's loss per area if given;
- witness (bare) coupons: base-metal loss per area and corrosion rate ``K·W/(A·T·D)``;
- rusted coupons: rust removed per area = corrected loss per area minus the base-metal
  loss the bath's witnesses show (scaled to the coupon's immersion time), removal % from
  coverage before and after, and the ASTM D610 grade of what is left.

Bad values do not stop the computation: each is listed in ``Responses.problems`` (a
:class:`~trialkit.problems.ProblemReport`), the value concerned becomes NaN and the rest
computes; pass ``strict=True`` to raise instead.  Kinetic responses (time to 50/90 %
removal) come from :mod:`trialkit.responses.kinetics` when time-course readings are given.
"""

from __future__ import annotations

import math
import os
import re
import warnings
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from trialkit.exceptions import ResponseError, TrialkitError, TrialkitWarning
from trialkit.problems import ProblemReport
from trialkit.responses import definitions as defs
from trialkit.responses.bath_kinetics import fit_baths
from trialkit.responses.corrosion import corrosion_rate, cycle_extrapolation
from trialkit.responses.kinetics import RemovalFit
from trialkit.responses.materials import metal as lookup_metal
from trialkit.responses.rust_grade import d610_grades
from trialkit.trial.geometry import coupon_area_cm2

RESPONSES = defs.RESPONSES
BATH_SUMMARY = defs.BATH_SUMMARY
KINETIC = defs.KINETIC

_CYCLE = re.compile(r"^mass_cycle_(\d+)_g$")


@dataclass
class Responses:
    """Derived responses of a trial, per coupon and per bath.

    Attributes
    ----------
    coupons : pandas.DataFrame
        One row per coupon: plan columns, then the coupon responses of :data:`RESPONSES`
        (``area_cm2``, ``exposure_h``, ``mass_loss_g``, ``mass_loss_g_per_m2``,
        ``corrected_mass_loss_g``, ``corrected_mass_loss_g_per_m2``,
        ``cleaning_correction``, ``base_metal_loss_g_per_m2``, ``corrosion_rate_mm_per_y``,
        ``rust_removed_g_per_m2``, ``removal_pct``, ``coverage_after_pct``,
        ``rust_grade``).
    baths : pandas.DataFrame
        One row per bath: plan columns, ``<response>_mean``, ``_sd``, ``_n`` for each of
        :data:`BATH_SUMMARY`, the kinetic columns when time-course readings were given.
    methods : dict
        Response name -> ``{"unit", "applies_to", "method"}``.
    problems : ProblemReport
        Bad or missing inputs; the values concerned are NaN.
    warnings : list of str
        Computed, but worth a look (mass gain, a cleaning line through two cycles only).
    """

    coupons: pd.DataFrame
    baths: pd.DataFrame
    methods: dict[str, dict]
    problems: ProblemReport
    warnings: list[str] = field(default_factory=list)
    metal: str = ""
    density_g_cm3: float = math.nan
    kinetics: dict[str, RemovalFit] = field(default_factory=dict)

    def measures(self) -> list[str]:
        """Names usable as ``[[response]] measure`` that have at least one bath value."""
        names = [m for m in (*BATH_SUMMARY, *KINETIC) if m in RESPONSES]
        return [m for m in names if self.bath_values(m).notna().any()]

    def bath_values(self, measure: str) -> pd.Series:
        """Per-bath value of a response (the bath mean; kinetic values as fitted).

        Examples
        --------
        >>> import pandas as pd
        >>> df = pd.DataFrame({"coupon": ["B01-R1", "B01-W1"], "bath": ["B01", "B01"],
        ...     "coupon_kind": ["rusted", "witness"], "area_cm2": [28.0, 28.0],
        ...     "mass_initial_g": [20.0, 20.0], "mass_final_g": [19.5, 19.99],
        ...     "coverage_before_pct": [40.0, None], "coverage_after_pct": [4.0, None]})
        >>> r = compute_responses(df)
        >>> r.bath_values("removal_pct").round(6).tolist()
        [90.0]
        >>> r.bath_values("rust_removed_g_per_m2").round(3).tolist()
        [175.0]
        """
        if measure not in RESPONSES:
            raise ResponseError(
                f"unknown response measure {measure!r}; allowed: "
                + ", ".join(repr(m) for m in (*BATH_SUMMARY, *KINETIC)) + ".")
        col = measure if measure in KINETIC else f"{measure}_mean"
        if col not in self.baths:
            return pd.Series(np.nan, index=self.baths["bath"], name=measure, dtype=float)
        return pd.Series(self.baths[col].to_numpy(dtype=float), index=self.baths["bath"],
                         name=measure)

    def time_ratio(self, bath: str, reference: str, *, level_pct: float = 90.0,
                   confidence: float = 0.95):
        """How many times as long ``bath`` takes as ``reference`` (see
        :func:`trialkit.responses.kinetics.time_ratio`); needs time-course readings of both."""
        from trialkit.responses.kinetics import time_ratio

        missing = [b for b in (bath, reference) if b not in self.kinetics]
        if missing:
            raise ResponseError(
                f"no fitted removal curve for {missing}; fitted baths: "
                f"{sorted(self.kinetics) or 'none'}. Record time-course readings first.")
        return time_ratio(self.kinetics[bath], self.kinetics[reference], level_pct=level_pct,
                          bath=bath, reference_name=reference, confidence=confidence)

    def to_dict(self) -> dict:
        """Plain data for JSON: ``coupons`` and ``baths`` lists, methods, problems."""
        return {
            "metal": self.metal,
            "density_g_cm3": self.density_g_cm3,
            "coupons": defs.records(self.coupons),
            "baths": defs.records(self.baths),
            "methods": self.methods,
            "problems": [p.__dict__ for p in self.problems],
            "warnings": list(self.warnings),
            "kinetics": {b: f.to_dict() for b, f in self.kinetics.items()},
        }

    def __repr__(self) -> str:
        def count(n: int, word: str) -> str:
            return f"{n} {word}{'' if n == 1 else 's'}"

        return (f"Responses({count(len(self.coupons), 'coupon')}, "
                f"{count(len(self.baths), 'bath')}, metal={self.metal!r}, "
                f"{count(len(self.problems), 'problem')}, "
                f"{count(len(self.warnings), 'note')})")

    def _repr_html_(self) -> str:
        cols = ["bath"] + [c for c in self.baths.columns if c.endswith("_mean")]
        parts = [f"<p><b>Responses</b>: {len(self.coupons)} coupons in {len(self.baths)} "
                 f"baths, metal {self.metal} ({self.density_g_cm3} g/cm³)</p>",
                 self.baths[cols].to_html(index=False, na_rep="", float_format="%.4g")]
        if self.problems:
            parts += ["<p><b>Problems</b></p>", self.problems._repr_html_()]
        return "\n".join(parts)


def _spec_get(spec: Any, key: str, default: Any = None) -> Any:
    if spec is None:
        return default
    if isinstance(spec, dict):
        return spec.get(key, default)
    return getattr(spec, key, default)


_num = defs._num


def compute_responses(
    readings: pd.DataFrame,
    *,
    coupon_spec: Any = None,
    metal: str | None = None,
    density_g_cm3: float | None = None,
    timecourse: pd.DataFrame | None = None,
    blank_loss_g_per_m2: float | None = None,
    kinetic_model: str = "auto",
    strict: bool = False,
) -> Responses:
    """Compute the coupon and bath responses from the current readings.

    Parameters
    ----------
    readings : pandas.DataFrame
        One row per coupon with at least ``coupon``, ``bath``, ``coupon_kind``
        (``"rusted"``/``"witness"``), other plan columns and the entry fields of
        :data:`trialkit.records.fields.COUPON_FIELDS` (NaN where not recorded).
    coupon_spec : CouponSpec or dict, optional
        The trial's ``[coupons]`` section: ``shape``, dimensions in mm, ``holes``,
        ``area_cm2``, ``metal``, ``cleaning_cycles``.  Recorded dimensions override it.
    metal : str, optional
        Coupon metal in :mod:`trialkit.responses.materials`; default the spec's, else carbon steel.
    density_g_cm3 : float, optional
        Use this density instead of the table's.
    timecourse : pandas.DataFrame, optional
        Long time-course readings (``coupon``, ``bath``, ``elapsed_h``, ``coverage_pct``).
    blank_loss_g_per_m2 : float, optional
        Loss per area of an unexposed blank cleaned the same way (ASTM G1), subtracted
        from coupons without recorded cleaning cycles.
    kinetic_model : str
        Passed to :func:`trialkit.responses.kinetics.fit_removal`.
    strict : bool
        Raise :class:`ResponseError` listing every problem instead of carrying on.

    Returns
    -------
    Responses
    """
    if not isinstance(readings, pd.DataFrame):
        raise ResponseError(f"readings must be a pandas DataFrame; got {type(readings)}.")
    missing = [c for c in ("coupon", "bath", "coupon_kind") if c not in readings]
    if missing:
        raise ResponseError(
            f"readings lack the plan column(s) {missing}; got {list(readings.columns)}. "
            "Pass the readings with the plan columns (coupon, bath, coupon_kind, ...).")
    report = ProblemReport("readings")
    notes: list[str] = []
    frame = readings.reset_index(drop=True).copy()
    frame["coupon"] = frame["coupon"].astype(str)
    frame["bath"] = frame["bath"].astype(str)

    metal_name = metal or _spec_get(coupon_spec, "metal") or "carbon steel"
    try:
        found = lookup_metal(metal_name)
        metal_name, density = found.name, found.density_g_cm3
    except TrialkitError as exc:
        if density_g_cm3 is None:
            report.add("coupons.metal", str(exc), value=metal_name, check="unknown_metal",
                       fix="name a metal of the table or pass density_g_cm3")
        density = math.nan
    if density_g_cm3 is not None:
        density = float(density_g_cm3)

    kind = frame["coupon_kind"].astype(str).str.strip().str.lower()
    for i in frame.index[~kind.isin(["rusted", "witness"])]:
        report.add(frame.at[i, "coupon"], "coupon_kind must be 'rusted' or 'witness'",
                   value=frame.at[i, "coupon_kind"], check="bad_coupon_kind",
                   column="coupon_kind", fix="correct the plan column")
    frame["coupon_kind"] = kind

    out = pd.DataFrame(index=frame.index)
    out["area_cm2"] = defs.coupon_areas(frame, coupon_spec, report, coupon_area_cm2)
    out["exposure_h"] = defs.exposure_hours(frame, report)

    initial = _num(frame, "mass_initial_g")
    cycle_cols = defs.cycle_columns(frame, _spec_get(coupon_spec, "cleaning_cycles"), _CYCLE)
    cycles = frame[cycle_cols].apply(pd.to_numeric, errors="coerce") if cycle_cols else None
    final = _num(frame, "mass_final_g")
    if cycles is not None:  # the last recorded cycle stands in for a missing final mass
        last = cycles.ffill(axis=1).iloc[:, -1]
        final = final.fillna(last)
    loss = initial - final
    bad = (final < 0) | (loss > initial)
    for i in frame.index[bad.fillna(False)]:
        report.add(frame.at[i, "coupon"], "mass loss larger than the coupon's mass",
                   value=f"{initial[i]} g -> {final[i]} g", check="mass_loss_exceeds_mass",
                   column="mass_final_g", fix="check the masses (g) for a typing error")
    loss[bad.fillna(False)] = np.nan
    for i in frame.index[(loss < 0).fillna(False)]:
        notes.append(f"{frame.at[i, 'coupon']}: mass gain of {-loss[i]:.4g} g (incomplete "
                     "cleaning or adherent deposit?)")
    area = out["area_cm2"]
    out["mass_loss_g"] = loss
    out["mass_loss_g_per_m2"] = loss / area * 1e4

    corrected, how = defs.cleaning_corrections(frame, initial, loss, cycles, area,
                                               blank_loss_g_per_m2, cycle_extrapolation,
                                               report, notes)
    out["corrected_mass_loss_g"] = corrected
    out["corrected_mass_loss_g_per_m2"] = corrected / area * 1e4
    out["cleaning_correction"] = how

    witness = frame["coupon_kind"] == "witness"
    rusted = frame["coupon_kind"] == "rusted"
    per_m2 = out["corrected_mass_loss_g_per_m2"]
    out["base_metal_loss_g_per_m2"] = np.where(witness, per_m2, np.nan)
    rate = pd.Series(np.nan, index=frame.index)
    ok = witness & corrected.notna() & area.notna() & out["exposure_h"].notna()
    if ok.any() and math.isfinite(density):
        rate[ok] = corrosion_rate(corrected[ok].to_numpy(), area[ok].to_numpy(),
                                  out["exposure_h"][ok].to_numpy(), density, unit="mm/y")
    out["corrosion_rate_mm_per_y"] = rate

    estimate = defs.witness_estimate(frame, out, witness, rusted, report)
    out.loc[rusted, "base_metal_loss_g_per_m2"] = estimate[rusted]
    out["rust_removed_g_per_m2"] = np.where(rusted, per_m2 - estimate, np.nan)

    before = defs.coverage(frame, "coverage_before_pct", report)
    after = defs.coverage(frame, "coverage_after_pct", report)
    removal = (before - after) / before * 100.0
    removal[~rusted | (before <= 0)] = np.nan
    for i in frame.index[rusted & (before == 0)]:
        notes.append(f"{frame.at[i, 'coupon']}: no rust before immersion, removal % undefined")
    out["removal_pct"] = removal
    out["coverage_after_pct"] = after
    out["rust_grade"] = d610_grades(after)

    plan_cols = [c for c in frame.columns if c not in defs.ENTRY_COLUMNS
                 and not _CYCLE.match(str(c))]
    coupons = pd.concat([frame[plan_cols], out], axis=1)
    baths = defs.bath_table(coupons, plan_cols)

    fits: dict[str, RemovalFit] = {}
    if timecourse is not None and len(timecourse):
        ktable, fits, failed = fit_baths(timecourse, model=kinetic_model)
        for bath, message in failed:
            report.add(bath, message, check="kinetics_not_fitted", fix="see message")
        if len(ktable):
            baths = baths.merge(ktable, on="bath", how="left")
        for bath, fit in fits.items():
            notes.extend(f"{bath}: {n}" for n in fit.notes)

    if strict:
        report.raise_if_any(ResponseError, "responses not computed:")
    if report:
        warnings.warn(TrialkitWarning(
            f"{len(report)} problem(s) in the readings; affected values are missing "
            "(see Responses.problems)"), stacklevel=2)
    return Responses(coupons=coupons, baths=baths, methods=defs.methods(density, metal_name),
                     problems=report, warnings=notes, metal=metal_name,
                     density_g_cm3=density, kinetics=fits)


def timecourse_from_log(long: pd.DataFrame, plan_table: pd.DataFrame) -> pd.DataFrame:
    """Turn the record log's long inspection values into the time-course table.

    ``long`` has columns coupon, inspection, field, value (as the record log gives
    them); the result has one row per coupon and inspection with ``coupon``, ``bath``
    (from the plan), ``inspection`` and the fields (``elapsed_h``, ``coverage_pct``,
    ``mass_g``...), numbers as floats.
    """
    cols = ["coupon", "bath", "inspection", "elapsed_h", "coverage_pct", "mass_g"]
    if long is None or len(long) == 0:
        return pd.DataFrame(columns=cols)
    wide = long.pivot_table(index=["coupon", "inspection"], columns="field", values="value",
                            aggfunc="last").reset_index()
    wide.columns.name = None
    for name in ("elapsed_h", "coverage_pct", "mass_g"):
        wide[name] = pd.to_numeric(wide[name], errors="coerce") if name in wide else np.nan
    bath = plan_table[["coupon", "bath"]].astype(str)
    wide["coupon"] = wide["coupon"].astype(str)
    wide = wide.merge(bath, on="coupon", how="left")
    return wide[cols + [c for c in wide.columns if c not in cols]]


def load_responses(folder: str | os.PathLike, *, metal: str | None = None,
                   strict: bool = False, kinetic_model: str = "auto") -> Responses:
    """Responses of a trial folder: its plan, and the current values of its record log
    (the coverages from the source the trial file names, ``[photos] coverage_from``).

    Raises
    ------
    ResponseError
        The folder has no record log yet, or one with no readings (nothing has been
        ingested).
    """
    from trialkit.planning.plan import load_plan
    from trialkit.records import log as store

    folder = Path(folder)
    trial_folder = folder if folder.is_dir() else folder.parent
    log_path = trial_folder / store.LOG_FILE
    plan = load_plan(folder)
    if not log_path.exists():
        raise ResponseError(
            f"no record log in {trial_folder} (looked for {log_path.name}); nothing has "
            "been recorded yet. Fill in a sheet and read it in with 'trialkit ingest'.")
    from trialkit.responses.coverage_source import (
        coverage_source,
        use_coverage,
        use_coverage_long,
    )

    log = store.RecordLog.for_folder(trial_folder)
    if log.count() == 0:
        raise ResponseError(
            f"the record log in {trial_folder} holds no readings yet; nothing has been "
            "recorded. Fill in a sheet and read it in with 'trialkit ingest'.")
    source = coverage_source(plan.trial)  # [photos] coverage_from: hand or photo
    readings = use_coverage(log.current_values(plan=plan), source)
    timecourse = timecourse_from_log(use_coverage_long(log.current_timecourse(), source),
                                     plan.table)
    return compute_responses(readings, coupon_spec=plan.trial.coupons, metal=metal,
                             timecourse=timecourse if len(timecourse) else None,
                             kinetic_model=kinetic_model, strict=strict)
