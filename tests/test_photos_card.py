"""The card finder's edges (trialkit.photos.card) on invented images: plain paper with
sensor noise, and a white card a few L* from the paper.  The measurements with a found card
are in tests/test_photos_measure.py."""

from __future__ import annotations

import numpy as np
import pytest
from skimage.color import rgb2lab
from skimage.feature import canny

from trialkit.demo.photo_scenes import BACKGROUND, STEEL, WHITE_CARD
from trialkit.photos.card import EDGE_HIGH, EDGE_SIGMA, card_edges, find_card


def _paper(noise: float, seed: int) -> np.ndarray:
    rng = np.random.default_rng(seed)
    return np.clip(np.asarray(BACKGROUND) + rng.normal(0, noise, (240, 320, 3)), 0, 1)


@pytest.mark.parametrize("noise", [0.02, 0.06])
def test_noise_on_plain_paper_makes_few_edges(noise):
    # the upper threshold follows the median gradient (Rayleigh: 3.2 x median is about its
    # 99.9th percentile), so grainy paper is not cut into patches; the fixed floor alone
    # marks four times as many noise edges at the grainier level
    lightness = rgb2lab(_paper(noise, seed=31))[..., 0]
    adaptive = card_edges(lightness).mean()
    fixed = canny(lightness, sigma=EDGE_SIGMA, low_threshold=EDGE_HIGH / 2,
                  high_threshold=EDGE_HIGH, mode="nearest").mean()
    assert adaptive <= 0.01
    if noise == 0.06:
        assert fixed > 3 * adaptive


def test_white_card_outline_is_an_edge_and_paper_with_a_coupon_has_no_card():
    img = _paper(0.02, seed=32)
    img[40:200, 30:170] += np.asarray(STEEL) - np.asarray(BACKGROUND)  # a bare coupon
    assert find_card(img) is None
    img[60:140, 200:280] = np.clip(np.asarray(WHITE_CARD) + img[60:140, 200:280]
                                   - np.asarray(BACKGROUND), 0, 1)
    edges = card_edges(rgb2lab(img)[..., 0])
    assert edges[60:140, 197:203].any(axis=1).mean() > 0.9   # its left side, row by row
    assert not edges[80:120, 220:260].any()                  # nothing inside it
    x0, y0, x1, y1 = find_card(img)
    assert 200 <= x0 < x1 <= 280 and 60 <= y0 < y1 <= 140
