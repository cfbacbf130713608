"""A small picture of the classification: the rust mask laid on the coupon.

The coupon is cropped with a margin and scaled to at most :data:`OVERLAY_SIDE` pixels;
pixels classed as rust are tinted :data:`RUST_TINT` (a blue that no rust or steel has), the
coupon's outline is drawn in :data:`OUTLINE`.  This is an image made by the measurement,
not a figure: it is written with Pillow, and nothing here imports matplotlib.

Examples
--------
>>> import numpy as np
>>> from trialkit.photos.measure import PhotoCoverage
>>> from trialkit.photos.settings import PhotoSettings
>>> mask = np.zeros((40, 40), bool); mask[5:35, 5:35] = True
>>> rust = mask.copy(); rust[5:35, 20:35] = False
>>> m = PhotoCoverage("a.png", "0" * 64, 50.0, 1, 900, 450, "outline", "none",
...                   (1.0, 1.0, 1.0), "otsu", 20.0, 30.0, (40, 40), 1.0, PhotoSettings(),
...                   rgb=np.full((40, 40, 3), 0.5), coupon_mask=mask, rust_mask=rust)
>>> img = overlay_image(m)
>>> img.dtype, img.shape                       # cropped to the coupon with a margin
(dtype('uint8'), (38, 38, 3))
>>> img[15, 10].tolist(), img[15, 30].tolist()  # a rust pixel tinted, a steel pixel as is
([71, 116, 210], [128, 128, 128])
"""

from __future__ import annotations

import os
from pathlib import Path

import numpy as np

from trialkit.exceptions import PhotoError
from trialkit.photos.measure import PhotoCoverage

#: Longest side of an overlay (pixels).
OVERLAY_SIDE = 320
#: Colour of pixels classed as rust (sRGB, 0-255).
RUST_TINT = (40, 110, 255)
#: Colour of the coupon's outline.
OUTLINE = (255, 220, 0)
#: Share of the tint laid over a rust pixel (1 = opaque).
TINT_ALPHA = 0.65
#: Folder of a trial where overlays are written.
OVERLAY_FOLDER = "photo-overlays"


def overlay_image(m: PhotoCoverage) -> np.ndarray:
    """The overlay of measurement ``m`` as ``(h, w, 3)`` uint8."""
    from skimage.segmentation import find_boundaries
    from skimage.transform import resize

    if m.rgb is None or m.coupon_mask is None or m.rust_mask is None:
        raise PhotoError(f"{m.photo}: the measurement holds no pixels (it was read back "
                         "from JSON?); measure the photo again to draw its overlay.")
    ys, xs = np.nonzero(m.coupon_mask)
    h, w = m.coupon_mask.shape
    pad = max(4, int(0.05 * max(h, w)))
    y0, y1 = max(0, ys.min() - pad), min(h, ys.max() + pad + 1)
    x0, x1 = max(0, xs.min() - pad), min(w, xs.max() + pad + 1)
    rgb = m.rgb[y0:y1, x0:x1].copy()
    rust = m.rust_mask[y0:y1, x0:x1]
    edge = find_boundaries(m.coupon_mask[y0:y1, x0:x1], mode="inner")
    rgb[rust] = (1 - TINT_ALPHA) * rgb[rust] + TINT_ALPHA * np.asarray(RUST_TINT) / 255.0
    side = max(rgb.shape[:2])
    if side > OVERLAY_SIDE:
        shape = tuple(max(1, round(s * OVERLAY_SIDE / side)) for s in rgb.shape[:2])
        rgb = resize(rgb, shape, order=1, anti_aliasing=True)
        edge = resize(edge.astype(float), shape, order=0) > 0.5
    out = (np.clip(rgb, 0, 1) * 255).round().astype(np.uint8)
    out[edge] = OUTLINE
    return out


def overlay_name(m: PhotoCoverage) -> str:
    """File name of the overlay: the photo's stem and the start of its reading key (the
    photo's SHA-256 with the method's settings: one overlay per measurement)."""
    return overlay_file_name(m.photo, m.reading_key)


def overlay_file_name(photo: str, sha256: str) -> str:
    """File name of the overlay of the photo called ``photo`` with hash ``sha256``.

    Examples
    --------
    >>> overlay_file_name("B01-R1_after.jpg", "ab" * 32)
    'B01-R1_after-ababababab.png'
    """
    return f"{Path(photo).stem}-{sha256[:10]}.png"


def write_overlay(m: PhotoCoverage, folder: str | os.PathLike) -> Path:
    """Write the overlay of ``m`` as a PNG into ``folder`` (created); return its path."""
    from PIL import Image

    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    path = folder / overlay_name(m)
    tmp = path.with_suffix(".part")
    Image.fromarray(overlay_image(m)).save(tmp, format="PNG")
    os.replace(tmp, path)
    return path
