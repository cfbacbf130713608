"""The ``trialkit`` command line: a thin face over the library.

Each sub-command lives in ``trialkit/commands/<name>.py`` and defines two functions,
``configure(parser)`` (adds its options) and ``run(args) -> int`` (calls the library,
prints, returns the exit code).  Only the chosen command's module is imported, so
``trialkit --help`` starts fast.  Errors from bad input (:class:`TrialkitError`) are
printed as messages, never as tracebacks, and give exit code 2.
"""

from __future__ import annotations

import argparse
import importlib
import sys
from collections.abc import Sequence

#: command name -> (module, one-line help). Order is the order shown in --help.
COMMANDS: dict[str, tuple[str, str]] = {
    "new": ("trialkit.commands.new", "write a commented starter trial file into a folder"),
    "plan": ("trialkit.commands.plan", "lay out the randomised plan of a trial file"),
    "evaluate": ("trialkit.commands.evaluate", "power, efficiency and aliasing of a plan"),
    "compare": ("trialkit.commands.compare", "compare several candidate plans side by side"),
    "recipe": ("trialkit.commands.recipe", "mixing sheet: a recipe for every bath of a plan"),
    "bath": ("trialkit.commands.bath", "one-off recipe for a single bath"),
    "sheet": ("trialkit.commands.sheet", "export recording sheets and coupon labels"),
    "ingest": ("trialkit.commands.ingest", "read a filled sheet into the record log"),
    "history": ("trialkit.commands.history", "every recorded value and its revisions"),
    "responses": ("trialkit.commands.responses", "derived responses per coupon and bath"),
    "analyze": ("trialkit.commands.analyze", "ANOVA, effects, surfaces and the best recipe"),
    "report": ("trialkit.commands.report", "write the HTML trial report"),
    "demo": ("trialkit.commands.demo", "run the whole loop on the bundled example trials"),
}


def _version() -> str:
    from importlib.metadata import PackageNotFoundError, version

    try:
        return version("trialkit")
    except PackageNotFoundError:  # running from a source tree
        return "0+unknown"


class _VersionAction(argparse.Action):
    """``--version``: reads the installed version only when asked (keeps start-up fast)."""

    def __call__(self, parser, namespace, values, option_string=None):
        print(f"trialkit {_version()}")
        parser.exit()


def build_parser(command: str | None = None) -> argparse.ArgumentParser:
    """The argument parser; only ``command``'s options are loaded (all names are listed)."""
    parser = argparse.ArgumentParser(
        prog="trialkit",
        description="Plan, mix, record, analyse and report rust-removal bath trials.",
    )
    parser.add_argument("--version", action=_VersionAction, nargs=0,
                        help="show trialkit's version and exit")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    for name, (module_name, help_text) in COMMANDS.items():
        p = sub.add_parser(name, help=help_text, description=help_text)
        if name == command:
            module = importlib.import_module(module_name)
            module.configure(p)
            p.set_defaults(_run=module.run)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    """Entry point of the ``trialkit`` command; returns the exit code."""
    argv = list(sys.argv[1:] if argv is None else argv)
    command = next((a for a in argv if not a.startswith("-")), None)
    if command not in COMMANDS:
        command = None
    try:
        parser = build_parser(command)
    except ModuleNotFoundError as exc:
        print(f"trialkit {command}: this command is not available in this build ({exc})",
              file=sys.stderr)
        return 2
    args = parser.parse_args(argv)
    if getattr(args, "_run", None) is None:
        parser.print_help()
        return 0 if not argv else 2
    from trialkit.exceptions import TrialkitError

    try:
        return int(args._run(args) or 0)
    except TrialkitError as exc:
        print(f"trialkit {command}: error: {exc}", file=sys.stderr)
        return 2
    except FileNotFoundError as exc:
        print(f"trialkit {command}: error: file not found: {exc.filename}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:  # pragma: no cover - interactive only
        return 130
    except BrokenPipeError:  # output piped into e.g. `head`, which closed early
        sys.stderr.close()
        return 0


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
