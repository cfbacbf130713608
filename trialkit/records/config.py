"""The trial file's ``[sheet]`` section: which fields a recording sheet asks for.

Example section (every key optional)::

    [sheet]
    fields = ["mass_initial_g", "mass_final_g", "coverage_before_pct",
              "coverage_after_pct", "immersion_start", "immersion_end",
              "bath_ph", "bath_temperature_c", "operator", "notes"]
    cleaning_cycles = 3            # adds mass_cycle_1_g .. mass_cycle_3_g
                                   # (default: cleaning_cycles of [coupons], else 0)
    inspections_h = [1, 4, 24]     # planned inspection times: adds an inspection sheet
    required = ["mass_initial_g"]  # must be filled in every row that has any reading
    paper = "A4"                   # or "Letter", for the printable bench sheet

    [sheet.ranges]                 # narrower plausible ranges than the defaults
    mass_initial_g = [1, 500]

    [sheet.ratings]                # extra choice fields (lists on the sheet)
    surface_finish = ["bright", "grey", "dark", "pitted"]

Examples
--------
>>> from trialkit.problems import ProblemReport
>>> problems = ProblemReport("trial.toml")
>>> cfg = parse_sheet_section({"cleaning_cycles": 2, "required": ["mass_initial_g"]},
...                           None, problems, "sheet")
>>> names = [f.name for f in cfg.coupon_fields]
>>> len(problems), names[names.index("mass_final_g") + 1:][:2]
(0, ['mass_cycle_1_g', 'mass_cycle_2_g'])
"""

from __future__ import annotations

import re
from dataclasses import dataclass, replace
from typing import Any

from trialkit.problems import ProblemReport, did_you_mean
from trialkit.records.fields import (
    COUPON_FIELDS,
    TIMECOURSE_FIELDS,
    Field,
    cleaning_cycle_fields,
)
from trialkit.trial.limits import MAX_INSPECTIONS
from trialkit.trial.section_checks import unknown_keys

PAPER_SIZES = ("A4", "Letter")
_KEYS = ("fields", "cleaning_cycles", "inspections_h", "timecourse_fields", "required",
         "ranges", "ratings", "paper")
_NAME = re.compile(r"^[a-z][a-z0-9_]*$")


@dataclass(frozen=True)
class SheetConfig:
    """What the recording sheets of one trial ask for.

    Attributes
    ----------
    coupon_fields : tuple of Field
        Entry fields of the coupon sheet, in column order (cleaning-cycle masses and
        rating fields included).
    timecourse_fields : tuple of Field
        Entry fields of the inspection sheet (used only when ``inspections_h`` is set).
    inspections_h : tuple of float
        Planned inspection times in hours; empty means no inspection sheet.
    required : tuple of str
        Fields that must be filled in every row that has any reading.
    paper : str
        ``"A4"`` or ``"Letter"`` for the printable bench sheet.
    """

    coupon_fields: tuple[Field, ...] = COUPON_FIELDS
    timecourse_fields: tuple[Field, ...] = TIMECOURSE_FIELDS
    inspections_h: tuple[float, ...] = ()
    required: tuple[str, ...] = ()
    paper: str = "A4"
    cleaning_cycles: int = 0

    @property
    def has_timecourse(self) -> bool:
        """True when the trial has planned inspections (an inspection sheet)."""
        return bool(self.inspections_h)

    def field(self, name: str) -> Field:
        """The coupon or time-course field called ``name``."""
        for f in (*self.coupon_fields, *self.timecourse_fields):
            if f.name == name:
                return f
        raise KeyError(name)

    def to_dict(self) -> dict:
        """Plain-data form for JSON."""
        return {
            "coupon_fields": [f.name for f in self.coupon_fields],
            "timecourse_fields": [f.name for f in self.timecourse_fields],
            "inspections_h": list(self.inspections_h),
            "required": list(self.required),
            "paper": self.paper,
            "cleaning_cycles": self.cleaning_cycles,
        }


def sheet_config(trial: Any) -> SheetConfig:
    """The :class:`SheetConfig` of ``trial`` (defaults when it has no ``[sheet]``)."""
    sections = getattr(trial, "sections", None) or {}
    cfg = sections.get("sheet")
    if isinstance(cfg, SheetConfig):
        return cfg
    if isinstance(cfg, dict):  # the parser was not registered: parse now, strictly
        from trialkit.exceptions import TrialFileError

        problems = ProblemReport(str(getattr(trial, "path", "trial file")))
        parsed = parse_sheet_section(cfg, trial, problems, "sheet")
        problems.raise_if_any(TrialFileError)
        return parsed
    if getattr(getattr(trial, "coupons", None), "cleaning_cycles", 0):
        return parse_sheet_section({}, trial, ProblemReport("trial file"), "sheet")
    return SheetConfig()


def _names(raw: Any, key: str, where: str, problems: ProblemReport) -> list[str] | None:
    if not isinstance(raw, list) or not all(isinstance(x, str) for x in raw):
        problems.add(f"{where}.{key}", f"{key} must be a list of field names",
                     value=raw, fix='write e.g. ["mass_initial_g", "mass_final_g"]',
                     check="wrong_type")
        return None
    return list(raw)


def parse_sheet_section(raw: Any, trial: Any, problems: ProblemReport,
                        where: str) -> SheetConfig:
    """Parse the ``[sheet]`` section; add problems to ``problems``, never raise.

    Parameters
    ----------
    raw : dict
        The section as read from TOML.
    trial : Trial or None
        The trial being loaded (not needed by this section).
    problems : ProblemReport
        Where problems go.
    where : str
        Key path of the section, for messages.
    """
    if not isinstance(raw, dict):
        problems.add(where, "[sheet] must be a table of keys", value=raw,
                     fix="write [sheet] followed by key = value lines", check="wrong_type")
        return SheetConfig()
    unknown_keys(raw, _KEYS, where, problems, "sheet")

    known = {f.name: f for f in COUPON_FIELDS}
    fields = list(COUPON_FIELDS)
    if "fields" in raw:
        names = _names(raw["fields"], "fields", where, problems)
        if names is not None:
            fields = []
            for name in names:
                if name not in known:
                    problems.add(f"{where}.fields", f"unknown entry field {name!r}", value=name,
                                 fix=did_you_mean(name, list(known)), check="unknown_field")
                elif known[name] not in fields:
                    fields.append(known[name])

    coupons = getattr(trial, "coupons", None)
    cycles = raw.get("cleaning_cycles", getattr(coupons, "cleaning_cycles", 0) or 0)
    if isinstance(cycles, bool) or not isinstance(cycles, int) or not 0 <= cycles <= 10:
        problems.add(f"{where}.cleaning_cycles", "cleaning_cycles must be a whole number 0-10",
                     value=cycles, fix="write e.g. cleaning_cycles = 3", check="out_of_range")
        cycles = 0
    cycle_fields = list(cleaning_cycle_fields(cycles))
    # cycle masses go right after the final mass (or at the end when it is not asked for)
    names_now = [f.name for f in fields]
    at = names_now.index("mass_final_g") + 1 if "mass_final_g" in names_now else len(fields)
    fields[at:at] = cycle_fields

    rating_fields: list[Field] = []
    ratings = raw.get("ratings", {})
    if not isinstance(ratings, dict):
        problems.add(f"{where}.ratings", "ratings must be a table name = [choices]",
                     value=ratings, fix='write [sheet.ratings] then finish = ["a", "b"]',
                     check="wrong_type")
        ratings = {}
    taken = {f.name for f in (*fields, *TIMECOURSE_FIELDS)} | {"coupon", "inspection"}
    for name, choices in ratings.items():
        ok_choices = (isinstance(choices, list) and len(choices) >= 2
                      and all(isinstance(c, str) and c.strip() and "," not in c
                              and '"' not in c for c in choices)
                      and len(set(choices)) == len(choices))
        if not _NAME.match(str(name)) or name in taken:
            problems.add(f"{where}.ratings.{name}", "rating names must be new snake_case names",
                         value=name, fix="use lower-case letters, digits and _; not a field name",
                         check="bad_name")
        elif not ok_choices:
            problems.add(f"{where}.ratings.{name}", "a rating needs at least two distinct choices",
                         value=choices,
                         fix='write e.g. ["bright", "dark"] (no commas or quotes in a choice)',
                         check="wrong_type")
        else:
            heading = name.replace("_", " ").capitalize() + " (rating)"
            rating_fields.append(Field(name, heading, "", "choice", choices=tuple(choices),
                                       description="one of: " + ", ".join(choices)))
    # ratings sit before operator/notes
    text_at = next((i for i, f in enumerate(fields) if f.kind == "text"), len(fields))
    fields[text_at:text_at] = rating_fields

    tc_known = {f.name: f for f in TIMECOURSE_FIELDS}
    tc_fields = list(TIMECOURSE_FIELDS)
    if "timecourse_fields" in raw:
        names = _names(raw["timecourse_fields"], "timecourse_fields", where, problems)
        if names is not None:
            tc_fields = []
            for name in names:
                if name not in tc_known:
                    problems.add(f"{where}.timecourse_fields",
                                 f"unknown inspection field {name!r}", value=name,
                                 fix=did_you_mean(name, list(tc_known)), check="unknown_field")
                elif tc_known[name] not in tc_fields:
                    tc_fields.append(tc_known[name])

    inspections: tuple[float, ...] = ()
    times = raw.get("inspections_h", [])
    if (not isinstance(times, list)
            or not all(isinstance(t, (int, float)) and not isinstance(t, bool) for t in times)
            or any(not 0 < t <= 100_000 for t in times) or sorted(set(times)) != list(times)):
        problems.add(f"{where}.inspections_h",
                     "inspections_h must be increasing positive hours (up to 100,000 h)",
                     value=times,
                     fix="write e.g. inspections_h = [1, 4, 24]", check="wrong_type")
    elif len(times) > MAX_INSPECTIONS:
        problems.add(f"{where}.inspections_h", f"at most {MAX_INSPECTIONS} inspections "
                     "(set well above any real trial)", value=len(times), check="over_limit",
                     fix=f"list {MAX_INSPECTIONS} or fewer inspection times")
    else:
        inspections = tuple(float(t) for t in times)

    ranges = raw.get("ranges", {})
    if not isinstance(ranges, dict):
        problems.add(f"{where}.ranges", "ranges must be a table name = [min, max]",
                     value=ranges, fix="write [sheet.ranges] then mass_initial_g = [1, 500]",
                     check="wrong_type")
        ranges = {}
    for name, pair in ranges.items():
        lists = [fields, tc_fields]
        found = [(li, i) for li, lst in enumerate(lists) for i, f in enumerate(lst)
                 if f.name == name]
        if not found:
            problems.add(f"{where}.ranges.{name}", f"no numeric entry field {name!r}", value=name,
                         fix=did_you_mean(name, [f.name for f in (*fields, *tc_fields)]),
                         check="unknown_field")
            continue
        if (not isinstance(pair, list) or len(pair) != 2
                or not all(isinstance(v, (int, float)) and not isinstance(v, bool) for v in pair)
                or pair[0] >= pair[1]):
            problems.add(f"{where}.ranges.{name}", "a range is [minimum, maximum], minimum first",
                         value=pair, fix="write e.g. [1, 500]", check="wrong_type")
            continue
        if any(lists[li][i].kind != "number" for li, i in found):
            problems.add(f"{where}.ranges.{name}", f"{name!r} is not a number field",
                         value=name, fix="give ranges only for number fields",
                         check="wrong_type")
            continue
        for li, i in found:
            lists[li][i] = replace(lists[li][i], minimum=float(pair[0]), maximum=float(pair[1]))

    all_names = [f.name for f in fields]
    required: list[str] = []
    if "required" in raw:
        names = _names(raw["required"], "required", where, problems)
        for name in names or []:
            if name not in all_names:
                problems.add(f"{where}.required", f"required field {name!r} is not on the sheet",
                             value=name, fix=did_you_mean(name, all_names), check="unknown_field")
            else:
                required.append(name)

    paper = raw.get("paper", "A4")
    if paper not in PAPER_SIZES:
        problems.add(f"{where}.paper", "paper must be 'A4' or 'Letter'", value=paper,
                     fix=did_you_mean(str(paper), PAPER_SIZES), check="unknown_choice")
        paper = "A4"
    return SheetConfig(tuple(fields), tuple(tc_fields), inspections, tuple(required),
                       paper, cycles)


__all__ = ["PAPER_SIZES", "SheetConfig", "parse_sheet_section", "sheet_config"]
