"""The rust-ness cut placed in the middle of every blurred edge between rust and steel.

One cut for the whole coupon (Otsu's, the fixed one or the marked one) tells the two
classes apart, but it does not lie in the middle of every edge between them: lens blur
and smoothing spread each edge over a few pixels, whose rust-ness runs from the steel's
level s to that rust's level d, and the edge's true line is where it passes
(s + d) / 2.  That middle differs from shade to shade of rust (dark brown rust lies much
closer to steel than light orange rust), and Otsu's cut is pulled off it by the blurred
pixels themselves when one class is small (a few steel islands on a coupon rusted nearly
all over).  So the cut is made local (:func:`edge_cut`):

1. the **cores** of the two classes the global cut makes on the coupon: each class eroded
   by a disk of :data:`CORE_MARGIN` pixels (``skimage.morphology.erosion``), leaving out
   the blurred edges and the coupon's own rim;
2. each class's **local level**: the mean rust-ness of its core pixels near each pixel, a
   normalized convolution (Knutsson & Westin 1993) with a Gaussian of
   :data:`LEVEL_SIGMA` pixels (``skimage.filters.gaussian`` of the core's values over that
   of the core itself); where no core pixel of a class is near, its mean over the coupon;
3. the **local cut**: half-way between the two local levels.

A class with fewer than :data:`MIN_CORE_PIXELS` core pixels (a clean coupon, or one rusted
all over) leaves the global cut unchanged.

Examples
--------
>>> import numpy as np
>>> r = np.zeros((40, 60)); r[:, 30:] = 20.0; r[:, 30] = 12.0  # an edge at column 30
>>> coupon = np.ones_like(r, bool)
>>> cut = edge_cut(r, coupon, 5.0)  # a global cut far below the middle of the step
>>> round(float(cut[20, 30]), 1), int((r > cut).sum()) == 40 * 30
(10.0, True)
"""

from __future__ import annotations

import numpy as np

#: A class's core: its pixels at least this many pixels from the other class or the
#: coupon's rim (a lens blur and the 1-pixel smoothing spread an edge over about 2 px
#: each way; our own setting).
CORE_MARGIN = 2
#: SD (pixels) of the Gaussian over which a class's local level is averaged: wide enough
#: to reach a core across a blurred edge, narrow enough to see one shade of rust at a time
#: (our own setting).
LEVEL_SIGMA = 4.0
#: A class needs this many core pixels for its level to count.
MIN_CORE_PIXELS = 20


def edge_cut(r: np.ndarray, coupon: np.ndarray, cut: float) -> np.ndarray:
    """The local cut for every pixel: half-way between the local levels of the two classes.

    Parameters
    ----------
    r : ndarray
        Rust-ness of every pixel (CIELAB units).
    coupon : ndarray of bool
        The coupon's pixels.
    cut : float
        The global cut that makes the classes (rust above it).

    Returns
    -------
    ndarray
        The cut for each pixel (``cut`` everywhere when a class has no core).
    """
    from skimage.filters import gaussian
    from skimage.morphology import disk, erosion

    levels = []
    for side in (r > cut, r <= cut):
        core = erosion(coupon & side, disk(CORE_MARGIN))
        if int(core.sum()) < MIN_CORE_PIXELS:
            return np.full(r.shape, float(cut))
        weight = gaussian(core.astype(float), sigma=LEVEL_SIGMA)
        near = gaussian(np.where(core, r, 0.0), sigma=LEVEL_SIGMA)
        reached = weight > 1e-3
        levels.append(np.where(reached, near / np.where(reached, weight, 1.0),
                               float(r[core].mean())))
    return (levels[0] + levels[1]) / 2.0
