"""Make the example trials' plans and invented readings (seeded; the same every run).

Usage (from the repository root)::

    python example_trials/generate_readings.py [FOLDER ...] [--out DIR]

With no FOLDER, every example folder beside this file.  For each folder it writes
``plan.csv`` and ``plan.json`` (the plan of its ``trial.toml``) and, in ``readings/``,
``coupons.csv`` (one row per coupon: plan columns, then the coupon fields of
``trialkit.records.fields``), ``timecourse.csv`` (one row per rusted coupon and
inspection, where the trial inspects), ``confirmation.csv`` (where the scenario has
confirmation baths) and ``truth.json`` (the invented truth model, the seed and each
bath's true rate and attack).  The readings are invented from the truth models in
``trialkit/demo/truth_models.py``; they are not measurements.
"""

from __future__ import annotations

import sys
from pathlib import Path

HERE = Path(__file__).resolve().parent


def main(argv: list[str] | None = None) -> int:
    try:
        import trialkit  # noqa: F401
    except ModuleNotFoundError:  # run from a source tree without installing
        sys.path.insert(0, str(HERE.parent))
    from trialkit.demo.examples import main as write_examples

    return write_examples(argv, examples_root=HERE)


if __name__ == "__main__":
    sys.exit(main())
