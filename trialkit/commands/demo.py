"""``trialkit demo [--out DIR]``: the whole loop on the bundled example trials.

Progress lines go to standard error while the demo works; the summary and the path of
each report go to standard output.
"""

from __future__ import annotations

import argparse
import sys


def configure(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("--out", metavar="DIR", default=None,
                        help="folder to write into (default: a new folder "
                             "trialkit-demo-YYYYmmdd-HHMMSS in the current folder)")
    parser.add_argument("--trial", action="append", default=None, metavar="NAME",
                        help="run only this bundled example trial (repeatable)")
    parser.add_argument("--json", action="store_true",
                        help="print the result as JSON instead of the summary")


def _progress(trial: str, stage: str, status: str) -> None:
    print(f"[{trial}] {stage}: {status}", file=sys.stderr, flush=True)


def run(args: argparse.Namespace) -> int:
    from trialkit.demo.run import default_out_dir, run_demo

    out = args.out if args.out else default_out_dir()
    print(f"trialkit demo: invented example trials, writing into {out}", file=sys.stderr,
          flush=True)
    result = run_demo(out, trials=args.trial, progress=_progress)
    if args.json:
        from trialkit.commands._output import print_json

        print_json(result.to_dict())
        return 0
    print(f"Demo finished in {result.out_dir} (all data are invented).")
    for t in result.trials:
        n = t.numbers
        done = sum(s.done for s in t.stages)
        print(f"\n{t.name}: {t.title}")
        print(f"  plan {n.get('fingerprint', '?')}: {n.get('baths', '?')} baths, "
              f"{n.get('coupons', '?')} coupons; {done}/{len(t.stages)} stages done")
        for s in t.stages:
            if not s.done:
                print(f"  {s.name}: {s.status}" + (f" ({s.detail})" if s.detail else ""))
        if n.get("recommended_text"):
            print(f"  recommended: {n['recommended_text']}")
        if t.report:
            print(f"  report: {t.report}")
    return 0
