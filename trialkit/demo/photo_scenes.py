"""Invented coupon photographs with a known rusted area (for the tests and the example).

Invented scenes, not photographs: a grey steel plate on a plain background with
rust-coloured patches whose pixel area is known exactly, optionally under a colour cast
and with a grey card in the frame, with sensor noise and lens blur.  The truth is the
patch pixels over the plate pixels.

Examples
--------
>>> scene = render(30.0, seed=1, size=(120, 160))
>>> scene.rgb.shape, round(scene.truth_pct, 2)
((120, 160, 3), 30.0)
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.ndimage import gaussian_filter

STEEL = (0.55, 0.55, 0.57)       # bare grey steel (sRGB, 0..1)
RUST = (0.58, 0.32, 0.16)        # orange-brown rust
DARK_RUST = (0.36, 0.2, 0.12)    # dark brown rust
LIGHT_RUST = (0.78, 0.5, 0.22)   # light orange rust
BACKGROUND = (0.92, 0.92, 0.90)  # plain light paper
CARD = (0.75, 0.75, 0.75)        # a neutral grey card
WHITE_CARD = (0.96, 0.96, 0.96)  # a neutral white card (on BACKGROUND: about 3 L* apart)


@dataclass
class Scene:
    """An invented photo (``rgb``, uint8) and its truth."""

    rgb: np.ndarray          # (h, w, 3) uint8
    truth_pct: float         # rust pixels / plate pixels, percent
    plate: tuple             # (x0, y0, x1, y1)
    card: tuple | None       # (x0, y0, x1, y1)
    rust: np.ndarray         # (h, w) bool: the rust pixels as drawn


def render(target_pct: float, *, seed: int, size=(480, 640), cast=(1.0, 1.0, 1.0),
           noise=0.02, blur=1.0, card=False, card_colour=CARD, background=BACKGROUND,
           shades: tuple = (RUST,)) -> Scene:
    """A photo whose plate has about ``target_pct`` % rust (the exact truth is returned).

    ``cast`` multiplies the R, G, B channels (a colour cast of the light), ``card`` puts a
    neutral card of ``card_colour`` (grey by default, or :data:`WHITE_CARD`) in the top
    right, ``noise`` is the SD of Gaussian sensor noise and
    ``blur`` the sigma (pixels) of a Gaussian lens blur; ``shades`` the rust colours, laid
    in patches of their own (one colour by default).
    """
    rng = np.random.default_rng(seed)
    h, w = size
    img = np.empty((h, w, 3))
    img[:] = background
    x0, y0, x1, y1 = int(0.15 * w), int(0.2 * h), int(0.7 * w), int(0.8 * h)
    plate = np.zeros((h, w), bool)
    plate[y0:y1, x0:x1] = True
    # rust patches: a smooth random field cut at the plate's quantile gives blobs of an
    # exactly known pixel count
    field = gaussian_filter(rng.normal(size=(h, w)), sigma=min(h, w) / 25)
    vals = field[plate]
    n_rust = int(round(target_pct / 100 * vals.size))
    rust = np.zeros((h, w), bool)
    if n_rust:
        order = np.argsort(vals)[::-1][:n_rust]
        flat = np.zeros(vals.size, bool)
        flat[order] = True
        rust[plate] = flat
    img[plate] = STEEL
    img[rust] = shades[0]
    if len(shades) > 1:  # further shades in patches of a second smooth field
        tone = gaussian_filter(rng.normal(size=(h, w)), sigma=min(h, w) / 15)
        edges = np.quantile(tone[rust], np.linspace(0, 1, len(shades) + 1)[1:-1]) \
            if rust.any() else []
        which = np.searchsorted(edges, tone)
        for k, colour in enumerate(shades[1:], start=1):
            img[rust & (which == k)] = colour
    cbox = None
    if card:
        cbox = (int(0.78 * w), int(0.1 * h), int(0.95 * w), int(0.35 * h))
        img[cbox[1]:cbox[3], cbox[0]:cbox[2]] = card_colour
    img = img * np.asarray(cast)[None, None, :]
    if blur:
        img = gaussian_filter(img, sigma=(blur, blur, 0))
    img = img + rng.normal(scale=noise, size=img.shape)
    rgb = (np.clip(img, 0, 1) * 255).round().astype(np.uint8)
    return Scene(rgb, 100.0 * n_rust / int(plate.sum()), (x0, y0, x1, y1), cbox, rust)
