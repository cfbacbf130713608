"""Make this example trial's plan and invented readings (seeded; the same every run).

Usage (from the repository root)::

    python example_trials/chelator-sweep/generate_readings.py [--out FOLDER]

Writes ``plan.csv`` and ``plan.json`` (the plan of ``trial.toml``), and in ``readings/``:
``coupons.csv`` (one row per coupon: plan columns, then the coupon fields of
``trialkit.records.fields``), ``timecourse.csv`` (one row per rusted coupon and inspection:
``coupon, bath, elapsed_h, coverage_pct, mass_g, operator, notes``) and ``truth.json``
(the invented truth model, the seed, and each bath's true rate and attack).
The readings are invented from the truth model ``EXAMPLES["chelator-sweep"]`` in
``trialkit/demo/truth_models.py``; they are not measurements.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

HERE = Path(__file__).resolve().parent
SCENARIO = "chelator-sweep"


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--out", default=str(HERE), help="folder to write into (default: "
                        "this trial folder)")
    args = parser.parse_args(argv)
    try:
        import trialkit  # noqa: F401
    except ModuleNotFoundError:  # run from a source tree without installing
        sys.path.insert(0, str(HERE.parents[1]))
    from trialkit.demo.truth_models import write_example

    for path in write_example(SCENARIO, HERE, Path(args.out)):
        print(f"wrote {path}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
