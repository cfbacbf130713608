"""The command line's exit codes (trialkit/cli.py): 0 done, 1 refused, 2 usage or
unreadable input, 3 an internal error with its traceback saved to a file."""

from __future__ import annotations

import sys
from pathlib import Path

import pytest

from trialkit import cli
from trialkit.exceptions import EXIT_INTERNAL, SheetError, TrialkitError
from trialkit.problems import ProblemReport

sys.path.insert(0, str(Path(__file__).parent))
from trial_texts import trial_text  # noqa: E402


def _with_run(monkeypatch, run):
    """Make ``trialkit plan`` call ``run`` instead of the real command."""
    real = cli.build_parser

    def build(command=None):
        parser = real(command)
        parser._subparsers._group_actions[0].choices["plan"].set_defaults(_run=run)
        return parser

    monkeypatch.setattr(cli, "build_parser", build)


def test_internal_error_is_one_line_and_the_traceback_is_saved(monkeypatch, tmp_path,
                                                               capsys):
    def broken(args):
        raise ZeroDivisionError("a fault planted by the test")

    _with_run(monkeypatch, broken)
    monkeypatch.setenv("TRIALKIT_TRACEBACK_DIR", str(tmp_path))
    code = cli.main(["plan", "anything"])
    err = capsys.readouterr().err
    assert code == EXIT_INTERNAL == 3
    assert len(err.strip().splitlines()) == 1 and "Traceback" not in err
    assert "internal error (ZeroDivisionError)" in err
    saved = list(tmp_path.glob("trialkit-traceback-*.txt"))
    assert len(saved) == 1 and str(saved[0]) in err
    text = saved[0].read_text()
    assert "Traceback" in text and "a fault planted by the test" in text


def test_refused_input_is_exit_1_usage_error_is_exit_2(monkeypatch, capsys):
    report = ProblemReport("sheet.csv")
    report.add("row 2", "something is wrong", check="invalid")

    def refused(args):
        raise SheetError("refused", report)

    _with_run(monkeypatch, refused)
    assert cli.main(["plan", "x"]) == 1

    def usage(args):
        raise TrialkitError("--out must name a folder")

    _with_run(monkeypatch, usage)
    assert cli.main(["plan", "x"]) == 2
    assert "--out must name a folder" in capsys.readouterr().err


def test_unknown_option_is_exit_2(capsys):
    with pytest.raises(SystemExit) as info:
        cli.main(["plan", "--no-such-option"])
    assert info.value.code == 2


def test_permission_error_is_a_message_not_a_traceback(monkeypatch, capsys):
    def denied(args):
        raise PermissionError(13, "Permission denied", "/somewhere/plan.csv")

    _with_run(monkeypatch, denied)
    assert cli.main(["plan", "x"]) == 2
    err = capsys.readouterr().err
    assert "permission denied: /somewhere/plan.csv" in err and "Traceback" not in err


def test_help_lists_the_exit_codes(capsys):
    with pytest.raises(SystemExit):
        cli.main(["--help"])
    out = capsys.readouterr().out
    for code in ("0  done", "1  input refused", "2  usage error", "3  unexpected internal"):
        assert code in out


def test_trial_file_problems_exit_1(tmp_path, capsys):
    (tmp_path / "trial.toml").write_text(trial_text("chelator", layout="replicates = -inf"))
    assert cli.main(["plan", str(tmp_path)]) == 1
    assert "every number must be finite" in capsys.readouterr().err
