"""The photos in the data-quality section: which coverages the responses use, every
coverage measured from a photo with its source, the agreement with the hand estimates
(Bland–Altman, ICC), and the overlay of each photo (the rust mask on the coupon) so a
reader can check the classification at a glance.
"""

from __future__ import annotations

import base64
from pathlib import Path

import pandas as pd

from trialkit.analysis.trial_data import TrialAnalysis
from trialkit.report.document import Block

#: At most this many overlays are shown (the rest are listed in the table).
MAX_OVERLAYS = 24
_READING = {"coverage_before_photo_pct": "before", "coverage_after_photo_pct": "after",
            "coverage_photo_pct": "inspection"}


def photo_blocks(data: TrialAnalysis) -> list[Block]:
    """Blocks for the photos of the trial (none when no photo was recorded)."""
    photos = data.photos
    if photos is None or not len(photos):
        return []
    used = ("the coverages measured from photos" if data.coverage_source == "photo"
            else "the hand estimates of coverage")
    blocks = [Block.para(f"{len(photos)} rust coverage(s) were measured from photos "
                         f"({photos.photo.nunique()} photo(s)). The responses use {used} "
                         f"([photos] coverage_from = \"{data.coverage_source}\"); both are "
                         "kept in the record log.")]
    agr = data.agreement
    if agr is not None:
        blocks.append(Block.para(agr.sentence()))
        blocks.append(Block.frame(pd.DataFrame([{
            "pairs": agr.n, "bias (photo - hand, points)": agr.bias,
            "SD of the differences": agr.sd, "lower limit (95 %)": agr.lower,
            "upper limit (95 %)": agr.upper, "ICC(A,1)": agr.icc}]),
            "Agreement of photo measurements with hand estimates (Bland–Altman limits: "
            "bias ± 1.96 SD; " + agr.icc_form + ")"))
        blocks += [Block.note(n) for n in agr.notes]
    else:
        blocks.append(Block.note("no coupon was read both by hand and from a photo, so "
                                 "their agreement cannot be given"))
    table = pd.DataFrame({
        "coupon": photos.coupon,
        "when": [_READING.get(f, f) + (f" {i}" if i else "")
                 for f, i in zip(photos.reading, photos.inspection, strict=True)],
        "rust (% of area)": photos.rust_pct, "photo": photos.photo,
        "SHA-256 (start)": photos.sha256.astype(str).str[:12], "method": photos.method})
    blocks.append(Block.frame(table.head(60).reset_index(drop=True),
                              "Coverages measured from photos (the source of each value)"))
    shown = photos[photos.overlay.astype(str) != ""].drop_duplicates("sha256")
    for r in shown.head(MAX_OVERLAYS).itertuples(index=False):
        png = base64.b64encode(Path(r.overlay).read_bytes()).decode("ascii")
        blocks.append(Block.figure(
            png, f"{r.photo}: {r.rust_pct:.1f} % rusted ({r.coupon}, "
                 f"{_READING.get(r.reading, r.reading)})",
            alt=f"photo {r.photo} of coupon {r.coupon} with the pixels classed as rust "
                "tinted blue and the coupon's outline in yellow"))
    missing = len(photos.drop_duplicates("sha256")) - len(shown)
    if missing:
        blocks.append(Block.note(f"{missing} photo(s) have no overlay file in "
                                 "photo-overlays/ (moved or not copied with the log)"))
    if len(shown) > MAX_OVERLAYS:
        blocks.append(Block.note(f"the first {MAX_OVERLAYS} of {len(shown)} overlays are "
                                 "shown; all are in photo-overlays/"))
    return blocks
