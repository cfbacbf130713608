"""Write the bundled example trials' plans and invented readings (seeded; the same every run).

``python example_trials/generate_readings.py [FOLDER ...]`` calls :func:`main`, which
calls :func:`write_example` for each example folder: the plan of its ``trial.toml`` and,
in ``readings/``, the invented readings drawn from its truth model in
:data:`trialkit.demo.truth_models.EXAMPLES`.  They are not measurements.
"""

from __future__ import annotations

import argparse
import json
from collections.abc import Sequence
from pathlib import Path

from trialkit.demo.simulate import READINGS_FOLDER, confirmation_plan, simulate_readings
from trialkit.demo.truth_models import EXAMPLES, SimulationError
from trialkit.planning.plan import load_plan


def write_example(name: str, trial_folder: str | Path, out: str | Path) -> list[Path]:
    """Plan an example trial and write its plan and invented readings into ``out``.

    ``name`` is a key of :data:`EXAMPLES`.  Writes ``plan.csv``,
    ``plan.json`` and ``readings/`` (``coupons.csv``, ``timecourse.csv`` if inspected,
    ``confirmation.csv`` if the scenario has confirmation baths, ``truth.json``).
    """
    if name not in EXAMPLES:
        raise SimulationError(f"no example scenario {name!r}; known: {', '.join(EXAMPLES)}")
    sc = EXAMPLES[name]
    out = Path(out)
    plan = load_plan(trial_folder)
    paths = [plan.write(out), out / "plan.json"]
    sim = simulate_readings(plan, sc.truth, seed=sc.seed, inspections_h=sc.inspections_h,
                            immersion_h=sc.immersion_h)
    folder = out / READINGS_FOLDER
    paths += sim.write(folder)
    truth = {"scenario": name, **sim.truth, "true_baths": sim.to_dict()["true_baths"]}
    if sc.confirmation_baths:
        conf = simulate_readings(
            confirmation_plan(plan, dict(sc.confirmation_recipe), baths=sc.confirmation_baths),
            sc.truth, seed=sc.confirmation_seed, immersion_h=sc.immersion_h)
        path = folder / "confirmation.csv"
        path.write_text(conf.coupons.to_csv(index=False, lineterminator="\n"),
                        encoding="utf-8", newline="")
        paths.append(path)
        truth["confirmation"] = {"recipe": dict(sc.confirmation_recipe),
                                 "seed": sc.confirmation_seed,
                                 "true_baths": conf.to_dict()["true_baths"]}
    path = folder / "truth.json"
    path.write_text(json.dumps(truth, indent=1, sort_keys=True) + "\n", encoding="utf-8",
                    newline="")
    paths.append(path)
    return paths


def main(argv: Sequence[str] | None = None, *, examples_root: str | Path | None = None) -> int:
    """Command line: regenerate the named example folders (default: all of them).

    ``--out DIR`` writes into ``DIR/<folder>`` instead of the folders themselves.
    """
    root = Path(examples_root) if examples_root else None
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("folders", nargs="*", metavar="FOLDER",
                        help=f"example folder(s) to regenerate; known: {', '.join(EXAMPLES)}")
    parser.add_argument("--out", help="write into OUT/<folder> instead of the folder")
    args = parser.parse_args(argv)
    folders = [Path(f) for f in args.folders] or [
        (root or Path.cwd()) / name for name in EXAMPLES]
    for folder in folders:
        name = folder.resolve().name
        if name not in EXAMPLES:
            parser.error(f"{folder}: not an example folder; known: {', '.join(EXAMPLES)}")
        out = Path(args.out) / name if args.out else folder
        for path in write_example(name, folder, out):
            print(f"wrote {path}")
    return 0
