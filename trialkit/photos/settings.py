"""Settings of a coverage measurement, and the trial file's optional ``[photos]`` section.

Keys (all optional)::

    [photos]
    coverage_from = "hand"        # hand | photo: which coverage readings the analysis uses
    region = [40, 30, 600, 420]   # the coupon's box in the photos, x0, y0, x1, y1 (pixels)
    card = [620, 20, 700, 100]    # a grey or white card's box, for the white balance,
                                  # or "auto": a grey or white card found in the frame
    threshold = "otsu"            # otsu | marked
    rust_pixels = [[120, 80]]     # pixels marked as rust (x, y), for threshold = "marked"
    steel_pixels = [[300, 200]]   # pixels marked as bare steel
    min_separation = 12.0         # CIELAB units the two classes of Otsu must lie apart
    rust_cut = 15.0               # rust-ness above which a pixel is rust when they do not
    smoothing = 1.0               # Gaussian sigma (pixels) against sensor noise; 0 = none

A region and a card box are given once for a photo series (the camera on a stand, the
coupons laid in the same place); without a region the coupon is found by its outline
against a plain background.

Examples
--------
>>> from trialkit.problems import ProblemReport
>>> rep = ProblemReport("trial.toml")
>>> s = parse_photos_section({"coverage_from": "photo", "card": [0, 0, 20, 20]}, None, rep,
...                          "photos")
>>> len(rep), s.coverage_from, s.card
(0, 'photo', (0, 0, 20, 20))
>>> _ = parse_photos_section({"coverage_from": "eyes", "region": [5, 5, 1, 1]}, None, rep,
...                          "photos")
>>> rep.checks()
['unknown_choice', 'bad_box']
"""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass, replace
from typing import Any

from trialkit.problems import ProblemReport
from trialkit.trial.section_checks import unknown_keys

KEYS = ("coverage_from", "region", "card", "threshold", "rust_pixels", "steel_pixels",
        "min_separation", "rust_cut", "smoothing")
SOURCES = ("hand", "photo")
THRESHOLDS = ("otsu", "marked")

Box = tuple[int, int, int, int]
Pixel = tuple[int, int]


@dataclass(frozen=True)
class PhotoSettings:
    """How a photograph is measured (every field is recorded with the measurement).

    Attributes
    ----------
    coverage_from : str
        ``"hand"`` (default) or ``"photo"``: which coverage readings the analysis uses.
    region : tuple or None
        The coupon's box ``(x0, y0, x1, y1)`` in pixels of the photo as it is viewed (EXIF
        orientation applied); None: find the coupon by its outline.
    card : tuple, "auto" or None
        A grey or white card's box; ``"auto"``: find a grey or white card in the frame
        (:mod:`trialkit.photos.card`); None: no white-balance correction.
    threshold : str
        ``"otsu"`` (Otsu's threshold on the rust-ness of the coupon's pixels) or
        ``"marked"`` (half-way between the marked rust and steel pixels).
    rust_pixels, steel_pixels : tuple of (x, y)
        Pixels marked by the user, for ``threshold = "marked"``.
    min_separation : float
        Otsu's threshold is used only when its two classes' mean rust-ness lie at least
        this far apart (CIELAB units) and on either side of ``rust_cut``; otherwise the
        coupon is taken as one class and ``rust_cut`` decides.
    rust_cut : float
        Rust-ness (CIELAB units) above which a pixel is rust when Otsu's classes are not
        two (an all-steel or all-rust coupon).
    smoothing : float
        Sigma (pixels) of the Gaussian that smooths the rust-ness against sensor noise
        before the threshold; 0 for none (a rendered or noise-free image).
    max_side : int
        Photos are scaled down to at most this many pixels along their longer side before
        measuring (an area share does not change with scale).
    """

    coverage_from: str = "hand"
    region: Box | None = None
    card: Box | str | None = None
    threshold: str = "otsu"
    rust_pixels: tuple[Pixel, ...] = ()
    steel_pixels: tuple[Pixel, ...] = ()
    min_separation: float = 12.0
    rust_cut: float = 15.0
    smoothing: float = 1.0
    max_side: int = 1200

    def with_(self, **changes: Any) -> PhotoSettings:
        """A copy with ``changes`` (None values are ignored)."""
        return replace(self, **{k: v for k, v in changes.items() if v is not None})

    def to_dict(self) -> dict:
        """Plain data for JSON (boxes and pixels as lists)."""
        d = asdict(self)
        for key in ("region", "card"):
            d[key] = list(d[key]) if isinstance(d[key], tuple) else d[key]
        d["rust_pixels"] = [list(p) for p in self.rust_pixels]
        d["steel_pixels"] = [list(p) for p in self.steel_pixels]
        return d


def _box(raw: Any, key: str, where: str, problems: ProblemReport) -> Box | None:
    ok = (isinstance(raw, list) and len(raw) == 4
          and all(isinstance(v, int) and not isinstance(v, bool) for v in raw))
    if ok and 0 <= raw[0] < raw[2] and 0 <= raw[1] < raw[3]:
        return tuple(raw)  # type: ignore[return-value]
    problems.add(f"{where}.{key}", f"{key} must be a box [x0, y0, x1, y1] of whole pixels "
                 "with x0 < x1 and y0 < y1", value=raw,
                 fix=f"write e.g. {key} = [40, 30, 600, 420] (left, top, right, bottom)",
                 check="bad_box")
    return None


def _pixels(raw: Any, key: str, where: str, problems: ProblemReport) -> tuple[Pixel, ...]:
    ok = isinstance(raw, list) and 0 < len(raw) <= 1000 and all(
        isinstance(p, list) and len(p) == 2
        and all(isinstance(v, int) and not isinstance(v, bool) and v >= 0 for v in p)
        for p in raw)
    if ok:
        return tuple((p[0], p[1]) for p in raw)
    problems.add(f"{where}.{key}", f"{key} must be a list of [x, y] pixels (1 to 1000)",
                 value=raw, fix=f"write e.g. {key} = [[120, 80], [130, 95]]",
                 check="bad_pixels")
    return ()


def _number(raw: Any, key: str, where: str, problems: ProblemReport, default: float,
            lo: float, hi: float) -> float:
    if key not in raw:
        return default
    v = raw[key]
    if (isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v)
            or not lo <= v <= hi):
        problems.add(f"{where}.{key}", f"{key} must be a number from {lo} to {hi}", value=v,
                     fix=f"write e.g. {key} = {default}", check="out_of_range")
        return default
    return float(v)


def parse_photos_section(raw: Any, trial: Any, problems: ProblemReport,
                         where: str) -> PhotoSettings:
    """Parse the ``[photos]`` section; add problems to ``problems``, never raise.

    Parameters
    ----------
    raw : dict
        The section as read from TOML.
    trial : Trial or None
        The trial being loaded (not needed by this section).
    problems : ProblemReport
        Where problems go.
    where : str
        Key path of the section, for messages.
    """
    if not isinstance(raw, dict):
        problems.add(where, "[photos] must be a table of keys", value=raw,
                     fix="write [photos] followed by key = value lines", check="wrong_type")
        return PhotoSettings()
    unknown_keys(raw, KEYS, where, problems, "photos")
    out: dict[str, Any] = {}
    for key, allowed in (("coverage_from", SOURCES), ("threshold", THRESHOLDS)):
        if key in raw:
            if raw[key] in allowed:
                out[key] = raw[key]
            else:
                problems.add(f"{where}.{key}", f"{key} must be one of {', '.join(allowed)}",
                             value=raw[key], fix=f'write e.g. {key} = "{allowed[0]}"',
                             check="unknown_choice")
    for key in ("region", "card"):
        if key == "card" and raw.get(key) == "auto":
            out[key] = "auto"
        elif key in raw:
            out[key] = _box(raw[key], key, where, problems)
    for key in ("rust_pixels", "steel_pixels"):
        if key in raw:
            out[key] = _pixels(raw[key], key, where, problems)
    out["min_separation"] = _number(raw, "min_separation", where, problems, 12.0, 0.0, 100.0)
    out["rust_cut"] = _number(raw, "rust_cut", where, problems, 15.0, 0.0, 100.0)
    out["smoothing"] = _number(raw, "smoothing", where, problems, 1.0, 0.0, 10.0)
    settings = PhotoSettings(**out)
    if settings.threshold == "marked" and not (settings.rust_pixels and settings.steel_pixels):
        problems.add(f"{where}.threshold", 'threshold = "marked" needs rust_pixels and '
                     "steel_pixels", value="marked",
                     fix="mark a few pixels of each, or use threshold = \"otsu\"",
                     check="missing_pixels")
    return settings


def photo_settings(trial: Any) -> PhotoSettings:
    """The trial's parsed ``[photos]`` section (defaults when it has none)."""
    sec = (getattr(trial, "sections", None) or {}).get("photos")
    return sec if isinstance(sec, PhotoSettings) else PhotoSettings()
