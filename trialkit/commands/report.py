"""``trialkit report DIR --out report.html [--markdown FILE]``: write the trial report."""

from __future__ import annotations

import argparse
from pathlib import Path


def configure(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("folder", nargs="?", default=".",
                        help="trial folder (holding trial.toml) or the trial file "
                             "(default: the current folder)")
    parser.add_argument("--out", metavar="FILE",
                        help="HTML file to write (default: report.html in the trial folder)")
    parser.add_argument("--markdown", metavar="FILE",
                        help="also write the report as Markdown (figures beside it)")
    parser.add_argument("--bath-results", metavar="CSV",
                        help="one row per bath with the plan's bath ids and one column per "
                             "response, instead of the folder's record log")
    parser.add_argument("--confirmation", metavar="CSV",
                        help="coupon readings of confirmation baths run at one setting "
                             "(checked against the prediction intervals)")
    parser.add_argument("--bootstrap", metavar="N", type=int, default=0,
                        help="bootstrap resamples for the interval of the best point "
                             "(default 0: none)")
    parser.add_argument("--json", action="store_true",
                        help="print what was written and the findings as JSON")


def _bath_results(path: str, folder: str):
    import pandas as pd

    from trialkit.exceptions import ResponseError
    from trialkit.planning.plan import load_plan

    p = Path(path)
    if not p.exists():
        raise ResponseError(f"bath results file {path!r} not found; give a CSV with a "
                            "'bath' column and one column per response")
    table = pd.read_csv(p)
    if "bath" not in table.columns:
        raise ResponseError(f"{p.name} has no 'bath' column (columns: {list(table.columns)});"
                            " add the plan's bath ids (B01, B02, ...)")
    plan = load_plan(folder)
    base = plan.baths.copy()
    base["bath"] = base["bath"].astype(str)
    extra = [c for c in table.columns if c not in base.columns or c == "bath"]
    table["bath"] = table["bath"].astype(str)
    unknown = sorted(set(table.bath) - set(base.bath))
    if unknown:
        raise ResponseError(f"{p.name} names baths that are not in the plan: {unknown[:8]};"
                            f" the plan's baths are {base.bath.iloc[0]}..{base.bath.iloc[-1]}")
    return base.merge(table[extra], on="bath", how="left")


def run(args: argparse.Namespace) -> int:
    from trialkit.analysis.trial_analysis import analyze
    from trialkit.commands._output import check_record_log
    from trialkit.report.build import build_report
    from trialkit.report.document import ReportError

    if args.out is None:
        from trialkit.trial.file import find_trial_file

        args.out = str(find_trial_file(args.folder).parent / "report.html")
    if Path(args.out).suffix.lower() not in (".html", ".htm"):
        raise ReportError(f"--out must name an .html file; got {args.out!r}. Use e.g. "
                          "--out report.html (and --markdown notes.md for Markdown)")
    if args.markdown and Path(args.markdown).suffix.lower() not in (".md", ".markdown"):
        raise ReportError(f"--markdown must name a .md file; got {args.markdown!r}")
    check_record_log(args.folder)
    baths = _bath_results(args.bath_results, args.folder) if args.bath_results else None
    confirmation = None
    if args.confirmation:
        import pandas as pd

        from trialkit.exceptions import ResponseError

        if not Path(args.confirmation).exists():
            raise ResponseError(f"confirmation file {args.confirmation!r} not found")
        confirmation = pd.read_csv(args.confirmation)
    report = build_report(analyze(args.folder, baths=baths, confirmation=confirmation,
                                  n_boot=args.bootstrap))
    out = report.write(args.out, markdown=args.markdown)
    if args.json:
        from trialkit.commands._output import print_json

        data = report.to_dict()
        data["html"] = str(out)
        data["markdown"] = args.markdown
        print_json(data)
    else:
        print(f"{report.title}")
        for s in report.sections:
            state = "" if s.available else "  (not available)"
            print(f"  {s.title}{state}")
        print(f"  wrote       {out}")
        if args.markdown:
            print(f"  wrote       {args.markdown}")
    return 0
