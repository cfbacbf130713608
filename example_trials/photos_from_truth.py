"""Invented coupon photos from an example trial's invented readings, for ``trialkit photos``.

Usage (from the repository root)::

    python example_trials/photos_from_truth.py OUT [--example chelator-sweep] [--coupons 6]
    trialkit photos OUT/photos/*.png --card X0,Y0,X1,Y1 --json

For the first ``--coupons`` rusted coupons of the example, it renders a "before" and an
"after" photo whose rusted share is the coverage in the example's invented readings
(``readings/coupons.csv``) - a grey plate with rust-coloured patches on light paper, under
a warm colour cast with a grey card in the frame, with noise and blur
(:mod:`trialkit.demo.photo_scenes`) - and writes ``OUT/photos/<coupon>_<before|after>.png``
and ``OUT/truth.json`` (each photo's exact rusted share and the card's box).  Everything
here is invented: the photos are drawings, not photographs of real coupons.  The example
folders' readings are not changed.
"""

from __future__ import annotations

import argparse
import csv
import json
import sys
from pathlib import Path

HERE = Path(__file__).resolve().parent
#: The colour cast of the invented light (R, G, B gains): a warm indoor lamp.
CAST = (1.12, 1.0, 0.82)
SIZE = (240, 320)


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("out", type=Path)
    parser.add_argument("--example", default="chelator-sweep")
    parser.add_argument("--coupons", type=int, default=6)
    args = parser.parse_args(argv)
    try:
        import trialkit  # noqa: F401
    except ModuleNotFoundError:  # run from a source tree without installing
        sys.path.insert(0, str(HERE.parent))
    from PIL import Image

    from trialkit.demo.photo_scenes import render

    rows = list(csv.DictReader((HERE / args.example / "readings" / "coupons.csv")
                               .open(encoding="utf-8")))
    rusted = [r for r in rows if r["coupon_kind"] == "rusted" and r["coverage_before_pct"]]
    folder = args.out / "photos"
    folder.mkdir(parents=True, exist_ok=True)
    truth, card = {}, None
    for i, row in enumerate(rusted[:args.coupons]):
        for j, when in enumerate(("before", "after")):
            pct = float(row[f"coverage_{when}_pct"])
            scene = render(pct, seed=1000 + 2 * i + j, size=SIZE, cast=CAST, card=True)
            name = f"{row['coupon']}_{when}.png"
            Image.fromarray(scene.rgb).save(folder / name)
            truth[name] = {"coupon": row["coupon"], "when": when,
                           "recorded_pct": pct, "rust_pct": scene.truth_pct}
            card = list(scene.card)
    (args.out / "truth.json").write_text(json.dumps({"example": args.example, "card": card,
                                                     "photos": truth}, indent=1) + "\n")
    print(f"wrote {len(truth)} invented photos into {folder}; measure them with\n"
          f"  trialkit photos {folder}/*.png --card {','.join(map(str, card))} --json")
    return 0


if __name__ == "__main__":
    sys.exit(main())
