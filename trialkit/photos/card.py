"""A grey card found in the frame without a box (``card = "auto"``).

Among the regions that stand out from the background
(:func:`trialkit.photos.regions.foreground_labels`), the largest is the coupon; a card is
another region of at least :data:`MIN_CARD_SHARE` of the photo that is nearly rectangular
(``skimage.measure.regionprops``: solidity and extent at least :data:`MIN_SQUARENESS`),
even in colour (each channel's SD inside it at most :data:`MAX_CARD_SD`), not clipped, and
of low chroma (C*ab at most :data:`MAX_CARD_CHROMA`, which a grey card keeps even under a
strong lamp cast while rust and paint do not).  The most neutral such region is taken.
A white card on white paper does not stand out: give its box instead.  The card must be
smaller than the coupon.

Examples
--------
>>> import numpy as np
>>> img = np.full((120, 160, 3), 0.92)
>>> img[20:100, 20:100] = (0.55, 0.35, 0.2)         # a rusty coupon
>>> img[30:60, 120:150] = (0.8, 0.72, 0.6)         # a grey card under a warm lamp
>>> find_card(img)  # its inner part (a sixth of each side in from the edge)
(125, 35, 145, 55)
"""

from __future__ import annotations

import numpy as np

from trialkit.photos.regions import MIN_CONTRAST, foreground_labels

MIN_CARD_SHARE = 0.003
MIN_SQUARENESS = 0.85
MAX_CARD_SD = 0.06
MAX_CARD_CHROMA = 32.0


def find_card(rgb: np.ndarray) -> tuple[int, int, int, int] | None:
    """Box ``(x0, y0, x1, y1)`` of a grey card in ``rgb`` (floats 0..1), or None."""
    from skimage.color import rgb2lab
    from skimage.measure import regionprops

    lab = rgb2lab(rgb)
    labels, _ = foreground_labels(lab, cut=MIN_CONTRAST)
    regions = sorted(regionprops(labels), key=lambda r: r.area, reverse=True)
    best, best_chroma = None, MAX_CARD_CHROMA
    h, w = labels.shape
    for r in regions[1:]:
        if r.area < MIN_CARD_SHARE * h * w:
            break
        if r.solidity < MIN_SQUARENESS or r.extent < MIN_SQUARENESS:
            continue
        y0, x0, y1, x1 = r.bbox
        my, mx = max(1, (y1 - y0) // 6), max(1, (x1 - x0) // 6)  # the card's inner part
        inner = rgb[y0 + my:y1 - my, x0 + mx:x1 - mx].reshape(-1, 3)
        if not len(inner) or float(inner.std(axis=0).max()) > MAX_CARD_SD:
            continue
        med = np.median(inner, axis=0)
        if float(med.max()) > 0.98 or float(med.min()) < 0.05:
            continue
        L, a, b = rgb2lab(med[None, None, :])[0, 0]
        chroma = float(np.hypot(a, b))
        if chroma <= best_chroma:
            best, best_chroma = (int(x0 + mx), int(y0 + my), int(x1 - mx), int(y1 - my)), chroma
    return best
