"""Rust coverage measured from synthetic photographs (tests/photo_scenes.py: invented
scenes with a known rusted pixel area), the threshold against scikit-image's own Otsu, the
ASTM D610 grade of the measured share at the table's band edges, and bad input."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from PIL import Image

from trialkit.demo.photo_scenes import CARD, DARK_RUST, LIGHT_RUST, RUST, WHITE_CARD, render
from trialkit.exceptions import PhotoError
from trialkit.photos.edge_cut import edge_cut
from trialkit.photos.measure import measure_coverage, rustness
from trialkit.photos.settings import PhotoSettings

SMALL = (240, 320)
D610 = json.loads((Path(__file__).parent / "reference/corrosion/rust_grade_scales.json")
                  .read_text())["ASTM_D610_SSPC_VIS2"]["grades"]
SHARES = [0, 1, 5, 20, 50, 80, 95, 99, 100]


def _save(scene, tmp_path, name="coupon.png", **kw):
    p = tmp_path / name
    Image.fromarray(scene.rgb).save(p, **kw)
    return p


# -- accuracy -----------------------------------------------------------------------------
@pytest.mark.parametrize("cast", [(1.06, 1.0, 0.93), (0.93, 1.0, 1.07)], ids=["warm", "cool"])
@pytest.mark.parametrize("pct", SHARES)
def test_share_within_2_points_under_shifted_white_balance(tmp_path, pct, cast):
    # issue 20: within +-2 percentage points from 0 to 100 %, with noise and blur
    scene = render(pct, seed=100 + pct, size=SMALL, cast=cast, noise=0.02, blur=1.0)
    m = measure_coverage(_save(scene, tmp_path))
    assert abs(m.rust_pct - scene.truth_pct) <= 2.0, (m.rust_pct, scene.truth_pct, m.rule)


@pytest.mark.parametrize("cast", [(1.2, 1.0, 0.75), (0.8, 1.0, 1.25)], ids=["amber", "blue"])
@pytest.mark.parametrize("pct", SHARES)
def test_share_within_3_points_under_a_cast_corrected_by_a_grey_card(tmp_path, pct, cast):
    # issue 20: within +-3 percentage points under a colour cast corrected by a grey card
    scene = render(pct, seed=200 + pct, size=SMALL, cast=cast, card=True)
    m = measure_coverage(_save(scene, tmp_path), PhotoSettings(card=scene.card))
    assert m.white_balance == "grey card"
    assert abs(m.rust_pct - scene.truth_pct) <= 3.0, (m.rust_pct, scene.truth_pct, m.rule)


# Issue 20's bounds measured over fresh seeds: per condition, consecutive seeds from a base
# fixed before the first run (none picked), the share drawn uniformly from 0-100 by the
# seed's own generator, plus a clean and a fully rusted coupon. Mild casts (and no cast)
# with or without a card, and rust of three shades: +-2 points; strong casts corrected by
# a grey card, or by a white card with the camera exposed for it: +-3.
AMBER, COOL = (1.2, 1.0, 0.75), (0.8, 1.0, 1.25)
SWEEP = {
    "none": ((1.0, 1.0, 1.0), None, 2.0), "mild-amber": ((1.06, 1.0, 0.93), None, 2.0),
    "mild-cool": ((0.93, 1.0, 1.07), None, 2.0),
    "none-grey-card": ((1.0, 1.0, 1.0), CARD, 2.0),
    "mild-amber-grey-card": ((1.06, 1.0, 0.93), CARD, 2.0),
    "mild-cool-grey-card": ((0.93, 1.0, 1.07), CARD, 2.0),
    "amber-grey-card": (AMBER, CARD, 3.0), "cool-grey-card": (COOL, CARD, 3.0),
    "amber-white-card": ((1.0, 0.83, 0.62), WHITE_CARD, 3.0),
    "cool-white-card": ((0.64, 0.8, 1.0), WHITE_CARD, 3.0),
    "three-shades": ((1.0, 1.0, 1.0), None, 2.0),
}
SHADES = (DARK_RUST, RUST, LIGHT_RUST)
SWEEP_SCENES = 10


@pytest.mark.parametrize("condition", list(SWEEP))
def test_share_within_the_issues_bounds_over_fresh_seeds(tmp_path, condition):
    cast, card, bound = SWEEP[condition]
    base = 70_000 + 100 * list(SWEEP).index(condition)
    errors = []
    for i in range(SWEEP_SCENES):
        seed = base + i
        pct = (0.0, 100.0)[i] if i < 2 else float(np.random.default_rng(seed).uniform(0, 100))
        scene = render(pct, seed=seed, size=SMALL, cast=cast, card=card is not None,
                       card_colour=card or CARD,
                       shades=SHADES if condition == "three-shades" else (RUST,))
        m = measure_coverage(_save(scene, tmp_path),
                             PhotoSettings(card=scene.card) if card else None)
        errors.append((m.rust_pct - scene.truth_pct, seed, round(scene.truth_pct, 1)))
    worst = max(errors, key=lambda e: abs(e[0]))
    assert abs(worst[0]) <= bound, (condition, worst)


def test_steel_at_the_plate_edge_kept_under_a_strong_cast(tmp_path):
    # the case reported in issue 20: an amber cast corrected by a grey card, 87 % rust;
    # the steel at the plate's edge differs from the paper by about Otsu's cut on the
    # whole photo's difference, which lost it (the share came out 5 points high)
    scene = render(87, seed=487, size=SMALL, cast=AMBER, card=True)
    m = measure_coverage(_save(scene, tmp_path), PhotoSettings(card=scene.card))
    x0, y0, x1, y1 = scene.plate
    plate = np.zeros(m.coupon_mask.shape, bool)
    plate[y0:y1, x0:x1] = True
    assert (m.coupon_mask ^ plate).sum() <= 0.005 * plate.sum()
    assert abs(m.rust_pct - scene.truth_pct) <= 3.0


def test_the_strong_cast_without_the_card_is_not_passed_off_as_measured(tmp_path):
    # the same amber cast without correction makes steel look warm: the result says so
    scene = render(0, seed=7, size=SMALL, cast=(1.2, 1.0, 0.75), card=True)
    corrected = measure_coverage(_save(scene, tmp_path), PhotoSettings(card=scene.card))
    assert corrected.rust_pct <= 2.0
    raw = measure_coverage(_save(scene, tmp_path))
    assert raw.gains == (1.0, 1.0, 1.0) and raw.white_balance == "none"
    assert raw.rust_pct > corrected.rust_pct


def test_clean_coupon_has_no_invented_rust_and_rusted_all_over_no_invented_steel(tmp_path):
    # Otsu on one class of colour would split its noise in two: the fixed cut decides
    clean = measure_coverage(_save(render(0, seed=3, size=SMALL), tmp_path, "a.png"))
    full = measure_coverage(_save(render(100, seed=4, size=SMALL), tmp_path, "b.png"))
    assert clean.rule == full.rule == "fixed"
    assert clean.rust_pct == 0.0 and clean.d610_grade == 10  # ASTM D610: <= 0.01 % is 10
    assert full.rust_pct == 100.0 and full.d610_grade == 0   # ASTM D610: > 50 % is 0
    assert any("one class" in n for n in clean.notes)


def test_region_given_instead_of_outline(tmp_path):
    scene = render(30, seed=11, size=SMALL)
    m = measure_coverage(_save(scene, tmp_path), PhotoSettings(region=scene.plate))
    assert m.coupon_found_by == "region"
    x0, y0, x1, y1 = scene.plate
    assert m.coupon_px == (x1 - x0) * (y1 - y0)
    assert abs(m.rust_pct - scene.truth_pct) <= 2.0


def test_marked_pixels_set_the_threshold_half_way(tmp_path):
    scene = render(40, seed=12, size=SMALL, noise=0.0, blur=0.0)
    x0, y0, x1, y1 = scene.plate
    plate = np.zeros_like(scene.rust)
    plate[y0:y1, x0:x1] = True
    rust = [(int(x), int(y)) for y, x in np.argwhere(scene.rust)[::2000][:3]]
    steel = [(int(x), int(y)) for y, x in np.argwhere(plate & ~scene.rust)[::2000][:3]]
    settings = PhotoSettings(threshold="marked", smoothing=0.0, rust_pixels=tuple(rust),
                             steel_pixels=tuple(steel))
    m = measure_coverage(_save(scene, tmp_path), settings)
    assert m.rule == "marked"
    assert abs(m.rust_pct - scene.truth_pct) <= 2.0


# -- the threshold against the library's reference implementation -------------------------
def test_threshold_is_skimage_otsu_on_the_same_pixels(tmp_path):
    # reference: skimage.filters.threshold_otsu on the rust-ness of the coupon's pixels,
    # recomputed here from the file with skimage.color.rgb2lab
    from skimage.color import rgb2lab
    from skimage.filters import gaussian, threshold_otsu

    scene = render(35, seed=21, size=SMALL)
    p = _save(scene, tmp_path)
    m = measure_coverage(p)
    lab = rgb2lab(np.asarray(Image.open(p).convert("RGB")) / 255.0)
    r = gaussian(rustness(lab), sigma=1.0, preserve_range=True)
    assert m.rule == "otsu"
    assert m.threshold == pytest.approx(float(threshold_otsu(r[m.coupon_mask])), abs=1e-9)
    # Otsu's cut makes the classes; each pixel is then judged by the local cut of its edge
    local = edge_cut(r, m.coupon_mask, m.threshold)
    assert m.rust_px == int(m.rust_mask.sum()) == int((r > local)[m.coupon_mask].sum())


def test_threshold_maximises_the_between_class_variance(tmp_path):
    # Otsu (1979): the threshold maximises the between-class variance of the histogram
    # (skimage uses 256 bins); checked by brute force over every bin edge
    scene = render(60, seed=22, size=SMALL)
    m = measure_coverage(_save(scene, tmp_path))
    from skimage.color import rgb2lab
    from skimage.filters import gaussian

    lab = rgb2lab(m.rgb)
    v = gaussian(rustness(lab), sigma=1.0, preserve_range=True)[m.coupon_mask]
    hist, edges = np.histogram(v, bins=256)
    centres = (edges[:-1] + edges[1:]) / 2
    w0 = np.cumsum(hist)[:-1]
    w1 = hist.sum() - w0
    m0 = np.cumsum(hist * centres)[:-1] / w0
    m1 = (np.sum(hist * centres) - np.cumsum(hist * centres)[:-1]) / w1
    best = centres[np.argmax(w0 * w1 * (m0 - m1) ** 2)]
    assert abs(m.threshold - best) <= (edges[1] - edges[0]) + 1e-9


# -- ASTM D610 bands at their edges ----------------------------------------------------------
def _crisp(n_rust: int, tmp_path, shape=(250, 400)):
    img = np.full((*shape, 3), (140, 140, 145), np.uint8)
    flat = img.reshape(-1, 3)
    flat[:n_rust] = (150, 80, 40)
    p = tmp_path / f"d610-{n_rust}.png"
    Image.fromarray(img).save(p)
    return p


@pytest.mark.parametrize("row", [r for r in D610 if r["pct_upper_inclusive"] < 100],
                         ids=lambda r: f"grade{r['grade']}")
def test_d610_grade_of_the_measured_share_at_band_edges(tmp_path, row):
    # ASTM D610-08 (R2012) Table 1 (tests/reference/corrosion/rust_grade_scales.json):
    # grade g covers (lower, upper]; a crisp 100,000-pixel coupon with exactly upper % rust
    # and one pixel more
    settings = PhotoSettings(region=(0, 0, 400, 250), smoothing=0.0)
    n = round(row["pct_upper_inclusive"] / 100 * 100_000)
    at = measure_coverage(_crisp(n, tmp_path), settings)
    above = measure_coverage(_crisp(n + 1, tmp_path), settings)
    assert at.rust_px == n and at.rust_pct == pytest.approx(row["pct_upper_inclusive"])
    assert at.d610_grade == row["grade"]
    assert above.d610_grade == row["grade"] - 1


# -- formats, sizes, orientation ---------------------------------------------------------
def test_jpeg_rgba_and_sizes(tmp_path):
    for size in [(200, 260), (600, 800), (1400, 1000)]:
        scene = render(25, seed=31, size=size)
        m = measure_coverage(_save(scene, tmp_path, f"s{size[0]}.png"))
        assert abs(m.rust_pct - scene.truth_pct) <= 2.0, size
        assert max(m.size) <= 1200 and (m.scale < 1) == (max(size) > 1200)
    scene = render(25, seed=32, size=SMALL)
    jpg = measure_coverage(_save(scene, tmp_path, "c.jpg", quality=85))
    assert abs(jpg.rust_pct - scene.truth_pct) <= 2.0
    rgba = np.dstack([scene.rgb, np.full(scene.rgb.shape[:2], 255, np.uint8)])
    x0, y0, x1, y1 = scene.plate
    rgba[:, :x0 // 2, 3] = 0  # a transparent strip
    p = tmp_path / "c-rgba.png"
    Image.fromarray(rgba, "RGBA").save(p)
    m = measure_coverage(p)
    assert abs(m.rust_pct - scene.truth_pct) <= 2.0
    assert "transparent pixels laid over white" in m.notes


def test_exif_orientation_is_applied(tmp_path):
    # rust on the left half only; stored rotated with EXIF orientation 6 (view = rotate
    # 90 degrees clockwise); a region in viewed coordinates over the left half is all rust
    img = np.full((200, 300, 3), 235, np.uint8)
    img[40:160, 50:250] = (140, 140, 145)
    img[40:160, 50:150] = (150, 80, 40)
    stored = np.rot90(img, k=1)  # what a camera held sideways stores
    exif = Image.Exif()
    exif[0x0112] = 6
    p = tmp_path / "rotated.jpg"
    Image.fromarray(np.ascontiguousarray(stored)).save(p, exif=exif, quality=95)
    m = measure_coverage(p, PhotoSettings(region=(60, 50, 140, 150)))
    assert m.size == (300, 200)
    assert m.rust_pct > 98.0
    assert any("EXIF orientation 6" in n for n in m.notes)


# -- bad input ---------------------------------------------------------------------------
def test_not_an_image_is_refused_naming_the_file(tmp_path):
    p = tmp_path / "notes.png"
    p.write_text("this is a note, not a photo\n")
    with pytest.raises(PhotoError, match="notes.png is not an image") as err:
        measure_coverage(p)
    assert err.value.exit_code == 2


def test_empty_file_and_empty_image_are_refused(tmp_path):
    p = tmp_path / "empty.jpg"
    p.write_bytes(b"")
    with pytest.raises(PhotoError, match="empty.jpg is empty") as err:
        measure_coverage(p)
    assert err.value.exit_code == 2
    blank = tmp_path / "blank.png"
    Image.fromarray(np.full((100, 100, 3), (230, 228, 225), np.uint8)).save(blank)
    with pytest.raises(PhotoError, match="blank.png: no coupon found"):
        measure_coverage(blank)


def test_no_coupon_found_greyscale_and_tiny_are_refused(tmp_path):
    rng = np.random.default_rng(5)
    noise = tmp_path / "floor.png"
    Image.fromarray((rng.normal(0.8, 0.01, (120, 160, 3)).clip(0, 1) * 255)
                    .astype(np.uint8)).save(noise)
    with pytest.raises(PhotoError, match="floor.png: no coupon found") as err:
        measure_coverage(noise)
    assert err.value.exit_code == 1
    grey = tmp_path / "grey.png"
    Image.fromarray(render(30, seed=1, size=SMALL).rgb).convert("L").save(grey)
    with pytest.raises(PhotoError, match="grey.png has no colour"):
        measure_coverage(grey)
    tiny = tmp_path / "tiny.png"
    Image.fromarray(np.zeros((8, 8, 3), np.uint8)).save(tiny)
    with pytest.raises(PhotoError, match="tiny.png is 8 x 8 pixels"):
        measure_coverage(tiny)


def test_result_to_dict_and_repr(tmp_path):
    m = measure_coverage(_save(render(20, seed=41, size=SMALL), tmp_path))
    d = m.to_dict()
    assert json.loads(json.dumps(d))["rust_pct"] == pytest.approx(m.rust_pct)
    assert d["settings"]["threshold"] == "otsu" and "CIELAB" in d["method"]
    assert "rust_pct=" in repr(m) and "ndarray" not in repr(m)


@pytest.mark.parametrize("pct", [0, 30, 100])
def test_grey_card_found_without_a_box(tmp_path, pct):
    # card = "auto": the grey card of the scene is found and corrects the amber cast
    scene = render(pct, seed=400 + pct, size=SMALL, cast=(1.2, 1.0, 0.75), card=True)
    m = measure_coverage(_save(scene, tmp_path), PhotoSettings(card="auto"))
    assert m.white_balance == "grey card" and any("card found" in n for n in m.notes)
    x0, y0, x1, y1 = scene.card
    found = next(n for n in m.notes if "card found" in n)
    fx0, fy0, fx1, fy1 = json.loads(found.split(" at ")[1].split(" (")[0])
    assert x0 <= fx0 < fx1 <= x1 and y0 <= fy0 < fy1 <= y1
    assert abs(m.rust_pct - scene.truth_pct) <= 3.0


# casts that keep a white card unclipped: the amber and blue casts above, scaled so that
# their strongest channel is 1 (a camera exposed for the white card)
WHITE_CARD_CASTS = [(1.0, 0.83, 0.62), (0.64, 0.8, 1.0)]


@pytest.mark.parametrize("cast", WHITE_CARD_CASTS, ids=["amber", "blue"])
@pytest.mark.parametrize("pct", SHARES)
def test_white_card_on_white_paper_found_without_a_box(tmp_path, pct, cast):
    # card = "auto" finds a white card about 3 L* from the paper (WHITE_CARD on
    # BACKGROUND) by its outline; issue 20's +-3 points under a cast corrected by a card
    scene = render(pct, seed=600 + pct, size=SMALL, cast=cast, card=True,
                   card_colour=WHITE_CARD)
    m = measure_coverage(_save(scene, tmp_path), PhotoSettings(card="auto"))
    found = next(n for n in m.notes if "card found" in n)
    fx0, fy0, fx1, fy1 = json.loads(found.split(" at ")[1].split(" (")[0])
    x0, y0, x1, y1 = scene.card
    assert x0 <= fx0 < fx1 <= x1 and y0 <= fy0 < fy1 <= y1
    assert m.white_balance == "white card" and max(m.gains) / min(m.gains) > 1.2
    assert abs(m.rust_pct - scene.truth_pct) <= 3.0, (m.rust_pct, scene.truth_pct, m.rule)


def test_auto_card_without_a_card_in_the_frame_is_refused(tmp_path):
    scene = render(30, seed=410, size=SMALL, cast=WHITE_CARD_CASTS[0])
    path = _save(scene, tmp_path, "B02-R1_after.png")
    with pytest.raises(PhotoError, match=r"no card found in \S*B02-R1_after.png; give "
                       r"card = \[x0, y0, x1, y1\]") as err:
        measure_coverage(path, PhotoSettings(card="auto"))
    assert err.value.exit_code == 1


def test_auto_card_takes_no_rust_flake_or_overexposed_card(tmp_path):
    # a rectangle of dark rust on the paper is flat and rectangular but not neutral
    # (C*/L* about 1; its C* of 26 alone would pass for a card under a lamp), and a white
    # card clipped by the strong amber cast cannot set the white balance: both refused
    flake = render(30, seed=420, size=SMALL, card=True, card_colour=DARK_RUST)
    with pytest.raises(PhotoError, match="no card found in"):
        measure_coverage(_save(flake, tmp_path, "flake.png"), PhotoSettings(card="auto"))
    clipped = render(30, seed=421, size=SMALL, cast=(1.2, 1.0, 0.75), card=True,
                     card_colour=WHITE_CARD)
    with pytest.raises(PhotoError, match="no card found in"):
        measure_coverage(_save(clipped, tmp_path, "clipped.png"), PhotoSettings(card="auto"))


def test_sensitivity_to_the_cut(tmp_path):
    # a crisp two-colour coupon: no rust pixel within 5 above the cut, so raising it
    # changes nothing (Otsu's cut on two exact colours sits at the steel's edge: the first
    # of equal maxima, so lowering it can take in steel); a blurred one: the edges move
    # with the cut, the range widens and holds the share
    crisp = render(40, seed=51, size=SMALL, noise=0.0, blur=0.0)
    m = measure_coverage(_save(crisp, tmp_path, "crisp.png"),
                         PhotoSettings(region=crisp.plate, smoothing=0.0))
    assert m.rust_pct_low == m.rust_pct == pytest.approx(crisp.truth_pct)
    assert m.rust_pct_high >= m.rust_pct
    soft = render(40, seed=51, size=SMALL, blur=3.0)
    s = measure_coverage(_save(soft, tmp_path, "soft.png"))
    assert s.rust_pct_low < s.rust_pct < s.rust_pct_high
    r = s.rgb  # the share with the cut moved, recomputed from the classified pixels
    from skimage.color import rgb2lab
    from skimage.filters import gaussian

    v = gaussian(rustness(rgb2lab(r)), sigma=1.0, preserve_range=True)[s.coupon_mask]
    local = edge_cut(gaussian(rustness(rgb2lab(r)), sigma=1.0, preserve_range=True),
                     s.coupon_mask, s.threshold)[s.coupon_mask]
    assert s.rust_pct_high == pytest.approx(100 * np.mean(v > local - 5.0))
    assert s.rust_pct_low == pytest.approx(100 * np.mean(v > local + 5.0))


def test_truncated_and_oversized_images_are_refused(tmp_path, monkeypatch):
    from PIL import Image as PILImage

    good = _save(render(20, seed=61, size=SMALL), tmp_path, "whole.jpg", quality=90)
    cut = tmp_path / "cut.jpg"
    cut.write_bytes(good.read_bytes()[: good.stat().st_size // 2])
    with pytest.raises(PhotoError, match="cut.jpg could not be decoded") as err:
        measure_coverage(cut)
    assert err.value.exit_code == 2
    # Pillow's decompression-bomb guard, lowered so that a small photo trips it
    monkeypatch.setattr(PILImage, "MAX_IMAGE_PIXELS", 1000)
    with pytest.raises(PhotoError, match="whole.jpg is not an image that can be read"):
        measure_coverage(good)


def test_palette_png_is_measured_and_16_bit_greyscale_refused(tmp_path):
    scene = render(30, seed=71, size=SMALL, noise=0.0, blur=0.0)
    p = tmp_path / "palette.png"
    Image.fromarray(scene.rgb).convert("P", palette=Image.Palette.ADAPTIVE, colors=16).save(p)
    assert Image.open(p).mode == "P"
    m = measure_coverage(p, PhotoSettings(smoothing=0.0))
    assert abs(m.rust_pct - scene.truth_pct) <= 2.0
    deep = tmp_path / "deep.png"
    Image.fromarray((np.linspace(0, 65535, 64 * 64).reshape(64, 64)).astype(np.uint16)
                    ).save(deep)
    assert Image.open(deep).mode.startswith("I")
    with pytest.raises(PhotoError, match="deep.png has no colour"):
        measure_coverage(deep)


def test_a_coupon_cut_by_the_frame_is_noted(tmp_path):
    img = np.full((120, 160, 3), 235, np.uint8)
    img[20:120, 30:130] = (140, 140, 145)  # runs off the bottom edge
    p = tmp_path / "cut-off.png"
    Image.fromarray(img).save(p)
    m = measure_coverage(p)
    assert any("touches the edge" in n for n in m.notes)
    whole = measure_coverage(_save(render(10, seed=81, size=SMALL), tmp_path))
    assert not any("touches the edge" in n for n in whole.notes)


@pytest.mark.parametrize("pct", [0, 15, 60, 100])
def test_rust_of_several_shades(tmp_path, pct):
    # dark brown, orange-brown and light orange rust on one coupon: still rust against
    # steel; all rusted in three shades is not split into "rust" and "steel" by Otsu
    scene = render(pct, seed=500 + pct, size=SMALL, shades=(DARK_RUST, RUST, LIGHT_RUST))
    m = measure_coverage(_save(scene, tmp_path))
    assert abs(m.rust_pct - scene.truth_pct) <= 2.0, (m.rust_pct, scene.truth_pct, m.rule)


@settings(max_examples=12, deadline=None, derandomize=True)
@given(pct=st.floats(0, 100), seed=st.integers(0, 10_000),
       red=st.floats(0.94, 1.06), blue=st.floats(0.94, 1.06))
def test_share_within_2_points_on_drawn_scenes(tmp_path_factory, pct, seed, red, blue):
    # hypothesis draws the share, the seed and a mild white-balance shift (no card)
    scene = render(pct, seed=seed, size=(160, 200), cast=(red, 1.0, blue))
    folder = tmp_path_factory.mktemp("drawn")
    m = measure_coverage(_save(scene, folder))
    assert abs(m.rust_pct - scene.truth_pct) <= 2.0, (m.rust_pct, scene.truth_pct, m.rule)


def test_auto_card_leaves_the_whole_card_out_of_the_coupon(tmp_path):
    # the found card's rim (outside the inner part that sets the white balance) stands out
    # from the paper too; left in, it raised the outline's Otsu cut and lost 6 % of the
    # coupon's steel in this grainy scene (where it was seen): now the coupon holds the
    # drawn plate as with the card's whole box given
    seed = 9202
    pct = float(np.random.default_rng(seed).uniform(0, 100))
    scene = render(pct, seed=seed, size=SMALL, cast=WHITE_CARD_CASTS[0], card=True,
                   noise=0.04)
    path = _save(scene, tmp_path)
    auto = measure_coverage(path, PhotoSettings(card="auto"))
    boxed = measure_coverage(path, PhotoSettings(card=scene.card))
    x0, y0, x1, y1 = scene.plate
    assert auto.coupon_px >= 0.98 * (x1 - x0) * (y1 - y0)
    assert abs(auto.coupon_px - boxed.coupon_px) <= 0.005 * boxed.coupon_px
