"""Columns and pre-filled rows of the recording sheets of a plan.

Two layouts exist.  The *coupon sheet* (``"coupons"``) has one row per coupon: plan
columns (read-only) then the entry fields of the trial's :class:`SheetConfig`.  The
*inspection sheet* (``"inspections"``) exists when the trial plans time-course
inspections and has one row per coupon and planned inspection.

Every sheet, whatever its format, has two heading rows: the words-and-unit heading a
person reads (``"Mass before immersion (g)"``) and below it the machine names
(``mass_initial_g``) by which ingest finds the columns, so columns may be moved.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from typing import Any

import pandas as pd

from trialkit.records.config import SheetConfig, sheet_config
from trialkit.records.fields import Field

#: Format tag written into every sheet's metadata.
SHEET_FORMAT = "trialkit-sheet"
SHEET_VERSION = "1"
COUPON_LAYOUT = "coupons"
INSPECTION_LAYOUT = "inspections"
#: Tab names in XLSX workbooks (also used as the "sheet" of CSV problems).
TAB_NAMES = {COUPON_LAYOUT: "Coupon readings", INSPECTION_LAYOUT: "Inspections"}
INSTRUCTIONS_TAB = "How to fill in"
META_TAB = "trialkit-metadata"

_PLAN_HEADINGS = {
    "run": "Run (set-up order)",
    "bath": "Bath",
    "coupon": "Coupon id",
    "coupon_kind": "Coupon kind",
    "block": "Block",
    "whole_plot": "Tank run (whole plot)",
    "point": "Design point",
    "replicate": "Replicate",
    "inspection": "Inspection no.",
    "planned_h": "Planned time in bath (h)",
}
_INT_COLUMNS = ("run", "block", "whole_plot", "replicate", "inspection")


@dataclass(frozen=True)
class Column:
    """One column of a recording sheet.

    Attributes
    ----------
    name : str
        Machine name (second heading row).
    heading : str
        Words and unit (first heading row).
    role : str
        ``"plan"`` (read-only, checked against the plan) or ``"entry"``.
    kind : str
        ``"number"``, ``"integer"``, ``"text"``, ``"datetime"`` or ``"choice"``.
    field : Field or None
        The entry field, for entry columns.
    """

    name: str
    heading: str
    role: str
    kind: str
    field: Field | None = None


@dataclass(frozen=True)
class SheetLayout:
    """The columns of one sheet layout and the key columns that identify a row."""

    name: str
    columns: tuple[Column, ...]
    keys: tuple[str, ...]

    @property
    def tab(self) -> str:
        """Tab name in an XLSX workbook."""
        return TAB_NAMES[self.name]

    @property
    def plan_columns(self) -> tuple[Column, ...]:
        return tuple(c for c in self.columns if c.role == "plan")

    @property
    def entry_columns(self) -> tuple[Column, ...]:
        return tuple(c for c in self.columns if c.role == "entry")

    def column(self, name: str) -> Column:
        for c in self.columns:
            if c.name == name:
                return c
        raise KeyError(name)


def factor_names(plan: Any) -> list[str]:
    """Factor columns of ``plan.table`` (between ``point`` and ``replicate``)."""
    cols = list(plan.table.columns)
    start = cols.index("point") + 1
    stop = cols.index("replicate") if "replicate" in cols else len(cols)
    return cols[start:stop]


def _factor_column(plan: Any, name: str) -> Column:
    units = {f.name: f.unit for f in getattr(getattr(plan, "trial", None), "factors", ()) or ()}
    unit = units.get(name, "")
    heading = f"{name} ({unit})" if unit else name
    kind = "number" if pd.api.types.is_numeric_dtype(plan.table[name]) else "text"
    return Column(name, heading, "plan", kind)


def _plan_column(name: str) -> Column:
    kind = "integer" if name in _INT_COLUMNS else ("number" if name == "planned_h" else "text")
    return Column(name, _PLAN_HEADINGS[name], "plan", kind)


def _whole_plot(plan: Any) -> tuple[str, ...]:
    """``("whole_plot",)`` for a split-plot plan (baths grouped into tank runs)."""
    return ("whole_plot",) if "whole_plot" in plan.table.columns else ()


def _entry(field: Field) -> Column:
    return Column(field.name, field.heading, "entry", field.kind, field)


def coupon_layout(plan: Any, config: SheetConfig | None = None) -> SheetLayout:
    """Columns of the coupon sheet of ``plan``."""
    config = config or sheet_config(getattr(plan, "trial", None))
    cols = [_plan_column(n) for n in ("run", "bath", "coupon", "coupon_kind", "block",
                                      *_whole_plot(plan), "point")]
    cols += [_factor_column(plan, n) for n in factor_names(plan)]
    if "replicate" in plan.table.columns:
        cols.append(_plan_column("replicate"))
    cols += [_entry(f) for f in config.coupon_fields]
    return SheetLayout(COUPON_LAYOUT, tuple(cols), ("coupon",))


def inspection_layout(plan: Any, config: SheetConfig | None = None) -> SheetLayout:
    """Columns of the inspection (time-course) sheet of ``plan``."""
    config = config or sheet_config(getattr(plan, "trial", None))
    cols = [_plan_column(n) for n in ("run", "bath", "coupon", "block", "inspection",
                                      "planned_h")]
    cols += [_entry(f) for f in config.timecourse_fields]
    return SheetLayout(INSPECTION_LAYOUT, tuple(cols), ("coupon", "inspection"))


def layouts(plan: Any, config: SheetConfig | None = None) -> list[SheetLayout]:
    """The coupon layout, plus the inspection layout when inspections are planned."""
    config = config or sheet_config(getattr(plan, "trial", None))
    out = [coupon_layout(plan, config)]
    if config.has_timecourse:
        out.append(inspection_layout(plan, config))
    return out


def plan_rows(plan: Any, layout: SheetLayout,
              config: SheetConfig | None = None) -> pd.DataFrame:
    """Pre-filled plan columns of ``layout``, one row per sheet row, in bench order.

    Rows are sorted by run then coupon id, so the sheet follows the set-up order.
    """
    config = config or sheet_config(getattr(plan, "trial", None))
    table = plan.table.sort_values(["run", "coupon"], kind="stable").reset_index(drop=True)
    if layout.name == COUPON_LAYOUT:
        names = [c.name for c in layout.plan_columns]
        return table[names].copy()
    rows = []
    for rec in table.to_dict("records"):
        for i, hours in enumerate(config.inspections_h, start=1):
            rows.append({"run": rec["run"], "bath": rec["bath"], "coupon": rec["coupon"],
                         "block": rec["block"], "inspection": i, "planned_h": hours})
    return pd.DataFrame(rows, columns=[c.name for c in layout.plan_columns])


def sheet_metadata(plan: Any, layout: SheetLayout) -> dict[str, str]:
    """Metadata stamped on a sheet: format, version, layout, fingerprint, seed, title."""
    return {
        "format": SHEET_FORMAT,
        "version": SHEET_VERSION,
        "layout": layout.name,
        "fingerprint": str(plan.fingerprint),
        "seed": str(plan.seed),
        "title": str(plan.trial.title),
    }


def visible_stamp(meta: dict[str, str]) -> str:
    """The one-line stamp printed on every sheet."""
    return f"Seed {meta['seed']} · plan fingerprint {meta['fingerprint']} · {meta['layout']}"


_UNIT_AT_END = re.compile(r"\(([^()]*)\)\s*$")


def split_heading(heading: str) -> tuple[str, str | None]:
    """Split ``"Mass (g)"`` into ``("mass", "g")`` (lower-cased, spaces squeezed)."""
    text = " ".join(str(heading).split())
    m = _UNIT_AT_END.search(text)
    if not m:
        return text.lower(), None
    return text[: m.start()].strip().lower(), " ".join(m.group(1).split()).lower()


def cell_text(value: Any) -> str:
    """A plan value as it is compared and shown: integers without ``.0``."""
    if value is None or (isinstance(value, float) and pd.isna(value)):
        return ""
    if isinstance(value, float) and value.is_integer():
        return str(int(value))
    return str(value)
