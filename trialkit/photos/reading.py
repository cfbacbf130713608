"""Reading a photograph: decoded by Pillow, turned upright, as RGB floats in 0..1.

Any format Pillow reads (PNG, JPEG, TIFF, WebP ...).  The EXIF orientation is applied
(``PIL.ImageOps.exif_transpose``), so pixel boxes are those of the photo as a viewer shows
it.  Transparent pixels are laid over white; 16-bit images are scaled to 0..1.  A photo
without colour (greyscale, or RGB with equal channels) is refused: rust is told from steel
by its colour.

Examples
--------
>>> import tempfile, pathlib
>>> import numpy as np
>>> from PIL import Image
>>> p = pathlib.Path(tempfile.mkdtemp()) / "c.png"
>>> Image.fromarray(np.full((20, 30, 3), [200, 120, 60], np.uint8)).save(p)
>>> photo = read_photo(p)
>>> photo.rgb.shape, round(float(photo.rgb[0, 0, 0]), 3), len(photo.sha256)
((20, 30, 3), 0.784, 64)
"""

from __future__ import annotations

import hashlib
import os
import warnings
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from trialkit.exceptions import EXIT_REFUSED, PhotoError

#: Smallest side measured (pixels); a smaller image holds too little to classify.
MIN_SIDE = 16
#: Largest file read (bytes).
MAX_BYTES = 200 * 1024 * 1024


@dataclass
class Photo:
    """A decoded photograph.

    Attributes
    ----------
    path : Path
    sha256 : str
        SHA-256 of the file's bytes (as stored; before any decoding).
    rgb : ndarray
        ``(height, width, 3)`` floats in 0..1, upright, scaled to at most ``max_side``.
    scale : float
        Measured pixels per pixel of the file as viewed (1.0 when not scaled down).
    original_size : tuple
        ``(width, height)`` as viewed (EXIF orientation applied).
    notes : list of str
        What was done to read it (orientation, transparency, scaling).
    """

    path: Path
    sha256: str
    rgb: np.ndarray = field(repr=False)
    scale: float = 1.0
    original_size: tuple[int, int] = (0, 0)
    notes: list[str] = field(default_factory=list)


def file_sha256(path: str | os.PathLike) -> str:
    """SHA-256 of a file's bytes."""
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for chunk in iter(lambda: fh.read(1 << 20), b""):
            h.update(chunk)
    return h.hexdigest()


def read_photo(path: str | os.PathLike, *, max_side: int = 1200) -> Photo:
    """Read ``path`` as an upright RGB photograph.

    Raises
    ------
    FileNotFoundError
        No such file.
    PhotoError
        Empty file, not an image Pillow can read, too small, too large, or without colour
        (exit code 2 for the unreadable, 1 for a readable image that cannot be measured).
    """
    from PIL import Image, ImageOps, UnidentifiedImageError

    path = Path(path)
    size = path.stat().st_size  # FileNotFoundError names the file
    if path.is_dir():
        raise PhotoError(f"{path} is a folder, not a photo; name the image files.",
                         exit_code=2)
    if size == 0:
        raise PhotoError(f"{path} is empty (zero bytes): not a photo. Copy the photo from "
                         "the camera again.", exit_code=2)
    if size > MAX_BYTES:
        raise PhotoError(f"{path} holds {size / 1e6:.0f} MB, more than the "
                         f"{MAX_BYTES // (1024 * 1024)} MB a photo may have; export it "
                         "smaller.", exit_code=2)
    sha = file_sha256(path)
    notes: list[str] = []
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("error", Image.DecompressionBombWarning)
            with Image.open(path) as img:
                img.load()
                orientation = img.getexif().get(0x0112, 1)
                upright = ImageOps.exif_transpose(img)
                if orientation not in (None, 1):
                    notes.append(f"EXIF orientation {orientation} applied")
                arr = _as_rgb(upright, notes)
    except (UnidentifiedImageError, Image.DecompressionBombError,
            Image.DecompressionBombWarning) as exc:
        raise PhotoError(f"{path} is not an image that can be read ({type(exc).__name__}: "
                         f"{str(exc)[:120]}). Give a PNG, JPEG or TIFF photo.",
                         exit_code=2) from None
    except (OSError, ValueError, SyntaxError) as exc:
        raise PhotoError(f"{path} could not be decoded as an image ({str(exc)[:120]}); the "
                         "file may be truncated or damaged. Copy it again.",
                         exit_code=2) from None
    h, w = arr.shape[:2]
    if min(h, w) < MIN_SIDE:
        raise PhotoError(f"{path} is {w} x {h} pixels: too small to measure (at least "
                         f"{MIN_SIDE} pixels a side). Give the full-size photo.",
                         exit_code=EXIT_REFUSED)
    spread = float(np.max(np.ptp(arr, axis=2)))
    if spread < 2.0 / 255.0:
        raise PhotoError(f"{path} has no colour (greyscale): rust is told from steel by its "
                         "colour. Give a colour photo.", exit_code=EXIT_REFUSED)
    scale = 1.0
    if max(h, w) > max_side:
        from skimage.transform import resize

        scale = max_side / max(h, w)
        shape = (max(1, round(h * scale)), max(1, round(w * scale)))
        arr = resize(arr, shape, order=1, anti_aliasing=True, preserve_range=True)
        notes.append(f"scaled from {w} x {h} to {shape[1]} x {shape[0]} pixels")
    return Photo(path, sha, np.clip(arr, 0.0, 1.0), scale, (w, h), notes)


def _as_rgb(img, notes: list[str]) -> np.ndarray:
    """RGB floats 0..1 of a Pillow image of any mode."""
    mode = img.mode
    if mode in ("I;16", "I;16B", "I;16L", "I", "F"):
        grey = np.asarray(img, dtype=float)
        top = 65535.0 if mode.startswith("I;16") or grey.max() > 255 else 255.0
        grey = grey / top
        return np.repeat(grey[..., None], 3, axis=2)
    if "A" in mode or (mode == "P" and "transparency" in img.info):
        rgba = np.asarray(img.convert("RGBA"), dtype=float) / 255.0
        alpha = rgba[..., 3:4]
        if float(alpha.min()) < 1.0:
            notes.append("transparent pixels laid over white")
        return rgba[..., :3] * alpha + (1.0 - alpha)
    arr = np.asarray(img.convert("RGB"))
    if arr.dtype != np.uint8:  # pragma: no cover - Pillow's RGB is 8-bit
        arr = arr.astype(float) / float(np.iinfo(arr.dtype).max)
        return arr
    return arr.astype(float) / 255.0
