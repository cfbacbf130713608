"""Lay out a split-plot trial: baths grouped into whole plots (tank runs), two randomisations.

Within each block, every replicate of the design is cut into whole plots, one per setting
of the hard-to-change factors (:mod:`trialkit.planning.whole_plots`); the control baths of
a block form a whole plot of their own.  The order of the whole plots in a block is drawn
at random from the trial's seed, then the order of the baths within each whole plot.  The
whole plots are numbered 1, 2, ... in run order across the trial (the ``whole_plot``
column of ``plan.csv`` and of the recording sheets).

Examples
--------
>>> import numpy as np, pandas as pd
>>> runs = pd.DataFrame({"temperature": [-1, -1, 1, 1] * 2, "chelator": [-1, 1] * 4,
...                      "point": "factorial", "block": 1, "replicate": [1] * 4 + [2] * 4})
>>> out = order_whole_plots(runs, ["temperature"], np.random.default_rng(1), blocks=1)
>>> int(out.groupby("whole_plot")["temperature"].nunique().max())   # one setting a tank
1
>>> sorted(out["whole_plot"].unique().tolist())
[1, 2, 3, 4]
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import pandas as pd

WHOLE_PLOT_COLUMN = "whole_plot"


def whole_plot_keys(runs: pd.DataFrame, hard_to_change: Sequence[str]) -> pd.Series:
    """A label per row naming its whole plot before randomisation (block, replicate and
    the hard-to-change settings; controls share one whole plot per block)."""
    is_design = ~runs["point"].isin(["control", "reference"])
    parts = [runs["block"].astype(str)]
    parts.append(runs["replicate"].astype(str).where(is_design, "controls"))
    for name in hard_to_change:
        parts.append(runs[name].astype(str).where(is_design, ""))
    key = parts[0]
    for p in parts[1:]:
        key = key + "|" + p
    return key


def order_whole_plots(runs: pd.DataFrame, hard_to_change: Sequence[str],
                      rng: np.random.Generator, blocks: int) -> pd.DataFrame:
    """``runs`` (one row per bath, with ``block``, ``replicate``, ``point`` and the factor
    columns) in split-plot run order, with a ``whole_plot`` column.

    The whole plots of each block are put in random order, then the baths of each whole
    plot; ``rng`` is consumed block by block, whole plot by whole plot, so the same seed
    gives the same plan.
    """
    keys = whole_plot_keys(runs, hard_to_change)
    ordered: list[pd.DataFrame] = []
    numbers: list[int] = []
    number = 0
    for blk in range(1, blocks + 1):
        in_block = runs["block"] == blk
        plots = list(dict.fromkeys(keys[in_block]))  # first-seen (standard) order
        for i in rng.permutation(len(plots)):
            rows = runs[in_block & (keys == plots[i])]
            number += 1
            ordered.append(rows.iloc[rng.permutation(len(rows))])
            numbers += [number] * len(rows)
    out = pd.concat(ordered, ignore_index=True)
    out[WHOLE_PLOT_COLUMN] = numbers
    return out
