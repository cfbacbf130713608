"""Validation of design kinds and options: each fault gives its Problem check code.

Each case is a real (malformed) trial-file fragment written to ``tmp_path`` and read
with ``tomllib``, as the trial-file validator reads it.
"""

import tomllib

import pytest

from trialkit.exceptions import DesignError
from trialkit.planning.designs import (
    DESIGN_KINDS,
    DESIGN_OPTIONS,
    build_design,
    check_design_options,
)
from trialkit.problems import ProblemReport
from trialkit.trial.factors import Factor

HEAD = """
[[factor]]
name = "chelator"
low = 2.0
high = 10.0

[[factor]]
name = "ph"
low = 5.0
high = 8.0

[[factor]]
name = "temperature"
low = 20.0
high = 50.0
"""
STIR3 = """
[[factor]]
name = "stir"
levels = ["off", "slow", "fast"]
"""
ZERO_LOW = """
[[factor]]
name = "surfactant"
low = 0.0
high = 1.0
"""

CASES = [
    # (id, factor blocks, [design] body, expected check)
    ("kind", HEAD, 'kind = "box-benkhen"', "unknown_design_kind"),
    ("option", HEAD, 'kind = "central-composite"\nalfa = "face"', "unknown_design_option"),
    ("option_none", HEAD, 'kind = "box-behnken"\nalpha = 1', "unknown_design_option"),
    ("missing", HEAD, 'kind = "fractional-factorial"', "missing_design_option"),
    ("res_range", HEAD, 'kind = "fractional-factorial"\nresolution = 9',
     "resolution_out_of_range"),
    ("res_type", HEAD, 'kind = "fractional-factorial"\nresolution = "IV"', "option_type"),
    ("res_reach", HEAD, 'kind = "fractional-factorial"\nresolution = 4',
     "resolution_unreachable"),
    ("gen_bad", HEAD + ZERO_LOW, 'kind = "fractional-factorial"\ngenerators = ["D = AE"]',
     "generators_invalid"),
    ("gen_same_word", HEAD + ZERO_LOW + ZERO_LOW.replace("surfactant", "stir"),
     'kind = "fractional-factorial"\ngenerators = ["D = AB", "E = AB"]',
     "generators_invalid"),
    ("gen_res", HEAD + ZERO_LOW + ZERO_LOW.replace("surfactant", "stir"),
     'kind = "fractional-factorial"\nresolution = 4\ngenerators = ["D = AB", "E = AC"]',
     "resolution_not_met"),
    ("frac_cat", HEAD + STIR3, 'kind = "fractional-factorial"\nresolution = 3',
     "categorical_not_two_level"),
    ("pb_cat", HEAD + STIR3, 'kind = "plackett-burman"', "categorical_not_two_level"),
    ("frac_few", HEAD.split("[[factor]]\nname = \"temperature\"")[0],
     'kind = "fractional-factorial"\nresolution = 3', "too_few_factors"),
    ("ccd_few", STIR3, 'kind = "central-composite"', "too_few_factors"),
    ("bbd_few", HEAD.split("[[factor]]\nname = \"temperature\"")[0],
     'kind = "box-behnken"', "too_few_factors"),
    ("ff_levels", HEAD, 'kind = "full-factorial"\nlevels = 1', "levels_invalid"),
    ("ff_runs", HEAD, 'kind = "full-factorial"\nlevels = 17', "too_many_runs"),
    ("alpha_word", HEAD, 'kind = "central-composite"\nalpha = "rotateable"', "alpha_invalid"),
    ("alpha_neg", HEAD, 'kind = "central-composite"\nalpha = -1.2', "alpha_invalid"),
    ("sweep_none", STIR3, 'kind = "sweep"', "sweep_no_continuous"),
    ("sweep_many", HEAD, 'kind = "sweep"\ncount = 3', "sweep_factor_ambiguous"),
    ("sweep_unknown", HEAD, 'kind = "sweep"\nfactor = "chelatr"', "sweep_factor_unknown"),
    ("sweep_range", HEAD, 'kind = "sweep"\nfactor = "ph"\nlevels = [4.0, 6.0, 8.0]',
     "sweep_levels_range"),
    ("sweep_order", HEAD, 'kind = "sweep"\nfactor = "ph"\nlevels = [5.0, 7.0, 6.0]',
     "sweep_levels_order"),
    ("sweep_repeat", HEAD, 'kind = "sweep"\nfactor = "ph"\nlevels = [5.0, 6.0, 6.0]',
     "sweep_levels_order"),
    ("sweep_both", HEAD, 'kind = "sweep"\nfactor = "ph"\nlevels = [5.0, 6.0]\ncount = 3',
     "conflicting_options"),
    ("sweep_count", HEAD, 'kind = "sweep"\nfactor = "ph"\ncount = 1', "sweep_count_invalid"),
    ("sweep_spacing", HEAD, 'kind = "sweep"\nfactor = "ph"\ncount = 4\nspacing = "log"',
     "spacing_invalid"),
    ("sweep_geo", ZERO_LOW, 'kind = "sweep"\ncount = 4\nspacing = "geometric"',
     "geometric_nonpositive"),
    ("sweep_no_count", ZERO_LOW, 'kind = "sweep"\nspacing = "linear"',
     "missing_design_option"),
    ("untabulated", "".join(HEAD.replace("chelator", f"c{i}").replace("ph", f"p{i}").replace(
        "temperature", f"t{i}") for i in range(4)),
     'kind = "fractional-factorial"\nresolution = 4', "no_tabulated_design"),
    ("lhs_runs", HEAD, 'kind = "latin-hypercube"\nruns = 1', "runs_invalid"),
    ("lhs_spread", HEAD, 'kind = "latin-hypercube"\nspread = "widest"', "spread_invalid"),
]


def _factors(raw):
    out = []
    for f in raw.get("factor", []):
        if "levels" in f:
            out.append(Factor.categorical(f["name"], f["levels"]))
        else:
            out.append(Factor.continuous(f["name"], f["low"], f["high"]))
    return out


def _load(tmp_path, factors_toml, design_body):
    path = tmp_path / "trial.toml"
    path.write_text(factors_toml + "\n[design]\n" + design_body + "\n")
    raw = tomllib.loads(path.read_text())
    design = dict(raw["design"])
    return path, _factors(raw), design.pop("kind"), design


@pytest.mark.parametrize("case", CASES, ids=[c[0] for c in CASES])
def test_each_fault_has_its_check_code(tmp_path, case):
    _, factor_toml, body, check = case
    path, factors, kind, options = _load(tmp_path, factor_toml, body)
    report = ProblemReport(str(path))
    check_design_options(factors, kind, options, report)
    assert check in report.checks()
    problem = next(p for p in report if p.check == check)
    assert problem.where.startswith("design") and problem.fix and problem.message
    with pytest.raises(DesignError) as info:
        build_design(factors, kind, options, seed=1)
    assert check in info.value.problems.checks()


def test_suggestions_name_the_nearest_valid_word(tmp_path):
    path, factors, kind, options = _load(tmp_path, HEAD,
                                         'kind = "central-composite"\nalfa = "face"')
    report = ProblemReport(str(path))
    check_design_options(factors, kind, options, report)
    assert "'alpha'" in report.table().loc[0, "fix"]
    report = ProblemReport("t")
    check_design_options(factors, "box-benkhen", {}, report)
    assert "'box-behnken'" in report.table().loc[0, "fix"]


def test_all_problems_collected_at_once(tmp_path):
    path, factors, kind, options = _load(
        tmp_path, HEAD, 'kind = "sweep"\nfactor = "ph"\nlevels = [9.0, 6.0]\nsteps = 3')
    report = ProblemReport(str(path))
    check_design_options(factors, kind, options, report, where="design")
    assert set(report.checks()) == {"unknown_design_option", "sweep_levels_order",
                                    "sweep_levels_range"}


@pytest.mark.parametrize("kind,options", [
    ("full-factorial", {"levels": 3}),
    ("fractional-factorial", {"generators": ["C = -AB"]}),
    ("plackett-burman", {}),
    ("central-composite", {"alpha": "inscribed"}),
    ("box-behnken", {}),
    ("sweep", {"factor": "ph", "count": 5, "spacing": "geometric"}),
    ("latin-hypercube", {"runs": 12, "spread": "widest-gaps", "iterations": 3}),
])
def test_valid_options_give_no_problem(tmp_path, kind, options):
    factors = _factors(tomllib.loads(HEAD))
    report = ProblemReport("t")
    check_design_options(factors, kind, options, report)
    assert len(report) == 0
    assert build_design(factors, kind, options, seed=5).kind == kind


def test_every_kind_has_an_options_entry():
    assert set(DESIGN_OPTIONS) == set(DESIGN_KINDS)
    assert DESIGN_KINDS == ("full-factorial", "fractional-factorial", "plackett-burman",
                            "central-composite", "box-behnken", "sweep", "latin-hypercube",
                            "optimal")


def test_faulty_factors_do_not_crash_the_option_checks():
    # a factor with low >= high is the trial-file checker's problem, not ours
    bad = [Factor("c", "continuous", "", 5.0, 1.0), Factor("d", "continuous", "", None, None)]
    report = ProblemReport("t")
    check_design_options(bad, "sweep", {"factor": "c", "levels": [2.0, 3.0],
                                        "nonsense": 1}, report)
    assert report.checks() == ["unknown_design_option"]
