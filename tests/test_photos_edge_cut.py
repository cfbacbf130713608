"""The local rust-ness cut (photos/edge_cut.py) on blurred steps of known levels.

Reference: a step blurred by a symmetric kernel (here scipy.ndimage.gaussian_filter)
passes half-way between its two levels exactly on the edge (the Gaussian's CDF is 1/2 at
0), so thresholding each edge at the middle of its own two levels gives back the drawn
pixels; one global cut gives them back only where it happens to lie at that middle."""

from __future__ import annotations

import numpy as np
from scipy.ndimage import gaussian_filter

from trialkit.photos.edge_cut import edge_cut


def _two_shades(blur: float = 1.5):
    # steel (0) on the left; dark rust (20) top right, light rust (60) bottom right
    r = np.zeros((80, 120))
    r[:40, 60:] = 20.0
    r[40:, 60:] = 60.0
    drawn = np.zeros(r.shape, bool)
    drawn[:, 60:] = True
    return gaussian_filter(r, blur), drawn


def test_each_edge_is_cut_at_the_middle_of_its_own_step():
    r, drawn = _two_shades()
    coupon = np.ones(r.shape, bool)
    cut = edge_cut(r, coupon, 15.0)  # a global cut between steel and the dark rust
    # away from the corner where the two shades meet the steel (their local levels mix
    # within a few LEVEL_SIGMA of it), every pixel is as drawn
    rows = np.r_[0:32, 48:80]
    assert ((r > cut) == drawn)[rows].all()
    # the local cut on the dark edge is near 10, on the light edge near 30 (a core's
    # pixels next to its edge still hold a little blur: the light rust's level is 58)
    assert abs(cut[20, 59] - 10.0) < 0.5 and abs(cut[60, 59] - 30.0) < 2.0
    # the global cut alone loses the dark edge's rim and adds a steel rim at the light one
    plain = r > 15.0
    assert (drawn & ~plain)[:36].sum() >= 32 and (plain & ~drawn)[44:].sum() >= 32
    # over the whole image the corner costs at most a few pixels
    assert ((r > cut) != drawn).sum() <= 8


def test_one_class_keeps_the_global_cut():
    r = np.full((40, 40), 3.0)  # a clean coupon: no rust core
    assert (edge_cut(r, np.ones(r.shape, bool), 15.0) == 15.0).all()


def test_outside_the_coupon_counts_for_no_class():
    # a coupon whose left half is steel and right half rust, in a frame of background
    # whose rust-ness is that of steel: the background must not pull the steel's level
    r, drawn = _two_shades(blur=0.0)
    coupon = np.zeros(r.shape, bool)
    coupon[10:70, 20:100] = True
    r = np.where(coupon, r, 40.0)  # a warm background, far from the steel
    cut = edge_cut(r, coupon, 10.0)
    assert abs(cut[20, 50] - 10.0) < 1e-9 and abs(cut[60, 50] - 30.0) < 1e-9
