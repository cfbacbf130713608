"""The optional ``[whole_plots]`` section: hard-to-change factors and the tanks they need.

In a workshop the temperature of a bath is set by the water bath or oven it stands in, so
every bath at one temperature goes into the same tank together.  Such a factor is *hard to
change*; a trial that names it is laid out as a **split plot**: the baths are grouped into
*whole plots* (one tank run holding one setting of the hard-to-change factors), the order
of the whole plots is randomised within each block, and the easy-to-change factors are
randomised between the baths of each whole plot
(:mod:`trialkit.planning.split_plot_layout`).  The analysis then tests the hard-to-change
factors against the tank-to-tank error (:mod:`trialkit.analysis.split_plot`).

Keys
----
``hard_to_change``
    The factor names (a list) whose setting is shared by a whole tank.
``tanks_per_block``
    How many tank runs one block (a day, a rust batch) holds.  Optional: when given it
    must equal the whole plots a block needs (the hard-to-change settings times the
    replicates in a block), so a plan that cannot be run is refused before it is made.
``blocks``
    ``"fixed"`` (default) or ``"random"``: whether the blocks are a sample of days or
    batches (random) or chosen ones.  Random blocks enter the REML fit as a variance
    component; the balanced two-stratum ANOVA is the same either way.
``variance_ratio``
    The whole-plot (tank-to-tank) variance over the subplot (bath-to-bath) variance, for
    power (``trialkit evaluate``).  Default 1: tanks differ from one another by as much
    again as baths in one tank do (`common practice` as a planning guess; measure it from
    a first trial when you can).

Examples
--------
>>> from trialkit.trial.file import parse_trial_text
>>> trial = parse_trial_text('''
... [trial]
... title = "Tank check"
... seed = 3
... [[factor]]
... name = "temperature"
... unit = "degC"
... low = 20
... high = 40
... [[factor]]
... name = "chelator"
... unit = "% w/v"
... low = 2
... high = 6
... [design]
... kind = "full-factorial"
... [layout]
... replicates = 2
... [whole_plots]
... hard_to_change = ["temperature"]
... ''')
>>> trial.sections["whole_plots"].hard_to_change
('temperature',)
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

from trialkit.problems import ProblemReport, did_you_mean

#: Keys of the ``[whole_plots]`` section.
WHOLE_PLOT_KEYS = ("hard_to_change", "tanks_per_block", "blocks", "variance_ratio")
#: Design kinds that can be laid out as split plots.
SPLIT_PLOT_KINDS = ("full-factorial", "fractional-factorial")
BLOCK_KINDS = ("fixed", "random")
DEFAULT_VARIANCE_RATIO = 1.0


@dataclass(frozen=True)
class WholePlotSettings:
    """The ``[whole_plots]`` section of a trial file, checked."""

    hard_to_change: tuple[str, ...]
    tanks_per_block: int | None = None
    random_blocks: bool = False
    variance_ratio: float = DEFAULT_VARIANCE_RATIO

    def to_dict(self) -> dict:
        return {"hard_to_change": list(self.hard_to_change),
                "tanks_per_block": self.tanks_per_block,
                "blocks": "random" if self.random_blocks else "fixed",
                "variance_ratio": self.variance_ratio}


def whole_plot_settings(trial) -> WholePlotSettings | None:
    """The trial's checked ``[whole_plots]`` section, or ``None`` (no split plot)."""
    settings = getattr(trial, "sections", {}).get("whole_plots")
    return settings if isinstance(settings, WholePlotSettings) else None


def whole_plot_count(trial, settings: WholePlotSettings) -> int:
    """Distinct settings of the hard-to-change factors in one replicate of the design."""
    count = 1
    for name in settings.hard_to_change:
        f = trial.factor(name)
        count *= f.n_levels
    if trial.design.kind == "fractional-factorial":
        from trialkit.planning.designs.split_plot_fraction import whole_plot_fraction_size

        count = whole_plot_fraction_size(trial, settings)
    return count


def parse_whole_plots_section(raw, trial, problems: ProblemReport,
                              where: str = "whole_plots") -> WholePlotSettings | None:
    """Check the ``[whole_plots]`` section (see the module docstring); problems are added
    to ``problems``, never raised."""
    if not isinstance(raw, Mapping):
        problems.add(where, "[whole_plots] must be a table", value=type(raw).__name__,
                     check="not_table", fix="write [whole_plots] with hard_to_change = [...]")
        return None
    for key in raw:
        if key not in WHOLE_PLOT_KEYS:
            problems.add(f"{where}.{key}", f"unknown key {key!r}", value=key,
                         check="unknown_key", fix=did_you_mean(str(key), list(WHOLE_PLOT_KEYS)))
    names = [f.name for f in trial.factors]
    htc = _hard_to_change(raw.get("hard_to_change"), names, where, problems)
    tanks = raw.get("tanks_per_block")
    if tanks is not None and (isinstance(tanks, bool) or not isinstance(tanks, int)
                              or tanks < 1):
        problems.add(f"{where}.tanks_per_block", "tanks_per_block must be a whole number of "
                     "tank runs, at least 1", value=tanks, check="not_integer",
                     fix="write e.g. tanks_per_block = 2")
        tanks = None
    blocks = raw.get("blocks", "fixed")
    if blocks not in BLOCK_KINDS:
        problems.add(f"{where}.blocks", 'blocks must be "fixed" or "random"', value=blocks,
                     check="bad_choice", fix='write blocks = "random" for days or rust '
                     "batches that stand for others like them")
        blocks = "fixed"
    ratio = raw.get("variance_ratio", DEFAULT_VARIANCE_RATIO)
    if isinstance(ratio, bool) or not isinstance(ratio, (int, float)) or not ratio >= 0 \
            or ratio > 1e6:
        problems.add(f"{where}.variance_ratio", "variance_ratio must be a number from 0 to "
                     "1e6 (tank-to-tank over bath-to-bath variance)", value=ratio,
                     check="out_of_range", fix="write e.g. variance_ratio = 1")
        ratio = DEFAULT_VARIANCE_RATIO
    if not htc:
        return None
    settings = WholePlotSettings(tuple(htc), tanks, blocks == "random", float(ratio))
    _check_against_trial(trial, settings, where, problems)
    return settings


def _hard_to_change(value, names, where, problems) -> list[str]:
    if isinstance(value, str):
        value = [value]
    if not isinstance(value, list) or not value or \
            not all(isinstance(v, str) for v in value):
        problems.add(f"{where}.hard_to_change", "hard_to_change must list the names of the "
                     "factors set per tank", value=value, check="missing_key",
                     fix='write e.g. hard_to_change = ["temperature"]')
        return []
    out = []
    for v in value:
        if v not in names:
            problems.add(f"{where}.hard_to_change", f"no factor is called {v!r}", value=v,
                         check="unknown_factor", fix=did_you_mean(v, names))
        elif v in out:
            problems.add(f"{where}.hard_to_change", f"{v!r} is listed twice", value=v,
                         check="duplicate_name", fix="list each factor once")
        else:
            out.append(v)
    if names and len(out) == len(names):
        problems.add(f"{where}.hard_to_change", "every factor is hard to change: there is "
                     "nothing to vary within a tank, so this is not a split plot",
                     value=value, check="nothing_easy",
                     fix="list only the factors set per tank; with every factor per tank, "
                         "drop [whole_plots] and treat each tank as a bath (replicate tanks)")
    return out if len(out) < len(names) else []


def _check_against_trial(trial, settings: WholePlotSettings, where: str,
                         problems: ProblemReport) -> None:
    kind = trial.design.kind
    layout = trial.layout
    if kind not in SPLIT_PLOT_KINDS:
        problems.add(f"{where}.hard_to_change", f"split-plot plans are built for "
                     f"{' and '.join(SPLIT_PLOT_KINDS)} designs, not {kind}", value=kind,
                     check="split_plot_kind",
                     fix="use kind = 'full-factorial' (or a fraction) for a trial with a "
                         "hard-to-change factor; optimal and response-surface designs with "
                         "a whole-plot structure are not built")
        return
    if layout.center_points:
        problems.add(f"{where}.hard_to_change", "center points are not laid out in a split "
                     "plot (each would need tanks of its own)", value=layout.center_points,
                     check="split_plot_center", fix="set center_points = 0, or give the "
                     "hard-to-change factor a middle level and replicate it")
    if layout.blocks > 1 and layout.replicates % layout.blocks:
        problems.add("layout.blocks", f"a split plot puts whole replicates in each block: "
                     f"{layout.replicates} replicates do not divide into {layout.blocks} "
                     "blocks", value=layout.blocks, check="split_plot_blocks",
                     fix="make replicates a multiple of blocks")
        return
    for name in settings.hard_to_change:
        f = trial.factor(name)
        if f.is_continuous and kind == "fractional-factorial" and f.levels:
            problems.add(f"{where}.hard_to_change", f"{name!r} has explicit levels; a "
                         "fraction takes two-level factors", value=name, check="levels",
                         fix="remove its levels")
    if kind == "fractional-factorial":
        from trialkit.planning.designs.split_plot_fraction import check_split_plot_fraction

        if not check_split_plot_fraction(trial, settings, where, problems):
            return
    per_block = layout.replicates // max(layout.blocks, 1)
    settings_count = whole_plot_count(trial, settings)
    controls = 1 if layout.controls else 0
    needed = settings_count * per_block + controls
    if settings.tanks_per_block is not None and settings.tanks_per_block != needed:
        label = layout.block_label
        problems.add(f"{where}.tanks_per_block", f"each {label} needs {needed} tank runs "
                     f"({settings_count} settings of {', '.join(settings.hard_to_change)} x "
                     f"{per_block} replicate(s) a {label}"
                     + (" + 1 for the control baths" if controls else "")
                     + f"), not {settings.tanks_per_block}",
                     value=settings.tanks_per_block, check="tanks_per_block",
                     fix=f"write tanks_per_block = {needed}, or change replicates and blocks "
                         f"so that a {label} holds what its tanks can take")
