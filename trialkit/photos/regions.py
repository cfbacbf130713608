"""Regions that stand out from a photo's plain background (the coupon, a grey card).

The background colour is the median CIELAB colour of the photo's outer frame
(:data:`FRAME` of its shorter side); every pixel's difference from it is CIE 1976 ΔE*ab
(``skimage.color.deltaE_cie76``), smoothed by a Gaussian of 1 pixel; Otsu's threshold on
that difference (at least half :data:`MIN_CONTRAST`), a morphological opening with a disk
of 2 pixels and connected-component labelling (``skimage.measure.label``) give the regions.

Examples
--------
>>> import numpy as np
>>> from skimage.color import rgb2lab
>>> img = np.full((60, 80, 3), 0.9); img[10:50, 10:40] = 0.5; img[20:30, 55:70] = 0.6
>>> labels, diff = foreground_labels(rgb2lab(img))
>>> int(labels.max())  # the coupon and the small patch
2
"""

from __future__ import annotations

import numpy as np

#: Width of the photo's outer frame whose median colour is the background (share of side).
FRAME = 0.03
#: A region must differ from the background by at least this much (CIE76 ΔE, median).
MIN_CONTRAST = 8.0


def background_difference(lab: np.ndarray) -> np.ndarray:
    """ΔE*ab of every pixel from the background (the median of the outer frame), smoothed."""
    from skimage.color import deltaE_cie76
    from skimage.filters import gaussian

    h, w = lab.shape[:2]
    f = max(2, int(round(FRAME * min(h, w))))
    frame = np.concatenate([lab[:f].reshape(-1, 3), lab[-f:].reshape(-1, 3),
                            lab[:, :f].reshape(-1, 3), lab[:, -f:].reshape(-1, 3)])
    background = np.median(frame, axis=0)
    return gaussian(deltaE_cie76(lab, background[None, None, :]), sigma=1.0,
                    preserve_range=True)


def foreground_labels(lab: np.ndarray, exclude: tuple | None = None,
                      cut: float | None = None) -> tuple[np.ndarray, np.ndarray]:
    """Labelled regions that stand out from the background, and the difference map.

    ``exclude`` is a box ``(x0, y0, x1, y1)`` (measured pixels) left out (a card);
    ``cut`` a fixed ΔE threshold instead of Otsu's (which, with a faint card and a strong
    coupon in the frame, may put the card with the background).
    """
    from skimage.filters import threshold_otsu
    from skimage.measure import label
    from skimage.morphology import disk, opening

    diff = background_difference(lab)
    if exclude is not None:
        x0, y0, x1, y1 = exclude
        diff[y0:y1, x0:x1] = 0.0
    if float(np.ptp(diff)) == 0:
        return np.zeros(diff.shape, int), diff
    if cut is None:
        cut = max(float(threshold_otsu(diff)), MIN_CONTRAST / 2)
    return label(opening(diff > cut, disk(2)), connectivity=2), diff
