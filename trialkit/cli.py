"""The ``trialkit`` command line: a thin face over the library.

Each sub-command lives in ``trialkit/commands/<name>.py`` and defines two functions,
``configure(parser)`` (adds its options) and ``run(args) -> int`` (calls the library,
prints, returns the exit code).  Only the chosen command's module is imported, so
``trialkit --help`` starts fast.  Errors from bad input (:class:`TrialkitError`) are
printed as messages, never as tracebacks.

Exit codes (:data:`EXIT_CODES`): 0 done; 1 input refused, its problems listed; 2 usage
error or an input that cannot be read (missing, not UTF-8, not TOML, not writable ...); 3
an unexpected internal error, printed as one line naming the file where the full traceback
was saved.
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
    "photos": ("trialkit.commands.photos", "rust coverage measured from photos of coupons"),
    "history": ("trialkit.commands.history", "every recorded value and its revisions"),
    "verify": ("trialkit.commands.verify", "check the record log's hash chain for tampering"),
    "responses": ("trialkit.commands.responses", "derived responses per coupon and bath"),
    "analyze": ("trialkit.commands.analyze", "ANOVA, effects, surfaces and the best recipe"),
    "report": ("trialkit.commands.report", "write the HTML trial report"),
    "demo": ("trialkit.commands.demo", "run the whole loop on the bundled example trials"),
}


#: Exit code -> meaning (shown by ``trialkit --help``; the numbers are in trialkit.exceptions).
EXIT_CODES = {
    0: "done",
    1: "input refused: the trial file, sheet or table was read and has problems; "
       "every problem is listed",
    2: "usage error, or an input that cannot be read or an output that cannot be written "
       "(missing file, not UTF-8, not TOML, damaged record log, folder not writable)",
    3: "unexpected internal error (a fault in trialkit): one line on stderr names the file "
       "holding the full traceback; please report it",
}


def _epilog() -> str:
    import textwrap

    lines = ["exit codes:"]
    for code, text in EXIT_CODES.items():
        lines += textwrap.wrap(text, 84, initial_indent=f"  {code}  ",
                               subsequent_indent="     ")
    return "\n".join(lines)


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
        epilog=_epilog(), formatter_class=argparse.RawDescriptionHelpFormatter,
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
        return exc.exit_code
    except FileNotFoundError as exc:
        print(f"trialkit {command}: error: file not found: {exc.filename}", file=sys.stderr)
        return 2
    except (PermissionError, IsADirectoryError, NotADirectoryError, FileExistsError) as exc:
        what = {PermissionError: "permission denied", IsADirectoryError: "is a folder",
                NotADirectoryError: "not a folder", FileExistsError: "already exists"}
        hint = "" if not isinstance(exc, PermissionError) else (
            " If you may not write there, give --out with a place you may write to."
            if hasattr(args, "out") else " If you may not write there, copy the trial "
            "folder to one you may write to (reading commands work where it is).")
        print(f"trialkit {command}: error: {what[type(exc)]}: {exc.filename} (nothing was "
              f"written there).{hint}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:  # pragma: no cover - interactive only
        return 130
    except BrokenPipeError:  # output piped into e.g. `head`, which closed early
        sys.stderr.close()
        return 0
    except Exception as exc:  # a fault in trialkit: one line, the traceback in a file
        if type(exc).__module__ == "sqlite3" and isinstance(exc, sqlite3_error()):
            print(f"trialkit {command}: error: the record log cannot be read ({exc}): it is "
                  "damaged; nothing was changed. 'trialkit verify DIR' says more.",
                  file=sys.stderr)
            return 2
        print(f"trialkit {command}: internal error ({type(exc).__name__}): this is a fault "
              f"in trialkit, not in your input; the full traceback was saved to "
              f"{_save_traceback(command, argv)}", file=sys.stderr)
        return 3


def sqlite3_error() -> type:
    import sqlite3

    return sqlite3.DatabaseError


def _save_traceback(command: str | None, argv: list[str]) -> str:
    """Write the current exception's traceback to a new file; return its path."""
    import datetime
    import os
    import tempfile
    import traceback

    folder = os.environ.get("TRIALKIT_TRACEBACK_DIR") or tempfile.gettempdir()
    stamp = datetime.datetime.now(datetime.UTC).strftime("%Y%m%d-%H%M%S")
    try:
        fd, path = tempfile.mkstemp(prefix=f"trialkit-traceback-{stamp}-", suffix=".txt",
                                    dir=folder)
        with os.fdopen(fd, "w", encoding="utf-8") as out:
            out.write(f"trialkit {_version()} {' '.join(['trialkit', *argv])}\n\n")
            out.write(traceback.format_exc())
        return path
    except OSError:  # nowhere to write: the one line still says what happened
        return "(nowhere: the temporary folder is not writable)"


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
