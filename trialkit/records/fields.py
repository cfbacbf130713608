"""What is recorded at the bench: the entry fields of the recording sheets.

This module is the contract between the sheets (export and ingest), the record log and
the responses.  A *coupon reading* is one row per coupon (plan columns plus the fields of
:data:`COUPON_FIELDS`); a *time-course reading* is one row per coupon and inspection
(:data:`TIMECOURSE_FIELDS`).  Field names are snake_case with the unit as a suffix, so a
DataFrame of current values reads without a legend; the sheet headings add the unit in
words.

Examples
--------
>>> FIELDS_BY_NAME["mass_initial_g"].unit
'g'
>>> [f.name for f in COUPON_FIELDS][:3]
['length_mm', 'width_mm', 'thickness_mm']
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class Field:
    """One entry field of a recording sheet.

    Attributes
    ----------
    name : str
        Column name in DataFrames, the record log and the sheets' machine row.
    heading : str
        Column heading printed on the sheet (words and unit).
    unit : str
        Unit of the value (``""`` for text, ``"ISO 8601"`` for times).
    kind : str
        ``"number"``, ``"text"``, ``"datetime"`` or ``"choice"``.
    minimum, maximum : float or None
        Allowed range for numbers (inclusive).
    choices : tuple of str
        Allowed values for ``"choice"`` fields.
    description : str
        One line for the sheet's instructions tab.
    """

    name: str
    heading: str
    unit: str
    kind: str
    minimum: float | None = None
    maximum: float | None = None
    choices: tuple[str, ...] = ()
    description: str = ""


#: Fields recorded once per coupon. Mass fields ``mass_cycle_<n>_g`` are added per trial
#: (see :func:`cleaning_cycle_fields`).
COUPON_FIELDS: tuple[Field, ...] = (
    Field("length_mm", "Length (mm)", "mm", "number", 0.0, 2000.0,
          description="measured length, if it differs from the trial's coupon size"),
    Field("width_mm", "Width (mm)", "mm", "number", 0.0, 2000.0,
          description="measured width, if it differs from the trial's coupon size"),
    Field("thickness_mm", "Thickness (mm)", "mm", "number", 0.0, 500.0,
          description="measured thickness, if it differs from the trial's coupon size"),
    Field("area_cm2", "Exposed area (cm²)", "cm2", "number", 0.0, 1.0e5,
          description="exposed area; leave empty to compute it from the dimensions"),
    Field("mass_initial_g", "Mass before immersion (g)", "g", "number", 0.0, 1.0e5,
          description="mass of the coupon before it goes into the bath"),
    Field("mass_final_g", "Mass after cleaning (g)", "g", "number", 0.0, 1.0e5,
          description="mass after the bath, rinsing, cleaning and drying"),
    Field("coverage_before_pct", "Rust coverage before (% of area)", "%", "number", 0.0, 100.0,
          description="share of the surface covered by rust before immersion"),
    Field("coverage_after_pct", "Rust coverage after (% of area)", "%", "number", 0.0, 100.0,
          description="share of the surface still rusted after the bath"),
    Field("immersion_start", "Immersion start (date and time)", "ISO 8601", "datetime",
          description="when the coupon went in, e.g. 2026-12-01 09:30"),
    Field("immersion_end", "Immersion end (date and time)", "ISO 8601", "datetime",
          description="when the coupon came out"),
    Field("bath_ph", "Bath pH measured", "pH", "number", 0.0, 14.0,
          description="pH of the bath measured with a meter at the start"),
    Field("bath_temperature_c", "Bath temperature (°C)", "degC", "number", -10.0, 100.0,
          description="bath temperature during immersion"),
    Field("operator", "Operator", "", "text", description="initials of who recorded the row"),
    Field("notes", "Notes", "", "text", description="anything unusual"),
)

#: Fields recorded at each inspection of a time-course trial (one row per coupon and time).
TIMECOURSE_FIELDS: tuple[Field, ...] = (
    Field("elapsed_h", "Time in bath (h)", "h", "number", 0.0, 10000.0,
          description="hours since the coupon went in"),
    Field("coverage_pct", "Rust coverage (% of area)", "%", "number", 0.0, 100.0,
          description="share of the surface still rusted at this inspection"),
    Field("mass_g", "Mass (g)", "g", "number", 0.0, 1.0e5,
          description="mass at this inspection, if weighed (optional)"),
    Field("operator", "Operator", "", "text"),
    Field("notes", "Notes", "", "text"),
)


def cleaning_cycle_fields(cycles: int) -> tuple[Field, ...]:
    """Mass fields for ``cycles`` repeated cleaning cycles (ASTM G1 cleaning correction).

    Examples
    --------
    >>> [f.name for f in cleaning_cycle_fields(2)]
    ['mass_cycle_1_g', 'mass_cycle_2_g']
    """
    return tuple(
        Field(f"mass_cycle_{i}_g", f"Mass after cleaning cycle {i} (g)", "g", "number",
              0.0, 1.0e5, description=f"mass after the {i}. cleaning cycle")
        for i in range(1, cycles + 1)
    )


#: Coverages measured from photographs (``trialkit photos``), kept beside the hand
#: estimates: hand field -> photo field.  Not on the sheets; the trial file's
#: ``[photos] coverage_from`` says which of the two the responses use.
PHOTO_COVERAGE_FIELDS: dict[str, Field] = {
    "coverage_before_pct": Field("coverage_before_photo_pct",
                                 "Rust coverage before, from a photo (% of area)", "%",
                                 "number", 0.0, 100.0,
                                 description="rusted share measured from a photo before"),
    "coverage_after_pct": Field("coverage_after_photo_pct",
                                "Rust coverage after, from a photo (% of area)", "%",
                                "number", 0.0, 100.0,
                                description="rusted share measured from a photo after"),
    "coverage_pct": Field("coverage_photo_pct", "Rust coverage from a photo (% of area)",
                          "%", "number", 0.0, 100.0,
                          description="rusted share measured from a photo at an inspection"),
}

FIELDS_BY_NAME: dict[str, Field] = {f.name: f for f in COUPON_FIELDS}
TIMECOURSE_BY_NAME: dict[str, Field] = {f.name: f for f in TIMECOURSE_FIELDS}
