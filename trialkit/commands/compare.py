"""``trialkit compare A.toml B.toml ...``: candidate plans side by side."""

from __future__ import annotations

import argparse


def configure(parser: argparse.ArgumentParser) -> None:
    from trialkit.commands.evaluate import add_evaluation_options

    parser.add_argument("trials", nargs="+", metavar="TRIAL",
                        help="trial files (.toml) or trial folders to compare")
    add_evaluation_options(parser)


def run(args: argparse.Namespace) -> int:
    from trialkit.commands._output import load_checked_plan, print_json
    from trialkit.commands.evaluate import evaluation_kwargs
    from trialkit.planning.comparison import compare_plans

    plans = [load_checked_plan(t) for t in args.trials]
    names = [p.trial.title for p in plans]
    if len(set(names)) != len(names):
        names = [str(t) for t in args.trials]
    cmp = compare_plans(plans, names=names, **evaluation_kwargs(args))
    if args.json:
        print_json(cmp.to_dict())
    else:
        print(repr(cmp))
    return 0
