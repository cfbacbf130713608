"""``trialkit evaluate TRIAL.toml``: power per model term, efficiency and aliasing of a plan.

Settings not given on the command line come from the trial file's ``[evaluation]``
section, then from the defaults: the model the design was built for (quadratic for
surface designs and sweeps, the searched model for optimal ones, main effects otherwise)
and alpha 0.05.  There is no default effect size: without ``--effect``, ``[evaluation]
effects`` or (when the SD is known) limits on a response, power is not computed and the
output says so; the detectable effects are always given.
"""

from __future__ import annotations

import argparse


def add_evaluation_options(parser: argparse.ArgumentParser) -> None:
    """Options shared by ``evaluate`` and ``compare``."""
    parser.add_argument("--model", metavar="SPEC",
                        help="model: main, interactions, quadratic or terms joined by '+' "
                             "(e.g. 'chelator + ph + chelator:ph')")
    parser.add_argument("--sd", type=float, metavar="S",
                        help="residual standard deviation between baths, response units")
    parser.add_argument("--effect", action="append", default=[], metavar="TERM=SIZE",
                        help="effect size that matters for a term (repeatable), or SIZE for "
                             "every term; response units")
    parser.add_argument("--alpha", type=float, metavar="A", help="significance level (0.05)")
    parser.add_argument("--target-power", type=float, metavar="P",
                        help="power the detectable effects and replicate count aim at (0.8)")
    parser.add_argument("--json", action="store_true", help="print the result as JSON")


def parse_effects(items: list[str]):
    """``["chelator=2", "ph=1.5"]`` -> dict; ``["2"]`` -> 2.0; ``[]`` -> None."""
    from trialkit.exceptions import PlanError

    if not items:
        return None
    out: dict[str, float] = {}
    single = None
    for item in items:
        term, sep, size = item.rpartition("=")
        try:
            value = float(size)
        except ValueError:
            raise PlanError(f"--effect {item!r}: the size must be a number, as in "
                            "--effect chelator=2.5 or --effect 2.5") from None
        if not value > 0:
            raise PlanError(f"--effect {item!r}: the size must be positive")
        if sep:
            out[term.strip()] = value
        else:
            single = value
    if single is not None and out:
        raise PlanError("--effect: give either one SIZE for every term or TERM=SIZE pairs, "
                        "not both")
    return single if single is not None else out


def evaluation_kwargs(args: argparse.Namespace) -> dict:
    return {"model": args.model, "sd": args.sd, "effects": parse_effects(args.effect),
            "alpha": args.alpha, "target_power": args.target_power}


def configure(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("trial", nargs="?", default=".",
                        help="trial file (.toml) or trial folder (default: the current folder)")
    add_evaluation_options(parser)


def _split_plot_power(plan, ev):
    """Each term's power on its own stratum when the plan is a split plot, else None."""
    from trialkit.planning.whole_plots import whole_plot_settings

    settings = whole_plot_settings(plan.trial)
    if settings is None or "whole_plot" not in plan.baths:
        return None
    from trialkit.planning.split_plot_power import split_plot_power

    effects = {r.term: float(r.effect) for r in ev.summary.itertuples() if r.effect == r.effect}
    return split_plot_power(plan, settings, effects, sd=ev.sd, alpha=ev.alpha,
                            target_power=ev.target_power)


def run(args: argparse.Namespace) -> int:
    from trialkit.commands._output import load_checked_plan, print_json
    from trialkit.numbers import readable
    from trialkit.planning.evaluation import evaluate_plan

    plan = load_checked_plan(args.trial)
    ev = evaluate_plan(plan, **evaluation_kwargs(args))
    has_effects = bool(ev.summary.effect.notna().any())
    reps = ev.replicates_needed() if ev.estimable and has_effects else None
    split = _split_plot_power(plan, ev) if has_effects else None
    if split is not None and len(split.table):  # copies for power on the right strata
        need = split.table.copies_needed
        reps = None if need.isna().any() else int(need.max())
    if args.json:
        data = ev.to_dict()
        data["trial"] = plan.trial.title
        data["replicates_needed"] = reps
        if split is not None:
            data["split_plot"] = split.to_dict()
        print_json(data)
        return 0
    print(plan.trial.title)
    print(repr(ev))
    if split is not None:
        print("  the power above treats every bath as randomised on its own; in this split "
              "plot\n  the hard-to-change terms are tested against the tank-to-tank error:")
        print("  " + repr(split).replace("\n", "\n  "))
    if ev.estimable and has_effects:
        if reps is None:
            print("  replicates  more than 50 copies of the plan would be needed to reach "
                  f"power {readable(ev.target_power)} for every term")
        else:
            copies = "copy" if reps == 1 else "copies"
            print(f"  replicates  {reps} {copies} of the plan needed for power "
                  f"{readable(ev.target_power)} in every term with an effect size")
    return 0
