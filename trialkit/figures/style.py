"""The look of trialkit's figures: palette, style, labels, and the checks every figure
function makes of what it is given.

One consistent style: the Okabe & Ito (2008) colour-blind-safe palette, units on every
axis.
"""

from __future__ import annotations

from collections.abc import Sequence

import matplotlib
import matplotlib.pyplot as plt
from matplotlib.axes import Axes

from trialkit.exceptions import TrialkitError
from trialkit.numbers import readable_unit

#: Okabe & Ito (2008), "Color Universal Design": colours told apart with any colour vision.
PALETTE = ("#0072B2", "#E69F00", "#009E73", "#D55E00", "#CC79A7", "#56B4E9", "#F0E442",
           "#000000")
BLUE, ORANGE, GREEN, VERMILION, PURPLE, SKY, YELLOW, BLACK = PALETTE
MARKERS = ("o", "s", "^", "D", "v", "P", "X", "*")
#: Sequential colour map readable in grey and with colour-vision deficiency.
SEQUENTIAL = "cividis"
STYLE = {"axes.prop_cycle": matplotlib.cycler(color=PALETTE), "axes.grid": True,
         "grid.alpha": 0.3, "axes.spines.top": False, "axes.spines.right": False,
         "font.size": 10, "axes.titlesize": 11, "figure.dpi": 100, "savefig.dpi": 110,
         "svg.fonttype": "none"}


class PlotError(TrialkitError):
    """A figure was asked of an object it cannot draw."""


def pretty(unit: str | None) -> str:
    """A unit as a reader writes it (:func:`trialkit.numbers.readable_unit`)."""
    return readable_unit(unit)


def label(name: str, unit: str | None) -> str:
    """Axis label with its unit: ``"removal (%)"``; ``"(no unit)"`` when there is none."""
    unit = pretty(unit)
    return f"{name} ({unit})" if unit else f"{name} (no unit)"


def new_axes(ax: Axes | None, figsize=(6.0, 4.0)) -> Axes:
    if ax is not None:
        return ax
    with plt.rc_context(STYLE):
        fig = plt.figure(figsize=figsize)
        return fig.add_subplot(1, 1, 1)


def style_axes(ax: Axes) -> None:
    ax.grid(True, alpha=0.3)
    ax.spines["top"].set_visible(False)
    ax.spines["right"].set_visible(False)


def need(obj, attrs: Sequence[str], what: str):
    missing = [a for a in attrs if not hasattr(obj, a)]
    if missing:
        raise PlotError(f"{what} needs an object with {list(attrs)}; got "
                        f"{type(obj).__name__} lacking {missing}. Pass the analysis result "
                        "or its figure data from trialkit.figures.views.")


def fit_like(obj) -> bool:
    return hasattr(obj, "predict") and hasattr(obj, "spec")
