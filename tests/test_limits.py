"""Hardening of the trial file (trialkit/trial/limits.py and the checks that use it).

A property-based test spoils the bundled example trial files (invented scenarios) and the
shared test texts one spot at a time and runs ``trialkit plan`` on each: the answer is
exit 0 with a complete plan, or exit 1/2 with a message, never a traceback.  The named
regression tests below pin one fault each, with its message.
"""

from __future__ import annotations

import contextlib
import io
import math
import sys
import tempfile
import tomllib
import warnings
from pathlib import Path

import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from trialkit.cli import main
from trialkit.exceptions import PlanError, TrialFileError
from trialkit.planning.plan import make_plan
from trialkit.problems import ProblemReport
from trialkit.trial import limits
from trialkit.trial.file import parse_trial_text

sys.path.insert(0, str(Path(__file__).parent))
from trial_mutations import ODD_VALUES, mutate, paths, to_toml  # noqa: E402
from trial_texts import trial_text  # noqa: E402

REPO = Path(__file__).resolve().parents[1]
BASES = [tomllib.loads((REPO / "example_trials" / name / "trial.toml").read_text("utf-8"))
         for name in ("chelator-sweep", "five-factor-screen", "surface-follow-up")]
BASES.append(tomllib.loads(trial_text("chelator", "surfactant", layout="replicates = 2\n"
                                      "witness_coupons = 1")))
BASE_PATHS = [paths(doc) for doc in BASES]


def run_plan(text: str, folder: Path) -> tuple[int, str]:
    """``trialkit plan`` on ``text`` in ``folder``: (exit code, stderr)."""
    (folder / "trial.toml").write_text(text, encoding="utf-8")
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err), \
            warnings.catch_warnings():
        warnings.simplefilter("ignore")
        code = main(["plan", str(folder)])
    return code, err.getvalue()


def assert_complete_plan(folder: Path) -> None:
    table = pd.read_csv(folder / "plan.csv", keep_default_na=False, dtype=str)
    treated = table[~table["point"].isin(["control", "reference"])]
    assert len(treated) > 0
    assert not (treated == "").any().any(), "a treated bath with a blank cell"


odd = st.one_of(
    st.sampled_from(ODD_VALUES),
    st.floats(allow_nan=True, allow_infinity=True),
    st.integers(min_value=-(2**63), max_value=2**63 - 1),
    st.text(st.characters(exclude_categories=("Cs",)), max_size=12),
)


@st.composite
def spoiled_trial(draw):
    i = draw(st.integers(0, len(BASES) - 1))
    doc, where = BASES[i], BASE_PATHS[i]
    doc = draw(st.just(doc))
    path = draw(st.sampled_from(where))
    action = draw(st.sampled_from(["drop", "nest", "set", "set", "set"]))
    value = draw(odd) if action == "set" else None
    return to_toml(mutate(doc, path, action, value)), (i, path, action, value)


@settings(max_examples=300, derandomize=True, deadline=None, database=None,
          suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])
@given(spoiled_trial())
def test_spoiled_trial_files_are_refused_or_planned_never_a_traceback(case):
    text, how = case
    with tempfile.TemporaryDirectory(prefix="trialkit-fuzz-") as tmp:
        code, err = run_plan(text, Path(tmp))
        assert "Traceback" not in err, how
        if code == 0:
            assert_complete_plan(Path(tmp))
        else:
            assert code in (1, 2), (how, code, err[-500:])
            assert err.startswith("trialkit plan: error:"), (how, err[-500:])


# -- named regression cases -----------------------------------------------------------
def problems_of(text: str, *, plan: bool = False) -> ProblemReport:
    with pytest.raises((TrialFileError, PlanError)) as info:
        trial = parse_trial_text(text)
        if plan:
            make_plan(trial)
    return info.value.problems


@pytest.mark.parametrize("layout, check, fragment", [
    ("replicates = nan", "not_finite", "finite"),
    ("replicates = inf", "not_finite", "finite"),
    ("center_points = -inf", "not_finite", "finite"),
    ("replicates = 1000000", "over_limit", "limited to 100"),
    ("witness_coupons = 1000000000", "over_limit", "limited to 100"),
    ("coupons_per_bath = 1000000000000000000", "over_limit", "limited to 100"),
    ("center_points = 1000", "over_limit", "limited to 100"),
    ("blocks = { a = 1 }", "not_integer", "whole number"),
    ("block_label = { a = 1 }", "not_text", "must be text"),
    ('block_label = "x\\u0000y"', "control_character", "control character"),
])
def test_layout_fault_is_a_problem(layout, check, fragment):
    report = problems_of(trial_text("chelator", layout=layout))
    assert check in report.checks()
    assert fragment in str(report)


def test_nan_in_a_factor_range_is_refused():
    text = trial_text("chelator").replace("low = 2", "low = nan")
    report = problems_of(text)
    assert report.checks() == ["not_finite"] and "factor[1].low" in str(report)


def test_huge_factor_range_is_refused():
    text = trial_text("chelator").replace("high = 10", "high = 1e300")
    assert problems_of(text).checks() == ["out_of_range"]


def test_ph_range_outside_0_to_14_is_refused():
    text = trial_text("chelator", "ph").replace("low = 5.5\nhigh = 7.5",
                                                'unit = "pH"\nlow = 5.5\nhigh = 17')
    report = problems_of(text)
    assert report.checks() == ["out_of_range"] and "0-14" in str(report)


def test_deeply_nested_value_is_refused_not_a_recursion_error():
    text = trial_text("chelator", extra="odd = " + "[" * 5000 + "]" * 5000)
    with pytest.raises(TrialFileError) as info:
        parse_trial_text(text)
    assert info.value.problems.checks() == ["too_deep"] and info.value.exit_code == 2


def test_moderately_nested_value_is_refused():
    text = trial_text("chelator", layout="replicates = [[[[[[[[[1]]]]]]]]]")
    assert "too_deep" in problems_of(text).checks()


def test_nested_table_in_bath_set_by_is_a_problem():
    text = trial_text("chelator", "ph", extra='[bath]\nadjust_with = "citric acid"\n'
                      '[bath.set_by]\ntarget_ph = { factor = "ph" }\n'
                      '[[bath.ingredient]]\nname = "tetrasodium EDTA"\nfactor = "chelator"\n')
    report = problems_of(text)
    assert "unknown_factor" in report.checks()


def test_text_where_a_name_belongs():
    text = trial_text("chelator").replace('name = "chelator"', "name = 3.5")
    assert "bad_name" in problems_of(text).checks()


def test_hidden_direction_mark_in_a_title_is_refused():
    text = trial_text("chelator", title="bath \u202e3 tset")
    assert problems_of(text).checks() == ["hidden_character"]


def test_long_text_is_quoted_by_a_prefix_only():
    text = trial_text("chelator").replace('unit = "% w/v"', "unit = " + "[" + "1, " * 3000
                                          + "1]")
    report = problems_of(text)
    assert "not_text" in report.checks()
    assert max(len(p.value) for p in report) < 120


def test_oversized_plan_is_refused_at_once_with_the_limit(monkeypatch):
    """Refused from the counts, before any table is laid out: the layout's pd.concat is
    made to fail, and is never reached."""
    import types

    import pandas

    from trialkit.planning import plan as plan_module

    def no_layout(*args, **kwargs):
        raise AssertionError("the plan was laid out before its size was checked")

    monkeypatch.setattr(plan_module, "pd", types.SimpleNamespace(
        **{k: getattr(pandas, k) for k in dir(pandas)
           if not k.startswith("__") and k != "concat"}, concat=no_layout))
    text = trial_text("chelator", "ph", "temperature", "agitation",
                      layout="replicates = 100\ncenter_points = 100\ncoupons_per_bath = 100")
    report = problems_of(text, plan=True)
    assert report.checks().count("over_limit") == 1
    assert f"{limits.MAX_COUPONS:,}" in str(report)


def test_sweep_count_is_bounded():
    text = trial_text("chelator", design='kind = "sweep"\ncount = 1000000000')
    report = problems_of(text)
    assert report.checks() == ["over_limit"] and "count" in str(report)


def test_generators_that_give_a_huge_fraction_are_refused():
    from trialkit.planning.designs.options import check_design_options
    from trialkit.trial.factors import Factor

    r = ProblemReport("trial.toml")
    fs = [Factor.continuous(f"f{i}", 0, 1) for i in range(25)]
    check_design_options(fs, "fractional-factorial", {"generators": ["Z = ABC"]}, r)
    assert r.checks() == ["too_many_runs"]


def test_latin_hypercube_runs_are_bounded():
    text = trial_text("chelator", design='kind = "latin-hypercube"\nruns = 10000000')
    assert problems_of(text).checks() == ["over_limit"]


def test_inspections_are_bounded():
    times = ", ".join(str(i) for i in range(1, limits.MAX_INSPECTIONS + 2))
    text = trial_text("chelator", extra=f"[sheet]\ninspections_h = [{times}]\n")
    assert problems_of(text).checks() == ["over_limit"]


def test_no_rusted_coupons_is_warned_with_the_reason():
    from trialkit.exceptions import TrialkitWarning

    text = trial_text("chelator", layout="coupons_per_bath = 0\nwitness_coupons = 1")
    with pytest.warns(TrialkitWarning, match="no rust removal can be measured"):
        parse_trial_text(text)


def test_check_document_accepts_a_good_file():
    p = ProblemReport("trial.toml")
    for doc in BASES:
        limits.check_document(doc, p)
    assert not p


def test_short_quotes_a_prefix():
    assert limits.short("a" * 500).endswith("(500 characters)")
    assert limits.short("abc") == "abc"
    assert limits.short(math.inf) == "inf"


def test_cli_exit_code_of_a_refused_trial_file_is_1(tmp_path):
    code, err = run_plan(trial_text("chelator", layout="replicates = nan"), tmp_path)
    assert code == 1 and "every number must be finite" in err
    assert not (tmp_path / "plan.csv").exists()


def test_cli_exit_code_of_an_unreadable_trial_file_is_2(tmp_path):
    code, err = run_plan("this is [not toml", tmp_path)
    assert code == 2 and "not valid TOML" in err
