"""A grey or white card found in the frame without a box (``card = "auto"``).

A card is found by its outline, not by how much it differs from the background, so that a
white card on white paper (a few L* units apart) is found as well as a grey one:

1. **Edges** of the photo's lightness L* (``skimage.feature.canny``, sigma
   :data:`EDGE_SIGMA` pixels), thickened by one pixel (``skimage.morphology.dilation``)
   so that an outline closes.  Canny's upper threshold is :data:`EDGE_HIGH` (on its Sobel
   gradient magnitude of the smoothed L*, ``scipy.ndimage.sobel``) or, in a noisier photo,
   :data:`EDGE_NOISE_FACTOR` times the median magnitude, whichever is higher; the lower
   one is half of it.  Most of a photo is flat, so the median magnitude is that of noise,
   which for noise alone is Rayleigh-distributed: its median is 1.18 sigma and its
   99.9th percentile 3.72 sigma, so 3.2 times the median lets about one noise pixel in a
   thousand through.
2. **Patches**: the connected regions between the edges (``skimage.measure.label``);
   one that touches the photo's border is background, one that overlaps the coupon (the
   largest region standing out from the background, its holes filled,
   :func:`trialkit.photos.regions.coupon_outline`) is part of it.
3. **A card** is a patch of at least :data:`MIN_CARD_SHARE` of the photo that is nearly
   rectangular (``skimage.measure.regionprops``: solidity and extent at least
   :data:`MIN_SQUARENESS`), even in colour (each channel's SD inside it at most
   :data:`MAX_CARD_SD`), not clipped (no channel's median above :data:`MAX_CARD_LEVEL`
   or below :data:`MIN_CARD_LEVEL`) and nearly neutral: its chroma C*ab at most
   :data:`MAX_CARD_CHROMA_RATIO` of its lightness L*.  A colour cast of the light scales
   the channels, so a neutral card's chroma grows with its lightness; under the strongest
   cast of the tests (R : G : B = 1 : 0.83 : 0.62) grey and white cards lie near 0.37,
   rust of every shade of :mod:`trialkit.demo.photo_scenes` near 0.9 to 1.0.  These are
   our own settings, not published values.  The most neutral card is taken; its inner
   part (a sixth of each side in from its edge) is returned.

No card: None (:func:`trialkit.photos.measure.measure_coverage` then refuses, asking for
the card's box).  An over-exposed white card (a channel clipped) is no card: expose for the
card, or give the box of a grey one.

Examples
--------
>>> import numpy as np
>>> img = np.full((120, 160, 3), 0.92)
>>> img[20:100, 20:100] = (0.55, 0.35, 0.2)         # a rusty coupon
>>> img[30:60, 120:150] = (0.8, 0.72, 0.6)         # a grey card under a warm lamp
>>> find_card(img)  # its inner part
(126, 35, 144, 55)
>>> img[30:60, 120:150] = 0.96                     # a white card on the white paper
>>> find_card(img)
(126, 36, 144, 54)
>>> img[30:60, 120:150] = 0.92                     # no card
>>> find_card(img) is None
True
"""

from __future__ import annotations

import numpy as np

from trialkit.photos.regions import coupon_outline

#: Smallest card, as a share of the photo's pixels.
MIN_CARD_SHARE = 0.003
#: Smallest solidity and extent of a card's patch (a rectangle seen nearly square-on is 1).
MIN_SQUARENESS = 0.85
#: Largest SD of any channel (0..1) inside the card's inner part.
MAX_CARD_SD = 0.06
#: Largest C*ab / L* of a card's median colour.
MAX_CARD_CHROMA_RATIO = 0.5
#: A card's median channels must lie in this range (0..1): unclipped, not black.
MIN_CARD_LEVEL, MAX_CARD_LEVEL = 0.05, 0.98
#: Canny on L*: Gaussian sigma (pixels) and the least upper hysteresis threshold (Sobel
#: magnitude of the smoothed L*; a step of 3.4 L*, WHITE_CARD on BACKGROUND, gives about
#: 3.5 at this sigma).
EDGE_SIGMA, EDGE_HIGH = 3.0, 2.0
#: The upper threshold is at least this many times the photo's median gradient magnitude.
EDGE_NOISE_FACTOR = 3.2
#: The whole card reaches this many pixels beyond the patch between its edges.
OUTLINE_MARGIN = 4


def card_edges(lightness: np.ndarray) -> np.ndarray:
    """Canny edges of ``lightness`` (L*), the thresholds set above the photo's noise."""
    from scipy.ndimage import sobel
    from skimage.feature import canny
    from skimage.filters import gaussian

    smooth = gaussian(lightness, sigma=EDGE_SIGMA, mode="nearest", preserve_range=True)
    noise = float(np.median(np.hypot(sobel(smooth, axis=0), sobel(smooth, axis=1))))
    high = max(EDGE_HIGH, EDGE_NOISE_FACTOR * noise)
    return canny(lightness, sigma=EDGE_SIGMA, low_threshold=high / 2, high_threshold=high,
                 mode="nearest")


def find_card(rgb: np.ndarray) -> tuple[int, int, int, int] | None:
    """Box ``(x0, y0, x1, y1)`` of a grey or white card in ``rgb`` (floats 0..1), or None.

    The box is the card's inner part, whose colour sets the white balance; see
    :func:`find_card_with_outline` for the whole card as well.
    """
    found = find_card_with_outline(rgb)
    return None if found is None else found[0]


def find_card_with_outline(rgb: np.ndarray) -> tuple[tuple, tuple] | None:
    """``(inner box, whole card's box)`` of a card in ``rgb``, or None.

    The whole card's box is its patch's bounding box grown by :data:`OUTLINE_MARGIN`
    pixels (the edges and the blur around it, left out when the coupon is looked for).
    """
    from skimage.color import rgb2lab
    from skimage.measure import label, regionprops
    from skimage.morphology import dilation, disk

    lab = rgb2lab(rgb)
    patches = label(~dilation(card_edges(lab[..., 0]), disk(1)), connectivity=1)
    coupon, _ = coupon_outline(lab)
    h, w = patches.shape
    best, best_ratio = None, MAX_CARD_CHROMA_RATIO
    for r in regionprops(patches):
        y0, x0, y1, x1 = r.bbox
        if r.area < MIN_CARD_SHARE * h * w or y0 == 0 or x0 == 0 or y1 == h or x1 == w:
            continue
        if r.solidity < MIN_SQUARENESS or r.extent < MIN_SQUARENESS:
            continue
        if coupon[r.coords[:, 0], r.coords[:, 1]].any():
            continue
        my, mx = max(1, (y1 - y0) // 6), max(1, (x1 - x0) // 6)  # the card's inner part
        inner = rgb[y0 + my:y1 - my, x0 + mx:x1 - mx].reshape(-1, 3)
        if not len(inner) or float(inner.std(axis=0).max()) > MAX_CARD_SD:
            continue
        med = np.median(inner, axis=0)
        if float(med.max()) > MAX_CARD_LEVEL or float(med.min()) < MIN_CARD_LEVEL:
            continue
        L, a, b = rgb2lab(med[None, None, :])[0, 0]
        ratio = float(np.hypot(a, b)) / max(float(L), 1e-9)
        if ratio <= best_ratio:
            m = OUTLINE_MARGIN
            best = ((int(x0 + mx), int(y0 + my), int(x1 - mx), int(y1 - my)),
                    (max(0, x0 - m), max(0, y0 - m), min(w, x1 + m), min(h, y1 + m)))
            best_ratio = ratio
    return best
