"""Photos measured as a batch, and their coverages entered into the record log.

Which coupon and which moment a photo shows comes from its file name,
``<coupon>_<when>.<ext>`` with ``when`` one of ``before``, ``after`` or ``i<n>`` (the n-th
inspection of a time-course trial), e.g. ``B03-R2_after.jpg`` — or is given for a single
photo.  A photo measurement is stored beside the hand estimate, never over it, in fields of
its own (:data:`PHOTO_FIELDS`): ``coverage_before_photo_pct`` and
``coverage_after_photo_pct`` on the coupon sheet, ``coverage_photo_pct`` at an inspection.
The trial file's ``[photos] coverage_from`` says which the analysis uses.

Each photo is one ingest of the record log: its SHA-256 is the ingest's, its source the
file name and the method with its settings, so ``trialkit history`` shows where each
value came from, and a photo read in twice changes nothing.  Every photo is measured and
checked before anything is written: one photo that cannot be read or measured refuses
the batch, naming the file, and the log is unchanged.

Examples
--------
>>> photo_target("B03-R2_after.jpg"), photo_target("B01-R1_i2.png")
(('B03-R2', 0, 'coverage_after_photo_pct'), ('B01-R1', 2, 'coverage_photo_pct'))
"""

from __future__ import annotations

import html
import os
import re
from collections.abc import Iterable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import pandas as pd

from trialkit.exceptions import PhotoError
from trialkit.photos.measure import PhotoCoverage, measure_coverage
from trialkit.photos.overlay import OVERLAY_FOLDER, overlay_file_name, write_overlay
from trialkit.photos.settings import PhotoSettings, photo_settings
from trialkit.records.fields import PHOTO_COVERAGE_FIELDS

#: The hand-recorded coverage field -> the field a photo measurement of it goes into.
PHOTO_FIELDS: dict[str, str] = {k: f.name for k, f in PHOTO_COVERAGE_FIELDS.items()}
SOURCE_PREFIX = "photo "
#: Joins the method line and the photo's own SHA-256 in the record log's source.
PHOTO_HASH_MARK = "; photo sha256 "
_NAME = re.compile(r"^(?P<coupon>.+?)[_ ](?P<when>before|after|i(?P<n>\d{1,3}))$", re.I)

TABLE_COLUMNS = ("photo", "rust_pct", "rust_pct_low", "rust_pct_high", "d610_grade", "rule",
                 "threshold", "coupon", "inspection", "field", "status", "overlay", "sha256")


def photo_target(name: str) -> tuple[str, int, str] | None:
    """``(coupon, inspection, field)`` a photo's file name names, or None."""
    m = _NAME.match(Path(name).stem)
    if not m:
        return None
    when = m.group("when").lower()
    if when == "before":
        return m.group("coupon"), 0, PHOTO_FIELDS["coverage_before_pct"]
    if when == "after":
        return m.group("coupon"), 0, PHOTO_FIELDS["coverage_after_pct"]
    return m.group("coupon"), int(m.group("n")), PHOTO_FIELDS["coverage_pct"]


def target_of(coupon: str, when: str) -> tuple[str, int, str]:
    """The target of a photo given by hand: ``when`` is before, after or i<n>."""
    t = photo_target(f"{coupon}_{when}")
    if t is None or t[0] != coupon:
        raise PhotoError(f"when must be before, after or i<n> (an inspection number); got "
                         f"{when!r}.", exit_code=2)
    return t


@dataclass
class PhotoBatch:
    """Photos measured together (and, when recorded, what the record log did).

    Attributes
    ----------
    measurements : list of PhotoCoverage
    table : DataFrame
        One row per photo: ``photo, rust_pct, rust_pct_low, rust_pct_high, d610_grade,
        rule, threshold, coupon, inspection, field, status, overlay, sha256`` (coupon to
        status empty when the photos were only measured).
    settings : PhotoSettings
    folder : Path or None
        The trial folder the coverages were recorded in.
    """

    measurements: list[PhotoCoverage]
    table: pd.DataFrame
    settings: PhotoSettings
    folder: Path | None = None
    notes: list[str] = field(default_factory=list)

    def to_dict(self) -> dict[str, Any]:
        """Plain data for JSON: per photo its share in percent and the method."""
        rows = self.table.to_dict("records")
        for row, m in zip(rows, self.measurements, strict=True):
            row["method"] = m.method_text()
            row["notes"] = list(m.notes)
        return {"folder": str(self.folder) if self.folder else None,
                "settings": self.settings.to_dict(), "photos": rows}

    def __repr__(self) -> str:
        where = f" recorded in {self.folder}" if self.folder else ""
        return (f"PhotoBatch({len(self.measurements)} photos{where})\n"
                + self.table[["photo", "rust_pct", "rule", "status"]].to_string(index=False))

    def _repr_html_(self) -> str:
        where = html.escape(f" recorded in {self.folder}") if self.folder else ""
        return (f"<p>{len(self.measurements)} photos{where}</p>"
                + self.table.to_html(index=False, escape=True))


def _measure_all(photos: Iterable[str | os.PathLike], settings: PhotoSettings
                 ) -> list[PhotoCoverage]:
    paths = [Path(p) for p in photos]
    if not paths:
        raise PhotoError("no photos given; name one or more image files.", exit_code=2)
    found, errors, codes = [], [], []
    for p in paths:
        try:
            found.append(measure_coverage(p, settings))
        except PhotoError as exc:
            errors.append(str(exc))
            codes.append(exc.exit_code)
        except (FileNotFoundError, IsADirectoryError, PermissionError) as exc:
            errors.append(f"{p}: {exc.strerror or exc}")
            codes.append(2)
    if errors:
        lines = "\n".join(f"  - {e}" for e in errors)
        raise PhotoError(f"{len(errors)} of {len(paths)} photo(s) could not be measured; "
                         f"nothing was recorded:\n{lines}", exit_code=max(codes))
    return found


def _row(m: PhotoCoverage, overlay: Path | None, target=None, status="") -> dict:
    coupon, inspection, fname = target or ("", None, "")
    return {"photo": m.photo, "rust_pct": m.rust_pct, "rust_pct_low": m.rust_pct_low,
            "rust_pct_high": m.rust_pct_high, "d610_grade": m.d610_grade,
            "rule": m.rule, "threshold": m.threshold, "coupon": coupon,
            "inspection": inspection, "field": fname, "status": status,
            "overlay": str(overlay) if overlay else "", "sha256": m.sha256}


def measure_photos(photos: Iterable[str | os.PathLike], settings: PhotoSettings | None = None,
                   *, overlays: str | os.PathLike | None = None) -> PhotoBatch:
    """Measure every photo; write the overlays into ``overlays`` when given.

    Raises
    ------
    PhotoError
        A photo cannot be read or measured (every such photo is named); nothing written.
    """
    settings = settings or PhotoSettings()
    found = _measure_all(photos, settings)
    rows = [_row(m, write_overlay(m, overlays) if overlays else None) for m in found]
    return PhotoBatch(found, pd.DataFrame(rows, columns=list(TABLE_COLUMNS)), settings)


def record_photos(folder: str | os.PathLike, photos: Iterable[str | os.PathLike], *,
                  settings: PhotoSettings | None = None,
                  targets: dict[str, tuple[str, int, str]] | None = None) -> PhotoBatch:
    """Measure photos of a trial's coupons and store their coverages in its record log.

    Parameters
    ----------
    folder : path-like
        The trial folder (its ``trial.toml`` and ``record-log.sqlite``).
    photos : iterable of path-like
        Photo files named ``<coupon>_<before|after|i<n>>.<ext>`` unless in ``targets``.
    settings : PhotoSettings, optional
        Default: the trial's ``[photos]`` section.
    targets : dict, optional
        Photo path (as given) -> ``(coupon, inspection, field)``, see :func:`target_of`.

    Returns
    -------
    PhotoBatch
        With ``status`` per photo: accepted, no_change or already_ingested; overlays in
        ``<folder>/photo-overlays/``.

    Raises
    ------
    PhotoError
        A photo names no planned coupon or inspection, or cannot be read or measured;
        every such photo is listed and nothing is stored.
    """
    from trialkit.planning.plan import load_plan
    from trialkit.records.config import sheet_config
    from trialkit.records.log import RecordLog

    photos = [Path(p) for p in photos]
    plan = load_plan(folder)
    trial_folder = Path(plan.trial.folder)
    settings = settings or photo_settings(plan.trial)
    targets = {str(k): v for k, v in (targets or {}).items()}
    coupons = set(plan.table["coupon"].astype(str))
    n_inspections = len(sheet_config(plan.trial).inspections_h)
    wanted, errors = [], []
    for p in photos:
        t = targets.get(str(p)) or photo_target(p.name)
        if t is None:
            errors.append(f"{p}: the file name does not say which coupon and when; name it "
                          "<coupon>_before, <coupon>_after or <coupon>_i<n> (e.g. "
                          "B01-R1_after.jpg), or give --coupon and --when")
        elif t[0] not in coupons:
            errors.append(f"{p}: coupon {t[0]!r} is not in the plan (coupons are named like "
                          f"{sorted(coupons)[0]})")
        elif t[2] == PHOTO_FIELDS["coverage_pct"] and t[1] < 1:
            errors.append(f"{p}: inspections are numbered from 1 (i1, i2, ...); got i{t[1]}")
        elif t[1] > n_inspections:
            errors.append(f"{p}: inspection {t[1]} is not planned (the trial plans "
                          f"{n_inspections} inspection(s))")
        wanted.append(t)
    if errors:
        lines = "\n".join(f"  - {e}" for e in errors)
        raise PhotoError(f"{len(errors)} of {len(photos)} photo(s) refused; nothing was "
                         f"recorded:\n{lines}")
    found = _measure_all(photos, settings)
    log = RecordLog.for_folder(trial_folder)
    log.check_plan(plan)
    rows = []
    for m, t in zip(found, wanted, strict=True):
        res = log.add_readings([(t[0], t[1], t[2], round(m.rust_pct, 4))],
                               source=f"{SOURCE_PREFIX}{m.photo}: {m.method_text()}"
                                      f"{PHOTO_HASH_MARK}{m.sha256}",
                               sha256=m.reading_key, fingerprint=str(plan.fingerprint))
        overlay = write_overlay(m, trial_folder / OVERLAY_FOLDER)
        rows.append(_row(m, overlay, t, res.status))
    return PhotoBatch(found, pd.DataFrame(rows, columns=list(TABLE_COLUMNS)), settings,
                      trial_folder)


PHOTO_TABLE_COLUMNS = ("coupon", "inspection", "reading", "rust_pct", "revision", "photo",
                       "method", "sha256", "overlay", "ingested_at")


def photo_readings(history: pd.DataFrame, folder: str | os.PathLike) -> pd.DataFrame:
    """Every coverage a photo gave, from the record log's history, with its overlay file.

    Parameters
    ----------
    history : DataFrame
        ``RecordLog.history()``.
    folder : path-like
        The trial folder (its ``photo-overlays/``).

    Returns
    -------
    DataFrame
        ``coupon, inspection, reading, rust_pct, revision, photo, method, sha256, overlay,
        ingested_at``; ``overlay`` is the overlay's path, or ``""`` when the file is not
        there (moved, or the log copied without it).
    """
    if history is None or not len(history):
        return pd.DataFrame(columns=list(PHOTO_TABLE_COLUMNS))
    rows = history[history["source"].astype(str).str.startswith(SOURCE_PREFIX)]
    out = []
    for r in rows.itertuples(index=False):
        name, _, method = str(r.source)[len(SOURCE_PREFIX):].partition(": ")
        method, mark, photo_sha = method.partition(PHOTO_HASH_MARK)
        path = Path(folder) / OVERLAY_FOLDER / overlay_file_name(name, str(r.sha256))
        # logs written before the reading key held the photo's own hash as the ingest key
        out.append((r.coupon, int(r.inspection), r.field, float(r.value), int(r.revision),
                    name, method, photo_sha if mark else r.sha256,
                    str(path) if path.exists() else "", r.ingested_at))
    return pd.DataFrame(out, columns=list(PHOTO_TABLE_COLUMNS))
