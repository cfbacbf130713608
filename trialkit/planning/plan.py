"""The Plan: design points laid out as baths and coupons, in a seeded random order.

:func:`make_plan` takes a checked :class:`~trialkit.trial.file.Trial`, builds its design
and lays it out: replicates as separate baths, blocks (whole replicates per block, or a
two-level design split by confounding its highest-order interaction), center points and
controls in every block, rusted and witness coupons in every bath, and a random order of
set-up within each block drawn from the trial's seed.  The same trial file and seed give
the same plan, byte for byte; :attr:`Plan.fingerprint` is a short hash of its content that
the recording sheets carry.

Examples
--------
>>> from trialkit.trial.file import parse_trial_text
>>> trial = parse_trial_text('''
... [trial]
... title = "Two-factor check"
... seed = 11
... [[factor]]
... name = "chelator"
... unit = "% w/v"
... low = 2
... high = 10
... [[factor]]
... name = "surfactant"
... levels = ["none", "added"]
... [design]
... kind = "full-factorial"
... [layout]
... replicates = 2
... witness_coupons = 1
... ''')
>>> plan = make_plan(trial)
>>> plan.n_baths, plan.n_coupons
(8, 16)
>>> plan.table.columns[:6].tolist()
['run', 'bath', 'coupon', 'coupon_kind', 'block', 'point']
"""

from __future__ import annotations

import hashlib
import html
import json
import os
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from trialkit.exceptions import PlanError
from trialkit.planning.designs.base import Design
from trialkit.planning.split_plot_layout import WHOLE_PLOT_COLUMN, order_whole_plots
from trialkit.planning.whole_plots import whole_plot_settings
from trialkit.problems import ProblemReport
from trialkit.trial import limits
from trialkit.trial.file import Trial, load_trial
from trialkit.trial.textsafe import escape_text, needs_escape

PLAN_FILE = "plan.csv"
PLAN_META_FILE = "plan.json"
LEADING_COLUMNS = ("run", "bath", "coupon", "coupon_kind", "block", "point")
TRAILING_COLUMNS = ("replicate", "std_order")
TWO_LEVEL_KINDS = ("full-factorial", "fractional-factorial", "plackett-burman")

#: Units whose quantities cannot be negative (concentrations, shares).
NON_NEGATIVE_UNITS = ("% w/v", "% w/w", "% v/v", "%", "g/L", "mol/L", "g/l", "mol/l",
                      "rpm", "min", "h", "s")


@dataclass
class Plan:
    """A laid-out, randomised plan.

    Attributes
    ----------
    trial : Trial
        The checked trial file the plan was made from.
    design : Design
        The design points before layout.
    table : pandas.DataFrame
        One row per coupon, in run order (columns: ``run, bath, coupon, coupon_kind,
        block, point``, one column per factor in natural units, ``replicate, std_order``).
    baths : pandas.DataFrame
        One row per bath, in run order (the same columns without the coupon ones).
    coded : pandas.DataFrame
        One row per bath (index ``bath``), factors in coded units / level labels.
    notes : list of str
        Plain-language remarks on how the plan was laid out.
    confounded_with_blocks : list of str
        Effects confounded with blocks when a two-level design was split.
    """

    trial: Trial
    design: Design
    table: pd.DataFrame
    baths: pd.DataFrame
    coded: pd.DataFrame
    notes: list[str] = field(default_factory=list)
    confounded_with_blocks: list[str] = field(default_factory=list)

    # -- facts ------------------------------------------------------------------------
    @property
    def seed(self) -> int:
        return self.trial.seed

    @property
    def n_baths(self) -> int:
        return len(self.baths)

    @property
    def n_coupons(self) -> int:
        return len(self.table)

    @property
    def n_blocks(self) -> int:
        return int(self.baths["block"].max()) if len(self.baths) else 0

    @property
    def factor_names(self) -> list[str]:
        return [f.name for f in self.trial.factors]

    def csv_text(self) -> str:
        """``plan.csv`` exactly as :meth:`write` writes it.

        Text that a spreadsheet would read as a formula (a level such as ``"=1+1"``) is
        written with a leading apostrophe, as on the recording sheets
        (:mod:`trialkit.trial.textsafe`).
        """
        table = self.table
        text_columns = [c for c in table.columns
                        if table[c].dtype == object or pd.api.types.is_string_dtype(table[c])]
        if any(table[c].map(lambda v: isinstance(v, str) and needs_escape(v)).any()
               for c in text_columns):
            table = table.copy()
            for c in text_columns:
                table[c] = table[c].map(lambda v: escape_text(v) if isinstance(v, str) else v)
        return table.to_csv(index=False, lineterminator="\n")

    @property
    def fingerprint(self) -> str:
        """Short hash (12 hex digits) of the plan's content, seed and factor units."""
        h = hashlib.sha256()
        h.update(self.csv_text().encode("utf-8"))
        h.update(json.dumps({"seed": self.seed, "title": self.trial.title,
                             "units": {f.name: f.unit for f in self.trial.factors}},
                            sort_keys=True).encode("utf-8"))
        return h.hexdigest()[:12]

    # -- outputs ----------------------------------------------------------------------
    def to_dict(self) -> dict:
        """Plain-data summary (the JSON of ``trialkit plan --json``)."""
        d = self.design
        out = {
            "title": self.trial.title,
            "seed": self.seed,
            "fingerprint": self.fingerprint,
            "baths": self.n_baths,
            "coupons": self.n_coupons,
            "rusted_coupons": int((self.table["coupon_kind"] == "rusted").sum()),
            "witness_coupons": int((self.table["coupon_kind"] == "witness").sum()),
            "blocks": self.n_blocks,
            "design": d.to_dict(),
            "factors": [f.to_dict() for f in self.trial.factors],
            "layout": dict(self.trial.layout.__dict__, controls=list(self.trial.layout.controls)),
            "points": {str(k): int(v) for k, v in self.baths["point"].value_counts().items()},
            "confounded_with_blocks": list(self.confounded_with_blocks),
            "notes": list(self.notes),
        }
        settings = whole_plot_settings(self.trial)
        if settings is not None:
            out["whole_plots"] = {**settings.to_dict(),
                                  "count": int(self.baths[WHOLE_PLOT_COLUMN].nunique())}
        if d.kind == "fractional-factorial" or d.resolution is not None:
            out["resolution"] = d.resolution
            out["aliases"] = out["design"]["aliases"]
        return out

    def summary(self) -> str:
        """A few lines for the console."""
        d = self.to_dict()
        pts = ", ".join(f"{n} {k}" for k, n in d["points"].items())
        lines = [
            f"{self.trial.title}",
            f"  design      {self.design.kind}, {self.design.n_points} design points"
            + (f", resolution {_roman(self.design.resolution)}" if self.design.resolution else ""),
            f"  baths       {d['baths']} ({pts}) in {d['blocks']} {self.trial.layout.block_label}"
            f"{'s' if d['blocks'] != 1 else ''}",
            f"  coupons     {d['coupons']} ({d['rusted_coupons']} rusted, "
            f"{d['witness_coupons']} witness)",
            *([f"  tank runs   {d['whole_plots']['count']} whole plots, "
               f"{', '.join(d['whole_plots']['hard_to_change'])} set per tank"]
              if "whole_plots" in d else []),
            f"  seed        {self.seed}",
            f"  fingerprint {self.fingerprint}",
        ]
        lines += [f"  note        {n}" for n in self.notes + self.design.notes]
        return "\n".join(lines)

    def __repr__(self) -> str:
        return f"<Plan {self.trial.title!r}: {self.n_baths} baths, {self.n_coupons} coupons, " \
               f"fingerprint {self.fingerprint}>"

    def _repr_html_(self) -> str:
        head = "<br>".join(html.escape(line) for line in self.summary().splitlines())
        return f"<p><b>Plan</b><br>{head}</p>" + self.baths.to_html(index=False, escape=True)

    def write(self, folder: str | Path) -> Path:
        """Write ``plan.csv`` and ``plan.json`` into ``folder``; return the CSV path.

        Raises
        ------
        PlanError
            ``folder`` is a file, or ``plan.csv``/``plan.json`` there is a symbolic link
            or a folder (a link's target is never overwritten).
        """
        folder = Path(folder)
        if folder.exists() and not folder.is_dir():
            raise PlanError(f"{folder} is a file, not a folder: give --out a folder for "
                            f"{PLAN_FILE} and {PLAN_META_FILE}")
        folder.mkdir(parents=True, exist_ok=True)
        csv_path = folder / PLAN_FILE
        meta = json.dumps(self.to_dict(), indent=2, sort_keys=True, default=_json_default)
        for path, text in ((csv_path, self.csv_text()),
                           (folder / PLAN_META_FILE, meta + "\n")):
            write_output(path, text)
        return csv_path


def write_output(path: Path, text: str) -> None:
    """Write ``text`` to ``path``, refusing a symbolic link or a folder there.

    The text goes to a new file beside it that is then renamed over ``path``, so a link
    planted at ``path`` after the check is replaced, never followed.
    """
    if path.is_symlink():
        raise PlanError(f"{path} is a symbolic link; trialkit does not write through links "
                        "(that would overwrite the link's target). Remove the link.")
    if path.is_dir():
        raise PlanError(f"{path} is a folder; remove it or write the plan elsewhere (--out)")
    tmp = path.with_name(f".{path.name}.{os.getpid()}.tmp")
    tmp.write_text(text, encoding="utf-8", newline="")
    os.replace(tmp, path)


def load_plan(path: str | Path) -> Plan:
    """Load the trial file at ``path`` (file or trial folder) and lay out its plan."""
    return make_plan(load_trial(path))


# -- layout ------------------------------------------------------------------------------
def make_plan(trial: Trial) -> Plan:
    """Lay out the plan of a checked trial (see the module docstring)."""
    from trialkit.planning.designs import build_design, center_points, two_level_block_columns

    whole_plots = whole_plot_settings(trial)
    if whole_plots is not None and trial.design.kind == "fractional-factorial":
        from trialkit.planning.designs.split_plot_fraction import trial_split_plot_fraction

        design = trial_split_plot_fraction(trial, whole_plots)
    else:
        design = build_design(trial.factors, trial.design.kind, trial.design.options,
                              seed=trial.seed, folder=trial.folder)
    layout = trial.layout
    check_plan_size(trial, design.n_points)
    names = [f.name for f in trial.factors]
    notes: list[str] = []
    confounded: list[str] = []

    base = design.coded.reset_index(drop=True).copy()
    base["point"] = list(design.point)
    base["std_order"] = np.arange(1, len(base) + 1)
    r, b = layout.replicates, layout.blocks

    # Which block does each (replicate, design row) go to?
    if b == 1 or r % b == 0:
        per_block = r // b if b > 1 else r
        row_block = None
        if b > 1:
            notes.append(f"each {layout.block_label} holds {per_block} complete "
                         f"replicate{'s' if per_block != 1 else ''} of the design")
    elif design.kind in TWO_LEVEL_KINDS:
        row_block, confounded = two_level_block_columns(design, b)
        notes.append(f"the design is split into {b} {layout.block_label}s by confounding "
                     + ", ".join(confounded) + f" with {layout.block_label}s")
    else:  # the trial-file check refuses this; keep a clear message for library users
        raise PlanError(f"{b} blocks with {r} replicates cannot be laid out for a "
                        f"{design.kind} design; make replicates a multiple of blocks")

    pieces: list[pd.DataFrame] = []
    for rep in range(1, r + 1):
        chunk = base.copy()
        chunk["replicate"] = rep
        if row_block is None:
            chunk["block"] = 1 if b == 1 else (rep - 1) // (r // b) + 1
        else:
            chunk["block"] = np.asarray(row_block, dtype=int)
        pieces.append(chunk)
    runs = pd.concat(pieces, ignore_index=True)

    extra: list[pd.DataFrame] = []
    if layout.center_points:
        if design.has_center:
            for blk in range(1, b + 1):
                cp = center_points(design, layout.center_points).reset_index(drop=True)
                cp["point"] = "center"
                cp["std_order"] = len(base) + np.arange(1, len(cp) + 1)
                cp["replicate"] = 1
                cp["block"] = blk
                extra.append(cp)
        else:
            notes.append(f"center_points = {layout.center_points} ignored: a {design.kind} "
                         "design has no center")
    for blk in range(1, b + 1):
        for j, control in enumerate(layout.controls, start=1):
            row = {n: np.nan for n in names}
            row.update(point="control" if control == "untreated" else "reference",
                       std_order=len(base) + layout.center_points + j, replicate=1, block=blk)
            extra.append(pd.DataFrame([row]))
    if extra:
        runs = pd.concat([runs, *extra], ignore_index=True)

    # standard order: block, then std_order, then replicate -> stable bath ids
    runs = runs.sort_values(["block", "std_order", "replicate"], kind="stable")
    runs = runs.reset_index(drop=True)
    width = max(2, len(str(len(runs))))
    runs["bath"] = [f"B{i:0{width}d}" for i in range(1, len(runs) + 1)]

    _check_natural_ranges(trial, design, runs)

    # randomise the order of set-up within each block (a split plot: whole plots, then
    # the baths within each whole plot)
    rng = np.random.default_rng(trial.seed)
    lead = list(LEADING_COLUMNS)
    if whole_plots is not None:
        runs = order_whole_plots(runs, whole_plots.hard_to_change, rng, b)
        lead.insert(lead.index("block") + 1, WHOLE_PLOT_COLUMN)
        notes.append(split_plot_note(trial, whole_plots, runs))
    else:
        ordered: list[pd.DataFrame] = []
        for blk in range(1, b + 1):
            in_block = runs[runs["block"] == blk]
            ordered.append(in_block.iloc[rng.permutation(len(in_block))])
        runs = pd.concat(ordered, ignore_index=True)
    runs["run"] = np.arange(1, len(runs) + 1)

    coded = runs.set_index("bath")[names].copy()
    natural = runs[names].copy()
    for f in trial.factors:
        if f.is_continuous:
            values = f.to_natural(pd.to_numeric(natural[f.name]).to_numpy(dtype=float))
            natural[f.name] = [float(f"{v:.6g}") if np.isfinite(v) else np.nan for v in values]
        else:
            natural[f.name] = natural[f.name].astype(object)
    bath_lead = [c for c in lead if c not in ("coupon", "coupon_kind")]
    baths = pd.concat([runs[bath_lead], natural,
                       runs[list(TRAILING_COLUMNS)]], axis=1)
    baths = baths.astype({"run": int, "block": int, "replicate": int, "std_order": int})

    coupon_rows = []
    for rec in baths.to_dict("records"):
        kinds = ([("rusted", f"R{i}") for i in range(1, layout.coupons_per_bath + 1)]
                 + [("witness", f"W{i}") for i in range(1, layout.witness_coupons + 1)])
        for kind, suffix in kinds:
            coupon_rows.append({**rec, "coupon": f"{rec['bath']}-{suffix}", "coupon_kind": kind})
    table = pd.DataFrame(coupon_rows)
    table = table[[*lead, *names, *TRAILING_COLUMNS]].reset_index(drop=True)
    return Plan(trial=trial, design=design, table=table, baths=baths.reset_index(drop=True),
                coded=coded, notes=notes, confounded_with_blocks=list(confounded))


def split_plot_note(trial: Trial, settings, runs: pd.DataFrame) -> str:
    """The plan's note on its whole plots: how many tank runs, what each holds."""
    per_plot = runs.groupby(WHOLE_PLOT_COLUMN).size()
    sizes = sorted(set(per_plot.tolist()))
    label = trial.layout.block_label
    per_block = runs.groupby("block")[WHOLE_PLOT_COLUMN].nunique()
    return (f"split plot: {', '.join(settings.hard_to_change)} set per tank; "
            f"{len(per_plot)} tank runs (whole plots) of "
            f"{' or '.join(str(n) for n in sizes)} baths, {per_block.max()} a {label}; the "
            f"order of the tank runs in each {label} and of the baths in each tank run are "
            "both random")


def check_plan_size(trial: Trial, n_points: int) -> None:
    """Refuse a plan above the limits of :mod:`trialkit.trial.limits`, before laying it out.

    The counts are computed from the layout (nothing is allocated), so an oversized trial
    is refused at once.
    """
    layout = trial.layout
    baths = (n_points * layout.replicates
             + (layout.center_points + len(layout.controls)) * layout.blocks)
    coupons = baths * (layout.coupons_per_bath + layout.witness_coupons)
    problems = ProblemReport(str(trial.path or "<trial>"))
    said = (f"{n_points} design points x {layout.replicates} replicate(s) + "
            f"{layout.center_points + len(layout.controls)} center/control bath(s) x "
            f"{layout.blocks} block(s)")
    if n_points > limits.MAX_DESIGN_POINTS:
        problems.add("design", f"the design has {n_points:,} points; the limit is "
                     f"{limits.MAX_DESIGN_POINTS:,}", value=n_points, check="over_limit",
                     fix="choose a smaller design")
    if baths > limits.MAX_BATHS:
        problems.add("layout", f"the plan would have {baths:,} baths ({said}); the limit is "
                     f"{limits.MAX_BATHS:,}", value=baths, check="over_limit",
                     fix="use fewer replicates, center points or design points")
    if coupons > limits.MAX_COUPONS:
        problems.add("layout", f"the plan would have {coupons:,} coupons ({baths:,} baths x "
                     f"{layout.coupons_per_bath + layout.witness_coupons} coupons); the limit "
                     f"is {limits.MAX_COUPONS:,}", value=coupons, check="over_limit",
                     fix="use fewer coupons per bath or fewer baths")
    problems.raise_if_any(PlanError, "The plan is larger than trialkit lays out.")


def _check_natural_ranges(trial: Trial, design: Design, runs: pd.DataFrame) -> None:
    """Refuse plans whose axial points leave the physically possible range."""
    problems = ProblemReport(str(trial.path or "<trial>"))
    for f in trial.factors:
        if not f.is_continuous:
            continue
        values = f.to_natural(pd.to_numeric(runs[f.name]).dropna().to_numpy(dtype=float))
        if not len(values):
            continue
        lo, hi = float(values.min()), float(values.max())
        bad = ""
        if f.unit == "pH" and (lo < 0 or hi > 14):
            bad = f"pH from {lo:.3g} to {hi:.3g} lies outside 0-14"
        elif f.low >= 0 and lo < 0 and (f.unit in NON_NEGATIVE_UNITS or f.unit == ""):
            bad = f"the lowest {f.name} would be {lo:.3g} {f.unit}".rstrip()
        if bad:
            problems.add(f"factor ({f.name})", f"the {design.kind} design reaches values that "
                         f"cannot be mixed: {bad}", value=f"alpha = {design.alpha}",
                         check="point_out_of_range",
                         fix='use alpha = "face" or "inscribed" in [design], or narrow the range')
    problems.raise_if_any(PlanError, "The plan cannot be mixed as designed.")


def _roman(n: int | None) -> str:
    return {2: "II", 3: "III", 4: "IV", 5: "V", 6: "VI", 7: "VII", 8: "VIII"}.get(n, str(n))


def _json_default(obj):
    if isinstance(obj, np.generic):
        return obj.item()
    if isinstance(obj, Path):
        return str(obj)
    raise TypeError(type(obj).__name__)
