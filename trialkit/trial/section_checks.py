"""Checks of the trial file's own sections: ``[[factor]]``, ``[layout]`` and ``[[response]]``
(used by :mod:`trialkit.trial.file`; ``[coupons]`` is checked in
:mod:`trialkit.trial.coupon_checks`).

Each check adds a :class:`~trialkit.problems.Problem` for every fault it finds and returns
what it could read; nothing raises.
"""

from __future__ import annotations

import math
import re
import warnings
from typing import Any

from trialkit.exceptions import TrialkitWarning
from trialkit.problems import ProblemReport, did_you_mean
from trialkit.trial import limits
from trialkit.trial.factors import CATEGORICAL, CONTINUOUS, FACTOR_KINDS, Factor
from trialkit.trial.limits import at_most, short, text
from trialkit.trial.retired_names import retired_key_hint, retired_value_hint
from trialkit.trial.spec import DesignSpec, Layout, ResponseSpec
from trialkit.units import UnitError, check_unit

FACTOR_KEYS = ("name", "kind", "unit", "low", "high", "levels", "description")
LAYOUT_KEYS = ("replicates", "blocks", "block_label", "center_points", "controls",
               "coupons_per_bath", "witness_coupons")
RESPONSE_KEYS = ("name", "unit", "aim", "unacceptable", "satisfactory", "ideal", "shape",
                 "priority", "measure", "range", "margin", "scale", "description")
CONTROL_KINDS = ("untreated", "reference")
AIMS = ("higher", "lower", "on-target", "record-only")
NAME_PATTERN = re.compile(r"^[A-Za-z][A-Za-z0-9_]*$")
MAX_NAME = 40
#: Largest magnitude of a factor's low and high (natural units).
MAX_FACTOR_VALUE = 1e9


def unknown_keys(table: dict, allowed: tuple[str, ...], where: str, p: ProblemReport,
                  section: str = "") -> None:
    for key in table:
        if key not in allowed:
            hint = retired_key_hint(section, key)
            p.add(f"{where}.{short(key)}" if where else short(key),
                  f"retired key {key!r}" if hint else f"unknown key {short(key)!r}",
                  value=key, fix=hint or did_you_mean(short(key), list(allowed)),
                  check="retired_key" if hint else "unknown_key")


def whole_number(table: dict, key: str, where: str, p: ProblemReport, default: int,
                 minimum: int, maximum: int | None = None) -> int:
    value = table.get(key, default)
    if isinstance(value, bool) or not isinstance(value, int):
        p.add(f"{where}.{key}", f"{key} must be a whole number", value=short(value),
              fix=f"write e.g. {key} = {max(default, minimum)}", check="not_integer")
        return default
    if value < minimum:
        p.add(f"{where}.{key}", f"{key} must be at least {minimum}", value=value,
              fix=f"use {minimum} or more", check="too_small")
        return default
    if maximum is not None and not at_most(value, maximum, f"{where}.{key}", key, p):
        return default
    return value


def number(value: Any, where: str, p: ProblemReport, what: str) -> float | None:
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        p.add(where, f"{what} must be a number", value=short(value),
              fix="write a plain number without quotes or units (the unit has its own key)",
              check="not_number")
        return None
    if not math.isfinite(float(value)):
        p.add(where, f"{what} must be a finite number", value=value, check="not_finite",
              fix="write a plain number; nan and inf are not values a trial can use")
        return None
    return float(value)


def named_tables(raw: Any, section: str, allowed: tuple[str, ...], example: str,
                  p: ProblemReport):
    """Yield ``(table, name, where)`` for each well-formed ``[[section]]`` with a unique name."""
    seen: set[str] = set()
    for i, table in enumerate(raw, start=1):
        where = f"{section}[{i}]"
        if not isinstance(table, dict):
            p.add(where, f"each {section} must be a [[{section}]] table", check="not_table")
            continue
        unknown_keys(table, allowed, where, p, section)
        name = table.get("name")
        if not isinstance(name, str) or not NAME_PATTERN.match(name) or len(name) > MAX_NAME:
            p.add(f"{where}.name", f"a {section} name must start with a letter and use only "
                  f"letters, digits and _ (up to {MAX_NAME} characters)", value=short(name),
                  check="bad_name", fix=f'write e.g. name = "{example}"')
            continue
        where = f"{section}[{i}] ({name})"
        if name.lower() in seen:
            p.add(f"{where}.name", f"{section} name {name!r} is used twice", value=name,
                  check="duplicate_name", fix=f"give every {section} its own name")
        seen.add(name.lower())
        yield table, name, where


def check_factors(raw: Any, p: ProblemReport) -> list[Factor]:
    if not isinstance(raw, list) or not raw:
        p.add("factor", "the trial needs at least one [[factor]]", check="no_factors",
              fix='add [[factor]] with name, unit, low and high (or levels = ["a", "b"])')
        return []
    if not at_most(len(raw), limits.MAX_FACTORS, "factor", "the number of factors", p):
        return []
    factors: list[Factor] = []
    for table, name, where in named_tables(raw, "factor", FACTOR_KEYS, "chelator", p):
        f = _check_one_factor(table, name, where, p)
        if f is not None:
            factors.append(f)
    return factors


def _check_one_factor(table: dict, name: str, where: str, p: ProblemReport) -> Factor | None:
    kind = table.get("kind")
    levels = table.get("levels", [])
    if not isinstance(levels, list):
        p.add(f"{where}.levels", "levels must be a list", value=short(levels),
              check="bad_levels", fix='write levels = ["none", "added"] or [2, 4, 8]')
        return None
    if not at_most(len(levels), limits.MAX_LEVELS, f"{where}.levels", "the number of levels",
                   p):
        return None
    if kind is None:
        kind = CATEGORICAL if levels and all(isinstance(v, str) for v in levels) else CONTINUOUS
    if not isinstance(kind, str) or kind not in FACTOR_KINDS:
        p.add(f"{where}.kind", f"unknown factor kind {short(kind)!r}", value=short(kind),
              check="bad_kind", fix=did_you_mean(short(kind), list(FACTOR_KINDS)))
        return None
    unit = text(table, "unit", where, p)
    if unit:
        try:
            unit = check_unit(unit)
        except UnitError as exc:
            p.add(f"{where}.unit", str(exc), value=unit, check="unknown_unit",
                  fix="use a unit pint knows (g/L, degC, min, h) or '% w/v', '% w/w', 'pH'")
    description = text(table, "description", where, p)
    if kind == CONTINUOUS:
        ok = True
        for key in ("low", "high"):
            if key not in table:
                p.add(f"{where}.{key}", f"a continuous factor needs {key}", check="missing_key",
                      fix=f"add {key} = <number in {unit or 'its unit'}>")
                ok = False
        if not ok:
            return None
        low = number(table["low"], f"{where}.low", p, "low")
        high = number(table["high"], f"{where}.high", p, "high")
        if low is None or high is None:
            return None
        if low >= high:
            p.add(f"{where}.low", f"low must be below high for {name!r}",
                  value=f"low = {low:g}, high = {high:g}", check="low_not_below_high",
                  fix="swap low and high, or widen the range")
            return None
        if not _plausible_range(low, high, unit, where, p):
            return None
        nums: list[float] = []
        if levels:
            if not all(isinstance(v, (int, float)) and not isinstance(v, bool) for v in levels):
                p.add(f"{where}.levels", "levels of a continuous factor must be numbers",
                      value=levels, check="bad_levels",
                      fix='for text levels write kind = "categorical"')
                return None
            nums = [float(v) for v in levels]
            if len(set(nums)) != len(nums) or any(v < low or v > high for v in nums):
                p.add(f"{where}.levels", f"levels must be distinct and within {low:g}..{high:g}",
                      value=levels, check="bad_levels", fix="remove repeats; widen low/high")
                return None
        return Factor.continuous(name, low, high, unit=unit, levels=sorted(nums),
                                 description=description)
    for key in ("low", "high"):
        if key in table:
            p.add(f"{where}.{key}", f"a {kind} factor has levels, not {key}", check="bad_key",
                  fix="remove low/high or make the factor continuous")
    if not isinstance(levels, list) or len(levels) < 2:
        p.add(f"{where}.levels", f"a {kind} factor needs at least two levels", value=levels,
              check="too_few_levels", fix='write levels = ["none", "added"]')
        return None
    labels = [str(v) for v in levels]
    if not all(isinstance(v, (str, int, float)) and not isinstance(v, bool) for v in levels) \
            or any(not label.strip() or len(label) > 60 for label in labels):
        p.add(f"{where}.levels", "levels must be short texts (or numbers), each up to "
              "60 characters and not blank", value=short(levels), check="bad_levels",
              fix='write levels = ["none", "added"]')
        return None
    if len(set(labels)) != len(labels):
        p.add(f"{where}.levels", "levels must be distinct", value=levels,
              check="duplicate_level", fix="remove the repeated level")
        return None
    make = Factor.categorical if kind == CATEGORICAL else Factor.ordinal
    return make(name, labels, description=description)


def _plausible_range(low: float, high: float, unit: str, where: str,
                     p: ProblemReport) -> bool:
    """Refuse ranges no bath can have: huge magnitudes, a range too narrow to code, pH
    outside 0-14, a temperature below absolute zero."""
    if max(abs(low), abs(high)) > MAX_FACTOR_VALUE:
        p.add(f"{where}.high", f"low and high must lie within +-{MAX_FACTOR_VALUE:g}",
              value=f"low = {low:g}, high = {high:g}", check="out_of_range",
              fix="give the range in a unit that keeps the numbers moderate")
        return False
    if high - low < 1e-9 * max(1.0, abs(low), abs(high)):
        p.add(f"{where}.high", "low and high are too close to tell apart",
              value=f"low = {low:g}, high = {high:g}", check="out_of_range",
              fix="widen the range")
        return False
    if unit == "pH" and (low < 0 or high > 14):
        p.add(f"{where}.low", "a pH range must lie within 0-14",
              value=f"low = {low:g}, high = {high:g}", check="out_of_range",
              fix="give pH values between 0 and 14")
        return False
    if unit == "degC" and low < -273.15:
        p.add(f"{where}.low", "a temperature cannot be below absolute zero",
              value=f"low = {low:g} degC", check="out_of_range", fix="check the sign")
        return False
    return True


def check_layout(table: Any, p: ProblemReport) -> Layout:
    if not isinstance(table, dict):
        p.add("layout", "[layout] must be a table", check="not_table")
        return Layout()
    unknown_keys(table, LAYOUT_KEYS, "layout", p)
    controls = table.get("controls", [])
    if isinstance(controls, str):
        controls = [controls]
    good_controls: list[str] = []
    if not isinstance(controls, list):
        p.add("layout.controls", "controls must be a list", value=controls, check="bad_controls",
              fix='write controls = ["untreated", "reference"]')
    else:
        for c in controls:
            if c not in CONTROL_KINDS:
                p.add("layout.controls", f"unknown control {c!r}", value=c, check="bad_control",
                      fix=did_you_mean(str(c), list(CONTROL_KINDS)))
            elif c in good_controls:
                p.add("layout.controls", f"control {c!r} listed twice", value=c,
                      check="duplicate_control", fix="list each control once")
            else:
                good_controls.append(c)
    block_label = text(table, "block_label", "layout", p, "block")
    if not NAME_PATTERN.match(block_label.replace(" ", "_")) or len(block_label) > 40:
        p.add("layout.block_label", "block_label must be a short word (letters, digits, _ "
              "and spaces, up to 40 characters)", value=short(block_label),
              check="bad_block_label", fix='write e.g. block_label = "day"')
        block_label = "block"
    layout = Layout(
        replicates=whole_number(table, "replicates", "layout", p, 1, 1,
                                limits.MAX_REPLICATES),
        blocks=whole_number(table, "blocks", "layout", p, 1, 1, limits.MAX_BLOCKS),
        block_label=block_label,
        center_points=whole_number(table, "center_points", "layout", p, 0, 0,
                                   limits.MAX_CENTER_POINTS),
        controls=tuple(good_controls),
        coupons_per_bath=whole_number(table, "coupons_per_bath", "layout", p, 1, 0,
                                      limits.MAX_COUPONS_PER_BATH),
        witness_coupons=whole_number(table, "witness_coupons", "layout", p, 0, 0,
                                     limits.MAX_WITNESS_COUPONS),
    )
    if layout.coupons_per_bath + layout.witness_coupons == 0:
        p.add("layout.coupons_per_bath", "every bath needs at least one coupon", value=0,
              check="no_coupons", fix="set coupons_per_bath = 1 (or witness_coupons = 1)")
    elif layout.coupons_per_bath == 0 and table.get("coupons_per_bath") == 0:
        warnings.warn("layout.coupons_per_bath = 0: the baths hold witness coupons only, so "
                      "no rust removal can be measured (only attack on the steel)",
                      TrialkitWarning, stacklevel=2)
    return layout


def check_block_fit(design: DesignSpec, factors: list[Factor], layout: Layout,
                     p: ProblemReport) -> None:
    two_level = design.kind in ("full-factorial", "fractional-factorial", "plackett-burman")
    power_of_two = layout.blocks & (layout.blocks - 1) == 0
    if not (two_level and power_of_two):
        p.add("layout.blocks", f"{layout.blocks} blocks with {layout.replicates} replicate(s) "
              f"cannot be laid out for a {design.kind} design",
              value=f"blocks = {layout.blocks}, replicates = {layout.replicates}",
              check="blocks_do_not_fit",
              fix="make replicates a multiple of blocks (each block then holds whole "
                  "replicates), or use 2, 4 or 8 blocks with a two-level design")


def check_responses(raw: Any, p: ProblemReport) -> list[ResponseSpec]:
    if not isinstance(raw, list):
        p.add("response", "responses must be [[response]] tables", check="not_table")
        return []
    out: list[ResponseSpec] = []
    for table, name, where in named_tables(raw, "response", RESPONSE_KEYS, "removal", p):
        unit = text(table, "unit", where, p)
        if unit:
            try:
                unit = check_unit(unit)
            except UnitError as exc:
                p.add(f"{where}.unit", str(exc), value=unit, check="unknown_unit",
                      fix="use a unit pint knows, e.g. 'g/m**2', 'mm/yr', 'h', or '%'")
        aim = table.get("aim", "higher")
        if not isinstance(aim, str) or aim not in AIMS:
            p.add(f"{where}.aim", f"unknown aim {short(aim)!r}", value=short(aim),
                  check="bad_aim",
                  fix=(retired_value_hint("response.aim", aim)
                       or did_you_mean(str(aim), list(AIMS))))
            aim = "record-only"
        nums: dict[str, float | None] = {}
        for key in ("satisfactory", "ideal", "shape", "priority", "margin"):
            nums[key] = (number(table[key], f"{where}.{key}", p, key)
                         if key in table else None)
        if nums["margin"] is not None and not nums["margin"] > 0:
            p.add(f"{where}.margin", "margin must be a positive difference in the "
                  "response's unit", value=nums["margin"], check="not_positive",
                  fix="use e.g. margin = 5 (points of removal) or remove it")
            nums["margin"] = None
        unacceptable = _unacceptable(table, aim, where, p)
        if aim == "on-target" and nums["ideal"] is None:
            p.add(f"{where}.ideal", 'aim = "on-target" needs the ideal value',
                  check="missing_ideal", fix="add ideal = <value>")
        if aim == "on-target" and "satisfactory" in table:
            p.add(f"{where}.satisfactory", "an on-target aim is fully satisfied only at its "
                  "ideal", value=table["satisfactory"], check="satisfactory_on_target",
                  fix="remove satisfactory; give ideal and unacceptable = [below, above]")
        _check_aim_limits(aim, unacceptable, nums, where, p)
        for key, top in (("shape", 100.0), ("priority", 1000.0)):
            if nums[key] is not None and nums[key] <= 0:
                p.add(f"{where}.{key}", f"{key} must be positive", value=nums[key],
                      check="not_positive", fix=f"use e.g. {key} = 1")
                nums[key] = None
            elif nums[key] is not None and not 1e-3 <= nums[key] <= top:
                p.add(f"{where}.{key}", f"{key} must lie between 0.001 and {top:g}",
                      value=nums[key], check="out_of_range", fix=f"use e.g. {key} = 1")
                nums[key] = None
        measure = text(table, "measure", where, p, name)
        if not NAME_PATTERN.match(measure) or len(measure) > 60:
            p.add(f"{where}.measure", "measure must name a response measure (letters, digits "
                  "and _, such as removal_pct)", value=short(measure), check="bad_measure",
                  fix='write e.g. measure = "removal_pct"')
            measure = name
        scale = text(table, "scale", where, p, "raw")
        rng = _range(table, where, p)
        scale = _scale(scale, rng, measure, where, p)
        out.append(ResponseSpec(
            name=name, unit=unit, aim=aim, unacceptable=unacceptable,
            satisfactory=nums["satisfactory"], ideal=nums["ideal"],
            shape=nums["shape"] or 1.0, priority=nums["priority"] or 1.0,
            measure=measure, range=rng, margin=nums["margin"], scale=scale,
            description=text(table, "description", where, p)))
    return out


#: Scales a response may be modelled on (trialkit.analysis.response_scale).
SCALES = ("raw", "log", "logit")


def _scale(scale: str, rng: tuple | None, measure: str, where: str,
           p: ProblemReport) -> str:
    """The response's ``scale``, checked against its range (a problem, and raw, if not).

    The range is the response's own ``range`` or, failing that, the measure's (checked
    again when the model is fitted, where the measure's range is known)."""
    if scale not in SCALES:
        p.add(f"{where}.scale", f"unknown scale {short(scale)!r}", value=short(scale),
              check="bad_scale", fix=did_you_mean(str(scale), list(SCALES)) or
              'use scale = "raw", "log" (a positive quantity) or "logit" (a percentage)')
        return "raw"
    if rng is not None:
        lo, hi = rng
        if scale == "log" and lo is None:
            p.add(f"{where}.scale", "the log scale needs a lower bound of the range",
                  value=scale, check="scale_needs_range", fix='give range = [0, "none"]')
            return "raw"
        if scale == "logit" and (lo is None or hi is None):
            p.add(f"{where}.scale", "the logit scale needs both ends of the range",
                  value=scale, check="scale_needs_range", fix="give range = [0, 100]")
            return "raw"
    return scale


def _range(table: dict, where: str, p: ProblemReport) -> tuple | None:
    """The ``range`` a response's values can take: ``[low, high]``, either end ``"none"``
    for no bound (e.g. ``[0, "none"]`` for a positive quantity)."""
    if "range" not in table:
        return None
    value = table["range"]
    fix = 'write e.g. range = [0, 100], or [0, "none"] for a value with no upper bound'
    if not isinstance(value, list) or len(value) != 2:
        p.add(f"{where}.range", "range must be two values, [low, high]", value=short(value),
              check="bad_range", fix=fix)
        return None
    ends = []
    for v in value:
        if isinstance(v, str) and v.strip().lower() == "none":
            ends.append(None)
            continue
        x = number(v, f"{where}.range", p, "each end of range")
        if x is None:
            return None
        ends.append(x)
    if None not in ends and not ends[0] < ends[1]:
        p.add(f"{where}.range", "the low end of range must be below the high end",
              value=short(value), check="bad_range", fix=fix)
        return None
    return (ends[0], ends[1])


def _unacceptable(table: dict, aim: str, where: str,
                  p: ProblemReport) -> float | tuple[float, float] | None:
    """The ``unacceptable`` limit: one number, or [below, above] for an on-target aim."""
    if "unacceptable" not in table:
        return None
    value = table["unacceptable"]
    if aim == "on-target":
        if not isinstance(value, list) or len(value) != 2:
            p.add(f"{where}.unacceptable", "an on-target aim needs two unacceptable values, "
                  "one below and one above the ideal", value=value, check="bad_unacceptable",
                  fix="write unacceptable = [<below>, <above>]")
            return None
        pair = [number(v, f"{where}.unacceptable", p, "unacceptable") for v in value]
        return None if None in pair else (pair[0], pair[1])
    return number(value, f"{where}.unacceptable", p, "unacceptable")


def _check_aim_limits(aim: str, unacceptable, nums: dict, where: str,
                      p: ProblemReport) -> None:
    """The unacceptable value must lie on the far side of the satisfactory one."""
    good, ideal = nums["satisfactory"], nums["ideal"]
    if aim == "on-target" and isinstance(unacceptable, tuple) and ideal is not None:
        if not unacceptable[0] < ideal < unacceptable[1]:
            p.add(f"{where}.unacceptable", "the ideal must lie between the two unacceptable "
                  "values", value=f"unacceptable = {list(unacceptable)}, ideal = {ideal:g}",
                  check="ideal_outside_limits", fix="write unacceptable = [<below>, <above>]")
    if aim not in ("higher", "lower") or unacceptable is None or good is None:
        return
    if (aim == "higher" and not unacceptable < good) or (aim == "lower"
                                                         and not unacceptable > good):
        side = "below" if aim == "higher" else "above"
        p.add(f"{where}.unacceptable", f"for aim {aim!r} the unacceptable value must lie "
              f"{side} the satisfactory one",
              value=f"unacceptable = {unacceptable:g}, satisfactory = {good:g}",
              check="limits_reversed", fix="swap unacceptable and satisfactory")
