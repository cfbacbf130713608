"""``trialkit responses DIR``: derived responses per coupon and bath from the record log.

Exit codes: 0 computed without problems; 1 computed, but some readings had problems
(listed; the values concerned are missing); 2 nothing computed (no record log, bad
trial file).
"""

from __future__ import annotations

import argparse
import warnings

from trialkit.commands._output import print_json
from trialkit.numbers import readable_table

SHOWN = ("removal_pct", "rust_removed_g_per_m2", "corrosion_rate_mm_per_y", "rust_grade")


def configure(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("folder", nargs="?", default=".",
                        help="trial folder (holding trial.toml and the record log; "
                             "default: the current folder)")
    parser.add_argument("--json", action="store_true",
                        help="print coupons, baths, methods and problems as JSON")
    parser.add_argument("--coupons", action="store_true",
                        help="also print the coupon-level table (text output)")
    parser.add_argument("--metal", default=None,
                        help="coupon metal for the density (default: the trial's [coupons])")
    parser.add_argument("--strict", action="store_true",
                        help="stop with an error if any reading has a problem")


def run(args: argparse.Namespace) -> int:
    from trialkit.exceptions import TrialkitWarning
    from trialkit.responses.compute import load_responses

    with warnings.catch_warnings():
        warnings.simplefilter("ignore", TrialkitWarning)  # problems are printed below
        resp = load_responses(args.folder, metal=args.metal, strict=args.strict)
    if args.json:
        print_json(resp.to_dict())
        return 1 if resp.problems else 0
    import pandas as pd

    baths = resp.baths
    cols = ["bath"] + [c for c in ("run", "point") if c in baths]
    cols += [f"{m}_mean" for m in SHOWN if f"{m}_mean" in baths]
    cols += [c for c in ("time_to_90_h",) if c in baths]
    from trialkit.numbers import readable
    from trialkit.report.quality import grouped_notes

    print(f"{len(resp.coupons)} coupons in {len(baths)} baths; {resp.metal} "
          f"({readable(resp.density_g_cm3)} g/cm³); {len(resp.problems)} problem(s)")
    with pd.option_context("display.width", 160, "display.max_columns", 30):
        print(readable_table(baths[cols]))
        if args.coupons:
            print()
            print(readable_table(resp.coupons))
    for row in grouped_notes(list(resp.warnings)).itertuples(index=False):
        print(f"note: {row.note}" + (f" ({row.concerns})" if row.concerns else ""))
    if resp.problems:
        print(str(resp.problems))
        return 1
    return 0
