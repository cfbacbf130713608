"""The coupon's outline (photos/regions.py) on invented plates whose pixels are known.

Reference: the drawn plate itself; a symmetric blur (scipy.ndimage.gaussian_filter)
passes half-way between paper and plate exactly on the drawn edge, so an outline through
the middle of each edge gives the drawn pixels back whatever the height of the step."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.ndimage import gaussian_filter
from skimage.color import rgb2lab

from trialkit.demo.photo_scenes import BACKGROUND, RUST
from trialkit.photos.regions import coupon_outline, foreground_labels, largest_region

BRIGHT_STEEL = (0.7, 0.7, 0.72)  # bright bare steel (invented): about 20 ΔE from the paper


def _plate(blur: float, steel_share: float = 0.15):
    # a plate rusted but for a strip of bright bare steel along its left edge: the steel
    # differs from the paper a third as much as the rust does
    img = np.empty((120, 160, 3))
    img[:] = BACKGROUND
    img[20:100, 30:130] = RUST
    img[20:100, 30:30 + int(100 * steel_share)] = BRIGHT_STEEL
    drawn = np.zeros(img.shape[:2], bool)
    drawn[20:100, 30:130] = True
    if blur:
        img = gaussian_filter(img, sigma=(blur, blur, 0))
    return rgb2lab(img), drawn


@pytest.mark.parametrize("blur", [0.0, 1.0, 2.5])
def test_outline_follows_the_middle_of_every_edge(blur):
    lab, drawn = _plate(blur)
    mask, _ = coupon_outline(lab)
    # sharp: to the pixel; blurred: the middle-level contour of a blurred rectangle cuts
    # its four corners (a corner pixel of the blurred plate is a quarter plate), which
    # costs up to about 2 sigma^2 pixels each
    assert (mask ^ drawn).sum() <= 8 * blur ** 2, (mask ^ drawn).sum()


def test_one_otsu_cut_loses_the_steel_edge_the_outline_keeps():
    # the failure the outline replaces: Otsu's cut on the whole photo's difference lies
    # above the steel strip's difference, so its largest region misses the strip
    lab, drawn = _plate(1.0)
    labels, _ = foreground_labels(lab)
    otsu = largest_region(labels)
    mask, _ = coupon_outline(lab)
    assert (drawn & ~otsu).sum() > 0.1 * drawn.sum()
    assert (drawn & ~mask).sum() <= 0.005 * drawn.sum()


def test_blank_photo_has_no_outline():
    lab = rgb2lab(np.full((50, 50, 3), 0.9))
    mask, diff = coupon_outline(lab)
    assert not mask.any() and float(np.ptp(diff)) == 0.0
