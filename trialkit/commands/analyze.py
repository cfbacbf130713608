"""``trialkit analyze DIR_OR_TABLE``: ANOVA, effects, surfaces and the best recipe.

Thin: reads the trial folder or table, calls :func:`trialkit.analysis.pipeline.analyze_table`
and prints its console summary or JSON.  On a trial folder with no ``--response`` (and no
other single-response option), or with ``--all``, it prints the analysis of the whole
trial, :func:`trialkit.analysis.trial_analysis.analyze`, the object the report renders:
``recommendation`` (``settings``, ``predicted``, ``limits_met``, ``reasons``),
``comparisons`` (Tukey, levels of categorical factors), ``versus_controls`` (Dunnett) and
``responses`` (each response's analysis).
"""

from __future__ import annotations

import argparse
import math
from pathlib import Path

from trialkit.commands._output import print_json


def configure(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("source", metavar="DIR_OR_TABLE", nargs="?", default=".",
                        help="a trial folder, or a CSV/XLSX table with one row per bath "
                        "(default: the current folder)")
    parser.add_argument("--response", metavar="NAME",
                        help="response to analyse (trial folders: default every response, "
                        "with the recommendation; tables: name the column)")
    parser.add_argument("--factor", metavar="NAME[:categorical]", action="append",
                        default=[], help="factor column of a plain table (repeat); add "
                        ":categorical or :ordinal for text levels")
    parser.add_argument("--model", metavar="SPEC",
                        help="main, interactions, quadratic, or terms such as "
                        "'chelator + ph + chelator:ph + chelator^2'")
    parser.add_argument("--type", dest="anova_type", type=int, choices=(1, 2, 3),
                        help="sums of squares type (default 2)")
    parser.add_argument("--alpha", type=float, help="1 - confidence level (default 0.05)")
    parser.add_argument("--block", default="block", metavar="COLUMN",
                        help="column of blocks, a fixed effect (default 'block')")
    parser.add_argument("--sweep", metavar="FACTOR",
                        help="analyse a one-factor sweep of FACTOR")
    parser.add_argument("--aim", choices=("higher", "lower"),
                        help="for the best point (default: the trial's aim, else higher)")
    parser.add_argument("--reduce", choices=("none", "p", "aic", "bic"),
                        help="hierarchical backward reduction of the model")
    parser.add_argument("--threshold", type=float, help="p threshold for --reduce p")
    parser.add_argument("--bootstrap", type=int, metavar="N",
                        help="bootstrap resamples for optimum intervals (default 2000)")
    parser.add_argument("--seed", type=int, help="seed of the bootstrap")
    parser.add_argument("--scale", choices=("raw", "log", "logit"),
                        help="scale the model is fitted on (default: the trial's [[response]] "
                        "scale, else raw); log needs a lower bound, logit both (--range)")
    parser.add_argument("--range", dest="response_range", metavar="LOW,HIGH",
                        help="physical range of the response, e.g. 0,100 or 0,none "
                        "(default: the trial's, else known from the column's measure name)")
    parser.add_argument("--compromise", action="store_true",
                        help="trial folders: best Derringer-Suich compromise of every "
                        "response that has lower and upper limits")
    parser.add_argument("--all", dest="whole_trial", action="store_true",
                        help="trial folders: every response, the recommendation and the "
                        "notes, as the report shows them")
    parser.add_argument("--whole-plot", dest="whole_plot", metavar="COLUMN",
                        help="plain tables: column naming each bath's whole plot (tank or "
                        "run); analyses a split plot with the right error strata")
    parser.add_argument("--hard-to-change", dest="hard_to_change", metavar="NAME",
                        action="append", default=[],
                        help="with --whole-plot: a factor set per whole plot (repeat); the "
                        "other --factor columns vary within whole plots")
    parser.add_argument("--json", action="store_true", help="print JSON")


def run(args: argparse.Namespace) -> int:
    from trialkit.analysis.data import factors_from_table
    from trialkit.analysis.pipeline import analyze_table
    from trialkit.analysis.sources import (
        AnalysisSource,
        from_trial_folder,
        read_table,
        response_for,
    )

    _check_options(args)
    path = Path(args.source)
    single = (args.response or args.model or args.sweep or args.reduce or args.aim
              or args.factor or args.compromise or args.threshold is not None)
    if args.whole_trial or (path.is_dir() and not single):
        return _whole_trial(args, path)
    if path.is_dir():
        source = from_trial_folder(path)
        if args.factor:
            names = [s.partition(":")[0] for s in args.factor]
            source.factors = tuple(f for f in source.factors if f.name in names)
    elif args.whole_plot:
        return _split_plot(args, read_table(path), path)
    else:
        table = read_table(path)
        source = AnalysisSource(table, factors_from_table(table, args.factor),
                                origin=str(path))
    cfg = source.config
    if args.compromise:
        return _compromise(args, source)
    column = response_for(source, args.response)
    name = next((k for k, v in source.responses.items() if v == column), column)
    aim = args.aim or source.aims.get(name, "higher")
    result = analyze_table(
        source.table, column, source.factors,
        model=args.model or cfg.model_for(name),
        anova_type=args.anova_type or cfg.anova_type,
        alpha=args.alpha if args.alpha is not None else cfg.alpha,
        block=args.block, sweep=args.sweep or cfg.sweep,
        aim=aim if aim in ("higher", "lower") else "higher",
        reduce=args.reduce or cfg.reduce,
        threshold=args.threshold if args.threshold is not None else cfg.threshold,
        n_boot=args.bootstrap if args.bootstrap is not None else cfg.bootstrap,
        seed=args.seed if args.seed is not None else source.seed,
        tolerance=cfg.tolerance, relative_tolerance=cfg.relative_tolerance,
        **_range_and_scale(args, source, name, column))
    if args.json:
        out = result.to_dict()
        out["source"] = source.origin
        print_json(out)
    else:
        print(result.text())
    return 0


def _whole_trial(args: argparse.Namespace, path: Path) -> int:
    from trialkit.analysis.trial_analysis import analyze
    from trialkit.exceptions import AnalysisError

    if not path.is_dir():
        raise AnalysisError(f"--all needs a trial folder; {path} is not one")
    from trialkit.commands._output import check_record_log

    check_record_log(str(path))
    result = analyze(path, n_boot=args.bootstrap)
    if args.json:
        print_json(result.to_dict())
    else:
        print(_answer_text(result))
    return 0


def _answer_text(result) -> str:
    """The report's answer and cautions as text, the models behind them and where to read
    more."""
    from trialkit.report.answer import answer_blocks
    from trialkit.report.build import SECTION_TITLES, report_findings, safety_blocks
    from trialkit.report.document import Section
    from trialkit.report.plain_text import section_text

    answer = Section("answer", SECTION_TITLES["answer"],
                     answer_blocks(result, report_findings(result)))
    safety = Section("safety", SECTION_TITLES["safety"], safety_blocks(result))
    lines = [f"{result.trial.title} (plan {result.plan.fingerprint})", "", section_text(answer),
             "", section_text(safety), "", "Models:"]
    lines += [f"  {name}: {res.fit.spec.to_text()}" for name, res in result.results.items()]
    for topic, sentences in result.notes.items():
        lines += [f"  note ({topic}): {s}" for s in sentences]
    lines += ["", "The whole report: 'trialkit report' (HTML); every number: add --json."]
    return "\n".join(lines)


def _compromise(args: argparse.Namespace, source) -> int:
    from trialkit.analysis.pipeline import best_compromise
    from trialkit.exceptions import AnalysisError

    if not source.specs:
        raise AnalysisError("--compromise needs a trial folder whose [[response]] entries "
                            "give lower and upper limits")
    aims = source.aims_with_limits()
    models = {source.responses[k]: v for k, v in source.config.response_models.items()
              if k in source.responses}
    cfg = source.config
    res = best_compromise(source.table, source.factors, aims, models=models or None,
                          block=args.block, seed=args.seed if args.seed is not None
                          else source.seed,
                          alpha=args.alpha if args.alpha is not None else cfg.alpha)
    if args.json:
        out = res.to_dict()
        out["source"] = source.origin
        print_json(out)
    else:
        print(repr(res))
    return 0


def _split_plot(args: argparse.Namespace, table, path: Path) -> int:
    """A plain table with a whole-plot column: exact two-stratum ANOVA when balanced, REML
    (statsmodels MixedLM) otherwise.  Rows are baths (coupons averaged within a bath)."""
    from trialkit.analysis.split_plot_trial import split_plot_tests
    from trialkit.exceptions import AnalysisError

    names = [s.partition(":")[0] for s in args.factor]
    hard = list(args.hard_to_change)
    easy = [n for n in names if n not in hard]
    if not hard or not easy or not args.response:
        raise AnalysisError("--whole-plot needs --response, at least one --hard-to-change "
                            "factor and at least one other --factor (easy to change)")
    block = args.block if args.block in table.columns else None
    result, method = split_plot_tests(table, args.response, hard, easy,
                                      whole_plot=args.whole_plot, block=block)
    if args.json:
        out = result.to_dict()
        out.update(source=str(path), method=method,
                   unit_of_analysis="bath (coupons within a bath are subsamples)")
        print_json(out)
    else:
        print(f"{method}; rows are baths\n{result!r}")
    return 0


def _range_and_scale(args: argparse.Namespace, source, name: str, column: str) -> dict:
    """The response's physical range and model scale: the options, else the trial's
    [[response]], else the range known for the column's measure (``removal_pct``: 0-100)."""
    from trialkit.analysis.trial_analysis import response_limits
    from trialkit.exceptions import AnalysisError

    spec = next((r for r in source.specs if r.name == name), None)
    if args.response_range is not None:
        limits = _parse_range(args.response_range)
    elif spec is not None:
        limits = response_limits(spec)
    else:
        from trialkit.responses.definitions import physical_range

        limits = physical_range(column.removesuffix("_mean"))
    scale = args.scale or (spec.scale if spec is not None else "raw")
    lo, hi = limits
    if (scale == "log" and lo is None) or (scale == "logit" and (lo is None or hi is None)):
        raise AnalysisError(f"--scale {scale} needs the response's "
                            f"{'lower bound' if scale == 'log' else 'two bounds'}; give "
                            f"--range {'0,none' if scale == 'log' else '0,100'} (or the "
                            "range of the [[response]] in the trial file)")
    return {"limits": limits, "scale": scale}


def _parse_range(text: str) -> tuple[float | None, float | None]:
    """``"0,100"`` -> (0.0, 100.0); ``"0,none"`` -> (0.0, None)."""
    from trialkit.exceptions import AnalysisError

    parts = [p.strip().lower() for p in text.split(",")]
    try:
        if len(parts) != 2:
            raise ValueError
        lo, hi = (None if p in ("", "none") else float(p) for p in parts)
    except ValueError:
        raise AnalysisError(f"--range must be LOW,HIGH such as 0,100 or 0,none; got "
                            f"{text!r}") from None
    if any(v is not None and not math.isfinite(v) for v in (lo, hi)) or (
            lo is not None and hi is not None and not lo < hi):
        raise AnalysisError(f"--range needs finite bounds with LOW below HIGH; got {text!r}")
    return lo, hi


#: Largest number of bootstrap resamples asked for on the command line.
MAX_BOOTSTRAP = 100_000


def _check_options(args: argparse.Namespace) -> None:
    """Refuse option values no analysis can use, before reading anything."""
    from trialkit.exceptions import AnalysisError

    if args.bootstrap is not None and not 0 <= args.bootstrap <= MAX_BOOTSTRAP:
        raise AnalysisError(f"--bootstrap must be a whole number from 0 to {MAX_BOOTSTRAP:,}"
                            f"; got {args.bootstrap}")
    if args.model is not None and not args.model.strip():
        raise AnalysisError("--model is empty; give main, interactions, quadratic, or terms "
                            "such as 'chelator + ph'")
    if args.alpha is not None and not 0 < args.alpha < 1:
        raise AnalysisError(f"--alpha must lie between 0 and 1 (e.g. 0.05); got {args.alpha}")
    if args.threshold is not None and not 0 < args.threshold < 1:
        raise AnalysisError(f"--threshold must lie between 0 and 1 (e.g. 0.1); got "
                            f"{args.threshold}")
