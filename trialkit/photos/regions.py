"""Regions that stand out from a photo's plain background (the coupon, a grey card).

The background colour is the median CIELAB colour of the photo's outer frame
(:data:`FRAME` of its shorter side); every pixel's difference from it is CIE 1976 ΔE*ab
(``skimage.color.deltaE_cie76``), smoothed by a Gaussian of 1 pixel; Otsu's threshold on
that difference (at least half :data:`MIN_CONTRAST`), a morphological opening with a disk
of 2 pixels and connected-component labelling (``skimage.measure.label``) give the regions
(:func:`foreground_labels`).

The coupon's outline (:func:`coupon_outline`) is not that threshold's contour: one cut for
the whole photo cannot suit a coupon whose bare steel differs from the paper by half as
much as its rust does (at a high rusted share Otsu's cut lands on the steel's own
difference and loses the steel at the plate's edge; a lower cut adds the blur's rim
around the rust).  The outline is placed by a random walker from markers (Grady 2006,
``skimage.segmentation.random_walker`` on the difference map): background markers are the
pixels well outside a rough mask cut half-way between the background's own difference and
Otsu's cut, coupon markers those well inside it (:data:`MARKER_MARGIN` pixels either way,
``skimage.morphology.erosion``), and each pixel between them goes to the side a random
walk from it most probably reaches first.  Walks cross a blurred edge where its colour
changes fastest, so the outline runs through the middle of each edge whatever the height
of the step there: bare steel and rust at the plate's edge are both kept, and no rim of
blur is added.  (A watershed on the gradient would do the same but must break a tie
between the two pixels either side of a sharp edge, which adds a one-pixel rim.)

Examples
--------
>>> import numpy as np
>>> from skimage.color import rgb2lab
>>> img = np.full((60, 80, 3), 0.9); img[10:50, 10:40] = 0.5; img[20:30, 55:70] = 0.6
>>> labels, diff = foreground_labels(rgb2lab(img))
>>> int(labels.max())  # the coupon and the small patch
2
>>> mask, _ = coupon_outline(rgb2lab(img))
>>> int(mask.sum()) == 40 * 30  # the larger region, to the pixel
True
"""

from __future__ import annotations

import numpy as np

#: Width of the photo's outer frame whose median colour is the background (share of side).
FRAME = 0.03
#: A region must differ from the background by at least this much (CIE76 ΔE, median).
MIN_CONTRAST = 8.0
#: Pixels between the rough mask's edge and the watershed's markers on either side: the
#: band in which the outline is placed (wider than a lens blur of a few pixels).
MARKER_MARGIN = 4
#: The random walker's beta (``skimage.segmentation.random_walker``, which divides it by
#: ten times the SD of the difference map): how hard a walk crosses a step of colour.
#: Our own setting: at 2 and at 8 the outlines of 30 invented scenes (photo_scenes, seeds
#: 40000-40029) missed or added at most 0.2 % of the plate's pixels; at the library's
#: default of 130 the weights across a coupon's edge underflow and whole rims go astray.
OUTLINE_BETA = 8.0


def _frame(shape: tuple) -> np.ndarray:
    """Boolean mask of the photo's outer frame (:data:`FRAME` of its shorter side)."""
    h, w = shape[:2]
    f = max(2, int(round(FRAME * min(h, w))))
    ring = np.ones((h, w), bool)
    ring[f:h - f, f:w - f] = False
    return ring


def background_colour(lab: np.ndarray) -> np.ndarray:
    """The background's CIELAB colour: the median of the photo's outer frame."""
    return np.median(lab[_frame(lab.shape)], axis=0)


def background_difference(lab: np.ndarray) -> np.ndarray:
    """ΔE*ab of every pixel from the background (the median of the outer frame), smoothed."""
    from skimage.color import deltaE_cie76
    from skimage.filters import gaussian

    background = background_colour(lab)
    return gaussian(deltaE_cie76(lab, background[None, None, :]), sigma=1.0,
                    preserve_range=True)


def _difference(lab: np.ndarray, exclude: tuple | None) -> np.ndarray:
    diff = background_difference(lab)
    if exclude is not None:
        x0, y0, x1, y1 = exclude
        diff[y0:y1, x0:x1] = 0.0
    return diff


def _otsu_cut(diff: np.ndarray) -> float:
    from skimage.filters import threshold_otsu

    return max(float(threshold_otsu(diff)), MIN_CONTRAST / 2)


def foreground_labels(lab: np.ndarray, exclude: tuple | None = None,
                      cut: float | None = None) -> tuple[np.ndarray, np.ndarray]:
    """Labelled regions that stand out from the background, and the difference map.

    ``exclude`` is a box ``(x0, y0, x1, y1)`` (measured pixels) left out (a card);
    ``cut`` a fixed ΔE threshold instead of Otsu's (which, with a faint card and a strong
    coupon in the frame, may put the card with the background).
    """
    from skimage.measure import label
    from skimage.morphology import disk, opening

    diff = _difference(lab, exclude)
    if float(np.ptp(diff)) == 0:
        return np.zeros(diff.shape, int), diff
    if cut is None:
        cut = _otsu_cut(diff)
    return label(opening(diff > cut, disk(2)), connectivity=2), diff


def largest_region(labels: np.ndarray) -> np.ndarray:
    """Boolean mask of the largest labelled region with its holes filled (none: empty)."""
    from scipy.ndimage import binary_fill_holes

    if labels.max() == 0:
        return np.zeros(labels.shape, bool)
    sizes = np.bincount(labels.ravel())
    sizes[0] = 0
    return binary_fill_holes(labels == int(np.argmax(sizes)))


def coupon_outline(lab: np.ndarray, exclude: tuple | None = None
                   ) -> tuple[np.ndarray, np.ndarray]:
    """The coupon (the largest region standing out, holes filled) and the difference map.

    Its outline is placed by a random walker from markers on the difference map (see the
    module's docstring); ``exclude`` as in :func:`foreground_labels`.
    """
    from skimage.measure import label
    from skimage.morphology import disk, erosion, opening
    from skimage.segmentation import random_walker

    diff = _difference(lab, exclude)
    if float(np.ptp(diff)) == 0:
        return np.zeros(diff.shape, bool), diff
    level = float(np.median(diff[_frame(diff.shape)]))
    rough = opening(diff > (level + _otsu_cut(diff)) / 2, disk(2))
    markers = np.zeros(diff.shape, np.int32)
    markers[erosion(~rough, disk(MARKER_MARGIN))] = 1
    markers[erosion(rough, disk(MARKER_MARGIN))] = 2
    if not (markers == 2).any():
        return np.zeros(diff.shape, bool), diff
    inside = rough if not (markers == 1).any() else \
        random_walker(diff, markers, beta=OUTLINE_BETA, mode="bf") == 2
    return largest_region(label(inside, connectivity=2)), diff
