"""Figures out of matplotlib: PNG and SVG bytes, data URIs for a self-contained page, files,
and closing figures.

Figures are saved at their own size, laid out once by one ``tight_layout`` pass before
saving (a figure with a layout engine of its own keeps it), so labels, titles and legends
stay inside the picture. Neither ``bbox_inches="tight"`` nor a layout engine is used on
trialkit's figures: each makes matplotlib draw the figure a second time on every save.
"""

from __future__ import annotations

import base64
import io
from pathlib import Path

import matplotlib.pyplot as plt
from matplotlib.figure import Figure

from trialkit.figures.style import PlotError


def figure_of(obj) -> Figure:
    """The Figure of an Axes or Figure."""
    return obj if isinstance(obj, Figure) else obj.figure


def laid_out(obj) -> Figure:
    """The Figure of ``obj``, given one tight layout pass if it has no layout engine."""
    fig = figure_of(obj)
    if fig.get_layout_engine() is None:
        fig.tight_layout()
    return fig


def to_png(obj, dpi: int = 110) -> bytes:
    """PNG bytes of a figure (or of the figure holding an Axes)."""
    buf = io.BytesIO()
    laid_out(obj).savefig(buf, format="png", dpi=dpi)
    return buf.getvalue()


def to_svg(obj) -> str:
    """SVG text of a figure."""
    buf = io.StringIO()
    laid_out(obj).savefig(buf, format="svg")
    return buf.getvalue()


def png_data_uri(obj, dpi: int = 110) -> str:
    """``data:image/png;base64,...`` for embedding in a self-contained page."""
    return "data:image/png;base64," + base64.b64encode(to_png(obj, dpi)).decode("ascii")


def save(obj, path: str | Path) -> Path:
    """Save as SVG or PNG, chosen by the file's suffix."""
    path = Path(path)
    suffix = path.suffix.lower()
    if suffix not in (".svg", ".png"):
        raise PlotError(f"figures are saved as .svg or .png; got {path.name!r}. Use a file "
                        "name ending in .svg or .png.")
    laid_out(obj).savefig(path, format=suffix[1:])
    return path


def close(obj=None) -> None:
    """Close a figure (or all figures)."""
    if obj is None:
        plt.close("all")
    else:
        plt.close(figure_of(obj))
