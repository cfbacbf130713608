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
``skimage.segmentation.random_walker``, on the unsmoothed difference): background markers
are the pixels well outside a rough mask, coupon markers those well inside it
(:data:`MARKER_MARGIN` pixels either way, ``skimage.morphology.erosion``); the rough mask
is cut :data:`ROUGH_SHARE` of the way from the background's own difference up to Otsu's
cut.  Each pixel between the markers goes to the side a random walk from it most
probably reaches first; walks seldom cross a step of colour, so the outline runs through
the middle of each edge whatever the height of the step there: bare steel and rust at the
plate's edge are both kept, and no rim of blur is added.  (A watershed on the gradient
must break a tie between the two pixels either side of a sharp edge, which adds a
one-pixel rim; it also lost a steel-and-rust stretch of edge in tests.)

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
#: The rough mask is cut this share of the way from the background's own difference up to
#: Otsu's cut: low, so that the band around it holds the middle of a faint edge (bright
#: steel on white paper) as well as that of a strong one (our own setting).
ROUGH_SHARE = 1 / 3
#: Pixels between the rough mask's edge and the markers on either side: the band in which
#: the outline is placed (wider than a lens blur of a pixel or two; our own setting).
MARKER_MARGIN = 3
#: The random walker's beta (``skimage.segmentation.random_walker``, which divides it by
#: ten times the SD of the difference map): how hard a walk crosses a step of colour.
#: Our own setting, chosen on invented scenes (photo_scenes, seeds 40000-40039, and the
#: plates of tests/test_photos_regions.py): at 8 their outlines missed or added at most
#: 0.3 % of the plate's pixels; at 30 and above (the library's default is 130) the weights
#: across a strong edge underflow and whole one-pixel rims go astray.
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


def background_difference(lab: np.ndarray, smooth: bool = True) -> np.ndarray:
    """ΔE*ab of every pixel from the background (the median of the outer frame), smoothed
    by a Gaussian of 1 pixel unless ``smooth`` is False."""
    from skimage.color import deltaE_cie76
    from skimage.filters import gaussian

    diff = deltaE_cie76(lab, background_colour(lab)[None, None, :])
    return gaussian(diff, sigma=1.0, preserve_range=True) if smooth else diff


def _difference(lab: np.ndarray, exclude: tuple | None, smooth: bool = True
                ) -> np.ndarray:
    diff = background_difference(lab, smooth)
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
    rough = opening(diff > level + ROUGH_SHARE * (_otsu_cut(diff) - level), disk(2))
    markers = np.zeros(diff.shape, np.int32)
    markers[erosion(~rough, disk(MARKER_MARGIN))] = 1
    markers[erosion(rough, disk(MARKER_MARGIN))] = 2
    if not (markers == 2).any():
        return np.zeros(diff.shape, bool), diff
    inside = rough if not (markers == 1).any() else random_walker(
        _difference(lab, exclude, smooth=False), markers, beta=OUTLINE_BETA,
        mode="bf") == 2
    return largest_region(label(inside, connectivity=2)), diff
