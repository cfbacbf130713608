"""Trial-file validation: every mistake gets its own message, all at once, as a real file."""

from __future__ import annotations

import textwrap

import pytest

from trialkit.exceptions import TrialFileError
from trialkit.trial.file import load_trial

GOOD = """
[trial]
title = "Sweep"
seed = 3

[[factor]]
name = "chelator"
unit = "% w/v"
low = 2.0
high = 10.0

[[factor]]
name = "surfactant"
levels = ["none", "added"]

[design]
kind = "full-factorial"

[layout]
replicates = 2
witness_coupons = 1

[[response]]
name = "removal"
unit = "%"
aim = "higher"
"""


def write(tmp_path, text, name="trial.toml"):
    path = tmp_path / name
    path.write_text(textwrap.dedent(text), encoding="utf-8")
    return path


def problems_of(path):
    with pytest.raises(TrialFileError) as info:
        load_trial(path)
    return info.value.problems


def test_good_file_loads(tmp_path):
    trial = load_trial(write(tmp_path, GOOD))
    assert [f.name for f in trial.factors] == ["chelator", "surfactant"]
    assert trial.factors[0].unit == "% w/v"
    assert trial.factors[1].kind == "categorical"
    assert trial.layout.replicates == 2 and trial.layout.witness_coupons == 1
    assert trial.responses[0].aim == "higher"
    # a trial folder works as well as the file
    assert load_trial(tmp_path).title == "Sweep"


# (case id, text replacement applied to GOOD, expected check code, expected word in message)
CASES = [
    ("unknown-key", ("replicates = 2", "replicate = 2"), "unknown_key", "replicates"),
    ("low-not-below-high", ("low = 2.0", "low = 12.0"), "low_not_below_high", "swap"),
    ("duplicate-factor", ('name = "surfactant"', 'name = "chelator"'), "duplicate_name",
     "twice"),
    ("unknown-unit", ('unit = "% w/v"', 'unit = "spoonfuls"'), "unknown_unit", "spoonfuls"),
    ("bad-design-kind", ('kind = "full-factorial"', 'kind = "full-factorail"'),
     "bad_design_kind", "full-factorial"),
    ("missing-seed", ("seed = 3", ""), "missing_seed", "seed"),
    ("bad-aim", ('aim = "higher"', 'aim = "maximise"'), "bad_aim", "higher"),
    ("bad-control", ("witness_coupons = 1", 'controls = ["water"]'), "bad_control", "untreated"),
    ("one-level", ('levels = ["none", "added"]', 'levels = ["none"]'), "too_few_levels", "two"),
    ("text-number", ("high = 10.0", 'high = "10"'), "not_number", "number"),
    ("zero-replicates", ("replicates = 2", "replicates = 0"), "too_small", "at least 1"),
    ("bad-name", ('name = "chelator"', 'name = "2nd chelator"'), "bad_name", "letter"),
]


@pytest.mark.parametrize("case", CASES, ids=[c[0] for c in CASES])
def test_each_mistake_is_reported(tmp_path, case):
    _, (old, new), check, word = case
    assert old in GOOD
    report = problems_of(write(tmp_path, GOOD.replace(old, new, 1)))
    assert check in report.checks()
    text = str(report)
    assert word in text
    assert str(tmp_path / "trial.toml") in text  # names the file


# Issue 12: a trial file written with the retired multi-response words is refused with a
# one-line hint naming the new key or value (never silently accepted).
RETIRED = [
    ('aim = "higher"', 'goal = "maximize"', "retired_key", "aim ="),
    ('aim = "higher"', 'aim = "maximize"', "bad_aim", '"higher"'),
    ('aim = "higher"', 'aim = "higher"\nlower = 50', "retired_key", "unacceptable ="),
    ('aim = "higher"', 'aim = "higher"\nupper = 90', "retired_key", "satisfactory ="),
    ('aim = "higher"', 'aim = "higher"\nimportance = 2', "retired_key", "priority ="),
    ('aim = "higher"', 'aim = "higher"\nweight = 2', "retired_key", "shape ="),
    ('aim = "higher"', 'aim = "on-target"\ntarget = 5', "retired_key", "ideal ="),
]


@pytest.mark.parametrize("old, new, check, hint", RETIRED, ids=[r[1] for r in RETIRED])
def test_retired_response_words_name_the_new_ones(tmp_path, old, new, check, hint):
    report = problems_of(write(tmp_path, GOOD.replace(old, new, 1)))
    assert check in report.checks()
    assert hint in str(report) and "renamed" in str(report)


def test_aim_limits_are_read_and_checked(tmp_path):
    good = GOOD.replace('aim = "higher"', 'aim = "higher"\nunacceptable = 40\n'
                        'satisfactory = 90\nshape = 2\npriority = 3')
    spec = load_trial(write(tmp_path, good)).responses[0]
    assert (spec.unacceptable, spec.satisfactory, spec.shape, spec.priority) == (40, 90, 2, 3)
    assert spec.is_wanted and spec.has_limits
    reversed_limits = good.replace("unacceptable = 40", "unacceptable = 95")
    assert "limits_reversed" in problems_of(write(tmp_path, reversed_limits)).checks()
    on_target = GOOD.replace('aim = "higher"', 'aim = "on-target"\nideal = 6.5\n'
                             'unacceptable = [5.5, 7.5]')
    spec = load_trial(write(tmp_path, on_target)).responses[0]
    assert spec.unacceptable == (5.5, 7.5) and spec.ideal == 6.5
    outside = on_target.replace("ideal = 6.5", "ideal = 8")
    assert "ideal_outside_limits" in problems_of(write(tmp_path, outside)).checks()
    one_limit = on_target.replace("[5.5, 7.5]", "5.5")
    assert "bad_unacceptable" in problems_of(write(tmp_path, one_limit)).checks()


def test_all_problems_at_once(tmp_path):
    bad = (GOOD.replace("low = 2.0", "low = 12.0").replace("replicates = 2", "replicats = 2")
           .replace('aim = "higher"', 'aim = "most"'))
    report = problems_of(write(tmp_path, bad))
    assert {"low_not_below_high", "unknown_key", "bad_aim"} <= set(report.checks())
    table = report.table()
    assert list(table.columns[:4]) == ["source", "where", "row", "column"]
    assert "layout.replicats" in table["where"].tolist()


def test_toml_syntax_error_names_line(tmp_path):
    report = problems_of(write(tmp_path, GOOD.replace('title = "Sweep"', "title = Sweep")))
    assert report.checks() == ["toml_syntax"]
    assert "line" in str(report)


def test_resolution_the_factor_count_cannot_reach(tmp_path):
    text = """
    [trial]
    title = "Screen"
    seed = 1
    [[factor]]
    name = "a"
    low = 0
    high = 1
    [[factor]]
    name = "b"
    low = 0
    high = 1
    [[factor]]
    name = "c"
    low = 0
    high = 1
    [design]
    kind = "fractional-factorial"
    resolution = 5
    """
    report = problems_of(write(tmp_path, text))
    assert any("resolution" in p.where or "resolution" in p.message for p in report)


def test_box_behnken_refuses_categorical_only(tmp_path):
    text = GOOD.replace('kind = "full-factorial"', 'kind = "box-behnken"')
    report = problems_of(write(tmp_path, text))
    assert any(p.where.startswith("design") for p in report)


def test_blocks_that_do_not_fit_a_composite(tmp_path):
    text = """
    [trial]
    title = "Surface"
    seed = 1
    [[factor]]
    name = "chelator"
    unit = "% w/v"
    low = 2
    high = 10
    [[factor]]
    name = "ph"
    unit = "pH"
    low = 5
    high = 8
    [design]
    kind = "central-composite"
    [layout]
    blocks = 3
    """
    report = problems_of(write(tmp_path, text))
    assert "blocks_do_not_fit" in report.checks()


def test_cli_reports_without_traceback(tmp_path, cli):
    path = write(tmp_path, GOOD.replace("low = 2.0", "low = 12.0").replace(
        'unit = "% w/v"', 'unit = "bogons"'))
    result = cli("plan", str(path))
    assert result.returncode == 1  # input refused, its problems listed (README exit codes)
    assert "Traceback" not in result.stderr
    assert "low must be below high" in result.stderr
    assert "bogons" in result.stderr
    assert not (tmp_path / "plan.csv").exists()


def test_missing_file_is_a_clear_error(tmp_path, cli):
    result = cli("plan", str(tmp_path / "nope.toml"))
    assert result.returncode == 2
    assert "Traceback" not in result.stderr
    assert "trialkit new" in result.stderr
