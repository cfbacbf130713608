"""``trialkit photos PHOTO... [--trial DIR]``: rust coverage measured from photographs.

Without ``--trial`` the photos are only measured (and overlays written with ``--overlays``);
with it the coverages go into the trial's record log beside the hand estimates, each photo
as its own ingest (its SHA-256, file name and the method as the source), and an overlay per
photo into ``DIR/photo-overlays/``.  Exit 0 when every photo was measured (and stored), 1
when a photo was read and refused (no coupon found, no colour, unknown coupon), 2 when a
photo cannot be read at all; on 1 or 2 nothing is recorded.
"""

from __future__ import annotations

import argparse


def _ints(text: str, n: int, what: str) -> tuple[int, ...]:
    try:
        values = tuple(int(v) for v in text.replace(" ", "").split(","))
    except ValueError:
        values = ()
    if len(values) != n or any(v < 0 for v in values):
        raise argparse.ArgumentTypeError(f"{what} must be {n} whole pixel numbers separated "
                                         f"by commas; got {text!r}")
    return values


def _box(text: str) -> tuple[int, ...]:
    box = _ints(text, 4, "a box X0,Y0,X1,Y1")
    if not (box[0] < box[2] and box[1] < box[3]):
        raise argparse.ArgumentTypeError(f"a box X0,Y0,X1,Y1 needs X0 < X1 and Y0 < Y1; got "
                                         f"{text!r}")
    return box


def _card(text: str):
    return "auto" if text.strip().lower() == "auto" else _box(text)


def _pixel(text: str) -> tuple[int, ...]:
    return _ints(text, 2, "a pixel X,Y")


def configure(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("photos", metavar="PHOTO", nargs="+",
                        help="photos of coupons (PNG, JPEG, TIFF ...); to record them, name "
                             "them <coupon>_before, <coupon>_after or <coupon>_i<n>")
    parser.add_argument("--trial", metavar="DIR", default=None,
                        help="record the coverages in this trial folder's record log")
    parser.add_argument("--coupon", metavar="ID", default=None,
                        help="the coupon of a single photo (instead of its file name)")
    parser.add_argument("--when", metavar="WHEN", default=None,
                        help="before, after or i<n> (n-th inspection), with --coupon")
    parser.add_argument("--region", metavar="X0,Y0,X1,Y1", type=_box, default=None,
                        help="the coupon's box in pixels (default: found by its outline)")
    parser.add_argument("--card", metavar="X0,Y0,X1,Y1|auto", type=_card, default=None,
                        help="a grey or white card's box, or 'auto' to find a grey or white "
                             "card in the frame: corrects the white balance")
    parser.add_argument("--threshold", choices=("otsu", "marked"), default=None,
                        help="Otsu's threshold (default) or half-way between marked pixels")
    parser.add_argument("--rust-pixel", metavar="X,Y", type=_pixel, action="append",
                        default=None, help="a pixel that is rust (repeat; --threshold marked)")
    parser.add_argument("--steel-pixel", metavar="X,Y", type=_pixel, action="append",
                        default=None, help="a pixel that is bare steel (repeat)")
    parser.add_argument("--overlays", metavar="DIR", default=None,
                        help="without --trial: write the overlay images here (with --trial they go "
                             "into DIR/photo-overlays)")
    parser.add_argument("--json", action="store_true",
                        help="print per photo the rusted share in percent and the method")


def run(args: argparse.Namespace) -> int:
    from trialkit.commands._output import print_json
    from trialkit.exceptions import PhotoError
    from trialkit.photos.record import measure_photos, record_photos, target_of
    from trialkit.photos.settings import PhotoSettings, photo_settings

    if (args.coupon is None) != (args.when is None):
        raise PhotoError("give --coupon and --when together (or neither: the file names "
                         "say which coupon and when).", exit_code=2)
    if args.coupon is not None and len(args.photos) != 1:
        raise PhotoError("--coupon and --when name the coupon of a single photo; give one "
                         "photo, or name the files <coupon>_<when>.", exit_code=2)
    overrides = {"region": args.region, "card": args.card, "threshold": args.threshold,
                 "rust_pixels": tuple(map(tuple, args.rust_pixel)) if args.rust_pixel else None,
                 "steel_pixels": (tuple(map(tuple, args.steel_pixel))
                                  if args.steel_pixel else None)}
    if args.trial is not None:
        from trialkit.trial.file import load_trial

        settings = photo_settings(load_trial(args.trial)).with_(**overrides)
        targets = ({args.photos[0]: target_of(args.coupon, args.when)}
                   if args.coupon is not None else None)
        batch = record_photos(args.trial, args.photos, settings=settings, targets=targets)
    else:
        batch = measure_photos(args.photos, PhotoSettings().with_(**overrides),
                               overlays=args.overlays)
    if args.json:
        print_json(batch.to_dict())
        return 0
    for row, m in zip(batch.table.to_dict("records"), batch.measurements, strict=True):
        where = (f" -> {row['coupon']} {row['field']}"
                 + (f" (inspection {row['inspection']})" if row["inspection"] else "")
                 + f": {row['status']}") if row["coupon"] else ""
        print(f"{m.photo}: {m.rust_pct:.1f} % rusted ({m.rust_pct_low:.1f}-"
              f"{m.rust_pct_high:.1f} with the cut moved 5 either way; ASTM D610 grade "
              f"{m.d610_grade}; {m.rule} cut {m.threshold:.1f}){where}")
        for note in m.notes:
            print(f"  - {note}")
        if row["overlay"]:
            print(f"  overlay {row['overlay']}")
    return 0
