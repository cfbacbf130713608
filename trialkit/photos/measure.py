"""The rusted share of a coupon's exposed face, measured from a photograph.

Method (every setting is recorded with the result, :class:`PhotoCoverage`):

1. **Read** the photo upright (:func:`trialkit.photos.reading.read_photo`).
2. **White balance** (when a card box is given, or ``card = "auto"`` finds a grey or
   white card by its outline, :mod:`trialkit.photos.card`; none found: refused): each
   channel is scaled so that the card's median colour becomes neutral grey of the same
   mean (a von Kries-type gain;
   applied to the sRGB values, which for the near power-law sRGB curve is close to the
   same gain on linear light).
3. **Coupon**: the box the user gives (``region``), or found by its outline: the colour
   difference (CIE 1976 ΔE*ab, ``skimage.color.deltaE_cie76``) of every pixel from the
   background, whose colour is the median of the photo's outer frame; a rough mask from
   Otsu's threshold on that difference (``skimage.filters.threshold_otsu``), the outline
   placed in the middle of each blurred edge by a marker-controlled watershed
   (``skimage.segmentation.watershed``, :func:`trialkit.photos.regions.coupon_outline`),
   the largest connected region (``skimage.measure.label``) with its holes filled.  No
   region at least :data:`MIN_COUPON_SHARE` of the photo and
   :data:`MIN_CONTRAST` ΔE from the background: "no coupon found".
4. **Rust-ness** of each pixel: its CIELAB colour (``skimage.color.rgb2lab``, D65)
   projected on the warm hue direction h = :data:`RUST_HUE_DEG` in the a*-b* plane,
   ``a* cos h + b* sin h`` — rust is high in a* and b*, bare steel is grey (near 0).
   Smoothed by a Gaussian of ``smoothing`` pixels (default 1, ``skimage.filters.gaussian``)
   against sensor noise.
5. **Threshold**: Otsu's threshold (``skimage.filters.threshold_otsu``) on the coupon's
   rust-ness, used only when its two classes are *two*: their mean rust-ness at least
   ``min_separation`` apart and on either side of ``rust_cut``.  Otherwise (a clean
   coupon, or one rusted all over) Otsu would split one class in two and invent rust or
   steel, so the fixed cut ``rust_cut`` decides instead, and the result says so.  With
   ``threshold = "marked"`` the cut lies half-way between the mean rust-ness of the pixels
   marked as rust and those marked as steel.
6. **Share**: rust pixels / coupon pixels, in percent; and the shares with the cut moved
   :data:`CUT_SENSITIVITY` either way (``rust_pct_low``, ``rust_pct_high``): how much of
   the answer hangs on the cut (blurred or faint rust edges widen it).  This is the
   sensitivity to the classification, not the whole uncertainty of a photo (lighting,
   glare and the angle of view are not in it).

The defaults (``min_separation`` 12, ``rust_cut`` 15 CIELAB units) are our own settings,
chosen so that bare grey steel (|a*|, |b*| of a few units under neutral light) and
brown-orange rust (b* of 20 to 40) fall on either side; they are not a published value.

Examples
--------
>>> import tempfile, pathlib
>>> import numpy as np
>>> from PIL import Image
>>> img = np.full((120, 160, 3), 235, np.uint8)          # plain light background
>>> img[20:100, 30:130] = (140, 140, 145)                  # a grey steel coupon
>>> img[20:60, 30:80] = (150, 80, 40)                      # a rusted quarter
>>> p = pathlib.Path(tempfile.mkdtemp()) / "B01-R1_after.png"
>>> Image.fromarray(img).save(p)
>>> m = measure_coverage(p)
>>> round(m.rust_pct), m.rule, m.coupon_found_by, m.d610_grade
(25, 'otsu', 'outline', 2)
"""

from __future__ import annotations

import math
import os
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from trialkit.exceptions import EXIT_REFUSED, PhotoError
from trialkit.photos.edge_cut import edge_cut
from trialkit.photos.reading import Photo, read_photo
from trialkit.photos.regions import MIN_CONTRAST, background_colour, coupon_outline
from trialkit.photos.settings import PhotoSettings
from trialkit.responses.rust_grade import d610_grade

#: Hue angle (degrees in the a*-b* plane) of the rust-ness axis: between red (0) and
#: yellow (90), where iron oxides and hydroxides lie (common practice: rust is
#: orange-brown).
RUST_HUE_DEG = 60.0
#: The cut is moved by this much (CIELAB units) either way to show how much the share
#: depends on it (``rust_pct_low`` .. ``rust_pct_high``).
CUT_SENSITIVITY = 5.0
#: The coupon found by its outline must cover at least this share of the photo (and
#: differ from the background by MIN_CONTRAST, see trialkit.photos.regions).
MIN_COUPON_SHARE = 0.02


@dataclass
class PhotoCoverage:
    """The rusted share of one photographed coupon face.

    Attributes
    ----------
    photo : str
        File name of the photo.
    sha256 : str
        SHA-256 of the photo file.
    rust_pct : float
        Rusted share of the coupon's face, percent (0-100).
    rust_pct_low, rust_pct_high : float
        The share with the cut raised / lowered by :data:`CUT_SENSITIVITY`.
    d610_grade : int
        ASTM D610 rust grade of that share (10 best .. 0).
    coupon_px, rust_px : int
        Pixels of the coupon, and of rust on it, as measured (after any scaling).
    coupon_found_by : str
        ``"outline"`` or ``"region"``.
    white_balance : str
        ``"grey card"`` or ``"white card"`` (the card that set it, :func:`card_kind`) or
        ``"none"``; ``gains`` the channel gains applied.
    rule : str
        ``"otsu"``, ``"fixed"`` (Otsu's classes were not two) or ``"marked"``.
    threshold : float
        Rust-ness cut used (CIELAB units).
    separation : float or None
        Mean rust-ness of Otsu's upper class minus the lower one's.
    size : tuple
        ``(width, height)`` measured; ``scale`` to the file as viewed.
    settings : PhotoSettings
    notes : list of str
    """

    photo: str
    sha256: str
    rust_pct: float
    d610_grade: int
    coupon_px: int
    rust_px: int
    coupon_found_by: str
    white_balance: str
    gains: tuple[float, float, float]
    rule: str
    threshold: float
    separation: float | None
    size: tuple[int, int]
    scale: float
    settings: PhotoSettings = field(repr=False)
    rust_pct_low: float = math.nan
    rust_pct_high: float = math.nan
    notes: list[str] = field(default_factory=list, repr=False)
    path: Path | None = field(default=None, repr=False)
    rgb: np.ndarray | None = field(default=None, repr=False, compare=False)
    coupon_mask: np.ndarray | None = field(default=None, repr=False, compare=False)
    rust_mask: np.ndarray | None = field(default=None, repr=False, compare=False)

    @property
    def reading_key(self) -> str:
        """SHA-256 of the photo's hash and the method line: the record log's ingest key, so
        the same photo measured again with other settings is a new reading, and measured
        again with the same settings is recognised as already ingested."""
        import hashlib

        return hashlib.sha256(f"{self.sha256}\n{self.method_text()}".encode()).hexdigest()

    def method_text(self) -> str:
        """One line naming the method and its settings (the record log's source)."""
        sep = "" if self.separation is None else f", classes {self.separation:.1f} apart"
        wb = (f"white balance from the {self.white_balance} "
              + "/".join(f"{g:.2f}" for g in self.gains)
              if self.white_balance != "none" else "no white balance")
        s = self.settings
        return (f"coupon by {self.coupon_found_by}; {wb}; CIELAB rust-ness (hue "
                f"{RUST_HUE_DEG:g} deg) {self.rule} cut {self.threshold:.1f}{sep}; "
                f"min_separation {s.min_separation:g}, rust_cut {s.rust_cut:g}, "
                f"smoothing {s.smoothing:g}; "
                f"{self.size[0]}x{self.size[1]} px")

    def to_dict(self) -> dict[str, Any]:
        """Plain data for JSON (no pixel arrays)."""
        return {"photo": self.photo, "sha256": self.sha256, "rust_pct": self.rust_pct,
                "rust_pct_low": self.rust_pct_low, "rust_pct_high": self.rust_pct_high,
                "d610_grade": self.d610_grade, "coupon_px": self.coupon_px,
                "rust_px": self.rust_px, "coupon_found_by": self.coupon_found_by,
                "white_balance": self.white_balance, "gains": list(self.gains),
                "rule": self.rule, "threshold": self.threshold,
                "separation": self.separation, "size": list(self.size),
                "scale": self.scale, "method": self.method_text(),
                "settings": self.settings.to_dict(), "notes": list(self.notes)}


def rustness(lab: np.ndarray) -> np.ndarray:
    """Rust-ness of CIELAB colours: a* cos h + b* sin h with h = :data:`RUST_HUE_DEG`.

    Examples
    --------
    >>> float(rustness(np.array([[50.0, 0.0, 0.0]]))[0])
    0.0
    """
    h = math.radians(RUST_HUE_DEG)
    return lab[..., 1] * math.cos(h) + lab[..., 2] * math.sin(h)


def _scaled_box(box, photo: Photo, what: str) -> tuple[int, int, int, int]:
    h, w = photo.rgb.shape[:2]
    ow, oh = photo.original_size
    x0, y0, x1, y1 = box
    if x1 > ow or y1 > oh:
        raise PhotoError(f"{photo.path}: the {what} box {list(box)} reaches outside the photo "
                         f"({ow} x {oh} pixels as viewed). Give a box inside the photo.",
                         exit_code=EXIT_REFUSED)
    s = photo.scale
    b = (int(x0 * s), int(y0 * s), max(int(x0 * s) + 1, min(w, math.ceil(x1 * s))),
         max(int(y0 * s) + 1, min(h, math.ceil(y1 * s))))
    return b


def _white_balance(photo: Photo, settings: PhotoSettings, notes: list[str]
                   ) -> tuple[np.ndarray, tuple, tuple | None]:
    """(balanced rgb, gains, the card's whole box in measured pixels or None).

    The card's colour is the median of ``box``; the whole box (for ``auto``, the found
    card with its rim) is left out of the coupon.
    """
    if settings.card is None:
        return photo.rgb, (1.0, 1.0, 1.0), None
    if settings.card == "auto":
        from trialkit.photos.card import find_card_with_outline

        found = find_card_with_outline(photo.rgb)
        if found is None:
            raise PhotoError(
                f"no card found in {photo.path}; give card = [x0, y0, x1, y1] ([photos] "
                "card, or --card X0,Y0,X1,Y1: the card's box in pixels as viewed), or "
                "leave card out for no white-balance correction. card = \"auto\" finds a "
                "flat, nearly neutral, unclipped rectangle by its outline, apart from the "
                "coupon and the photo's border (see trialkit.photos.card).",
                exit_code=EXIT_REFUSED)
        box, whole = found
        shown = [round(v / photo.scale) for v in box]
        notes.append(f"card found at {shown} (x0, y0, x1, y1)")
        what = f"found at {shown}"
    else:
        box = whole = _scaled_box(settings.card, photo, "card")
        what = f"box {list(settings.card)}"
    x0, y0, x1, y1 = box
    card = np.median(photo.rgb[y0:y1, x0:x1].reshape(-1, 3), axis=0)
    if float(card.min()) < 0.05:
        raise PhotoError(f"{photo.path}: the card ({what}) is nearly black in one channel "
                         f"(median {np.round(card, 3).tolist()}); it cannot set the white "
                         "balance. Check the card box.", exit_code=EXIT_REFUSED)
    gains = card.mean() / card
    return np.clip(photo.rgb * gains, 0.0, 1.0), tuple(float(g) for g in gains), whole


def card_kind(lab: np.ndarray, card_box: tuple) -> str:
    """``"white card"`` or ``"grey card"``: what the card in ``card_box`` looks like.

    A card at least as light as the background (the frame's median L*, on the usual
    white or light paper) is called white, a darker one grey.  The name only describes the
    card; the correction is the same for both.  On a background darker than the card a
    grey card is called white.

    Examples
    --------
    >>> from skimage.color import rgb2lab
    >>> img = np.full((40, 40, 3), 0.92); img[10:20, 10:20] = 0.96; img[25:35, 25:35] = 0.7
    >>> card_kind(rgb2lab(img), (10, 10, 20, 20)), card_kind(rgb2lab(img), (25, 25, 35, 35))
    ('white card', 'grey card')
    """
    x0, y0, x1, y1 = card_box
    card = float(np.median(lab[y0:y1, x0:x1, 0]))
    return "white card" if card >= float(background_colour(lab)[0]) else "grey card"


def _find_coupon(photo: Photo, lab: np.ndarray, settings: PhotoSettings,
                 card: tuple | None, notes: list[str]) -> np.ndarray:
    """Boolean mask of the coupon (the region's box, or the largest outlined region)."""
    h, w = lab.shape[:2]
    mask = np.zeros((h, w), bool)
    if settings.region is not None:
        x0, y0, x1, y1 = _scaled_box(settings.region, photo, "region")
        mask[y0:y1, x0:x1] = True
    else:
        mask, diff = coupon_outline(lab, exclude=card)
        contrast = float(np.median(diff[mask])) if mask.any() else 0.0
        if mask.sum() < MIN_COUPON_SHARE * h * w or contrast < MIN_CONTRAST:
            raise PhotoError(
                f"{photo.path}: no coupon found (no region of at least "
                f"{MIN_COUPON_SHARE:.0%} of the photo stands out from the background by "
                f"{MIN_CONTRAST:g} CIELAB units). Photograph the coupon on a plain "
                "background of another colour (white, black or blue) with a margin of "
                "background all round, or give its box with --region / [photos] region.",
                exit_code=EXIT_REFUSED)
    if card is not None:
        cx0, cy0, cx1, cy1 = card
        mask[cy0:cy1, cx0:cx1] = False
    if settings.region is None and mask.any() and (
            mask[0].any() or mask[-1].any() or mask[:, 0].any() or mask[:, -1].any()):
        notes.append("the coupon touches the edge of the photo: part of it may lie outside "
                     "the frame, and the background is judged from the frame; leave a margin")
    if not mask.any():
        raise PhotoError(f"{photo.path}: the coupon region is empty once the card box is "
                         "taken out. Give a region that does not lie inside the card.",
                         exit_code=EXIT_REFUSED)
    return mask


def _mean_at(values: np.ndarray, pixels, photo: Photo, what: str) -> float:
    h, w = values.shape
    out = []
    for x, y in pixels:
        xs, ys = int(x * photo.scale), int(y * photo.scale)
        if not (0 <= xs < w and 0 <= ys < h):
            raise PhotoError(f"{photo.path}: the {what} pixel {[x, y]} lies outside the "
                             f"photo ({photo.original_size[0]} x {photo.original_size[1]}).",
                             exit_code=EXIT_REFUSED)
        out.append(values[max(0, ys - 1):ys + 2, max(0, xs - 1):xs + 2].mean())
    return float(np.mean(out))


def _cut(values: np.ndarray, r: np.ndarray, photo: Photo, settings: PhotoSettings
         ) -> tuple[float, str, float | None]:
    """The rust-ness cut: (threshold, rule, separation)."""
    from skimage.filters import threshold_otsu

    if settings.threshold == "marked":
        if not (settings.rust_pixels and settings.steel_pixels):
            raise PhotoError(f"{photo.path}: the marked threshold needs pixels marked as rust "
                             "and as steel (--rust-pixel X,Y and --steel-pixel X,Y).",
                             exit_code=EXIT_REFUSED)
        rust = _mean_at(r, settings.rust_pixels, photo, "rust")
        steel = _mean_at(r, settings.steel_pixels, photo, "steel")
        if rust <= steel:
            raise PhotoError(f"{photo.path}: the pixels marked as rust (rust-ness {rust:.1f}) "
                             f"are not warmer than those marked as steel ({steel:.1f}); check "
                             "which is which.", exit_code=EXIT_REFUSED)
        return (rust + steel) / 2.0, "marked", rust - steel
    if float(np.ptp(values)) == 0.0:
        return settings.rust_cut, "fixed", None
    t = float(threshold_otsu(values))
    low, high = values[values <= t], values[values > t]
    if not len(low) or not len(high):
        return settings.rust_cut, "fixed", None
    separation = float(high.mean() - low.mean())
    two = (separation >= settings.min_separation
           and low.mean() < settings.rust_cut < high.mean())
    return (t, "otsu", separation) if two else (settings.rust_cut, "fixed", separation)


def measure_coverage(path: str | os.PathLike, settings: PhotoSettings | None = None
                     ) -> PhotoCoverage:
    """Measure the rusted share of the coupon in the photo at ``path``.

    Parameters
    ----------
    path : path-like
        A colour photo of one coupon face on a plain background.
    settings : PhotoSettings, optional
        Region, card, threshold rule (defaults: outline, no card, Otsu).

    Returns
    -------
    PhotoCoverage

    Raises
    ------
    PhotoError
        The file is not a readable image, is empty or without colour, no coupon is
        found, or ``card = "auto"`` finds no card; the message names the file.
    """
    from skimage.color import rgb2lab
    from skimage.filters import gaussian

    settings = settings or PhotoSettings()
    photo = read_photo(path, max_side=settings.max_side)
    notes = list(photo.notes)
    rgb, gains, card = _white_balance(photo, settings, notes)
    lab = rgb2lab(rgb)
    mask = _find_coupon(photo, lab, settings, card, notes)
    r = rustness(lab)
    if settings.smoothing > 0:
        r = gaussian(r, sigma=settings.smoothing, preserve_range=True)
    values = r[mask]
    threshold, rule, separation = _cut(values, r, photo, settings)
    local = edge_cut(r, mask, threshold)[mask]
    n_coupon = int(mask.sum())
    rust = np.zeros(mask.shape, bool)
    rust[mask] = values > local
    n_rust = int(rust.sum())
    pct = 100.0 * n_rust / n_coupon
    low = 100.0 * float((values > local + CUT_SENSITIVITY).sum()) / n_coupon
    high = 100.0 * float((values > local - CUT_SENSITIVITY).sum()) / n_coupon
    if rule == "fixed" and separation is not None \
            and separation >= settings.min_separation:
        notes.append(f"the coupon's colours form two classes {separation:.1f} apart on the "
                     "same side of the cut: rust of two shades, or a colour cast of the "
                     "light; put a grey card in the frame (--card) to correct a cast")
    elif rule == "fixed":
        notes.append(f"one class of colour on the coupon (Otsu's classes "
                     f"{'not separable' if separation is None else f'{separation:.1f} apart'}"
                     f"): the fixed cut {threshold:g} decided")
    return PhotoCoverage(
        photo=photo.path.name, sha256=photo.sha256, rust_pct=pct, d610_grade=d610_grade(pct),
        coupon_px=n_coupon, rust_px=n_rust,
        coupon_found_by="region" if settings.region is not None else "outline",
        white_balance="none" if card is None else card_kind(lab, card), gains=gains,
        rule=rule, threshold=threshold, separation=separation,
        size=(rgb.shape[1], rgb.shape[0]), scale=photo.scale, settings=settings,
        rust_pct_low=low, rust_pct_high=high, notes=notes,
        path=photo.path, rgb=rgb, coupon_mask=mask, rust_mask=rust)
