"""Tests of trialkit.planning.designs.optimal: coordinate-exchange D- and I-optimal designs."""

import itertools
import tomllib

import numpy as np
import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from trialkit.exceptions import DesignError
from trialkit.planning import power as pw
from trialkit.planning.designs.optimal import build_optimal, check_optimal_options, optimal_design
from trialkit.problems import ProblemReport
from trialkit.trial.factors import Factor

CHELATOR = Factor.continuous("chelator", 2, 10, unit="% w/v")
PH = Factor.continuous("ph", 5, 8)
TEMP = Factor.continuous("temperature", 20, 50, unit="degC")
SURF = Factor.categorical("surfactant", ["none", "added"])


def _cont(k):
    return tuple(Factor.continuous(n, 0, 1) for n in "abcdefg"[:k])


# -- known optimal designs -----------------------------------------------------------
@pytest.mark.parametrize("k, runs, tries", [(3, 8, 3), (4, 12, 5), (5, 16, 5), (7, 12, 5)])
def test_first_order_d_optimal_is_orthogonal_two_level(k, runs, tries):
    # from memory (e.g. Atkinson, Donev & Tobias, Optimum Experimental Designs, ch. 11):
    # for a first-order model on the cube with n a multiple of 4, an orthogonal two-level
    # design (a Hadamard/Plackett-Burman matrix) is D-optimal, X'X = n I, D-eff 100 %
    res = optimal_design(_cont(k), runs, model="main", tries=tries, seed=1)
    assert res.d_efficiency == pytest.approx(100.0, abs=1e-9)
    assert set(np.unique(res.coded.to_numpy())) == {-1.0, 1.0}
    X = pw.DesignModel.from_spec("main", _cont(k)).expand(res.coded.to_numpy())
    np.testing.assert_allclose(X.T @ X, runs * np.eye(k + 1), atol=1e-9)


def test_quadratic_in_one_factor_with_three_runs_is_minus_one_zero_one():
    # from memory (Atkinson, Donev & Tobias): D-optimal exact 3-run design for
    # quadratic regression on [-1, 1] puts one run at each of -1, 0, 1
    res = optimal_design((PH,), 3, model="quadratic", grid=21, seed=4)
    assert sorted(res.coded["ph"].round(12)) == [-1.0, 0.0, 1.0]


def test_i_optimal_quadratic_in_one_factor_puts_half_the_runs_at_the_centre():
    # from memory (Atkinson, Donev & Tobias): the I-optimal continuous design for
    # quadratic regression on [-1, 1] has weights 1/4, 1/2, 1/4 at -1, 0, 1
    res = optimal_design((PH,), 4, model="quadratic", criterion="I", grid=21, seed=2)
    assert sorted(res.coded["ph"].round(12)) == [-1.0, 0.0, 0.0, 1.0]


def test_i_optimal_has_lower_average_variance_than_d_optimal():
    fs = (CHELATOR, PH)
    d = optimal_design(fs, 9, model="quadratic", criterion="D", seed=3)
    i = optimal_design(fs, 9, model="quadratic", criterion="I", seed=3)
    assert i.average_variance < d.average_variance
    assert d.log_det > i.log_det


def test_d_efficiency_of_result_equals_pydoe3():
    # pyDOE3's d_efficiency: 100 * det(X'X/n)^(1/p) (same definition, read in its source)
    from pyDOE3.doe_optimal import d_efficiency as pydoe_d

    res = optimal_design((CHELATOR, PH, TEMP), 12, model="quadratic", seed=5)
    X = pw.DesignModel.from_spec("quadratic", (CHELATOR, PH, TEMP)).expand(
        res.coded.to_numpy())
    assert res.d_efficiency == pytest.approx(pydoe_d(X), rel=1e-10)


def test_same_seed_same_design_and_replicates_allowed():
    a = optimal_design((CHELATOR, SURF), 8, model="interactions", seed=9)
    b = optimal_design((CHELATOR, SURF), 8, model="interactions", seed=9)
    pd.testing.assert_frame_equal(a.coded, b.coded)
    # 8 runs, 4 coefficients: the D-optimal design repeats the 4 corners twice
    assert a.coded.duplicated().sum() == 4
    assert a.d_efficiency == pytest.approx(100.0, abs=1e-9)


def test_never_singular_where_grid_order_greedy_starts_fail():
    # 5 factors, full quadratic (21 coefficients), 27 runs: a non-singular design
    res = optimal_design(_cont(5), 27, model="quadratic", tries=2, seed=1)
    X = pw.DesignModel.from_spec("quadratic", _cont(5)).expand(res.coded.to_numpy())
    assert np.linalg.matrix_rank(X) == 21
    assert res.d_efficiency > 40.0


# -- constraints, combinations that cannot be mixed, fixed runs, augmentation --------------------
@settings(max_examples=10, deadline=None, derandomize=True,
          suppress_health_check=[HealthCheck.too_slow])
@given(intercept=st.floats(4.5, 5.5), slope=st.floats(-0.3, 0.1),
       upper=st.floats(9.5, 12.0))
def test_every_run_meets_the_constraints(intercept, slope, upper):
    # the centre (chelator 6, ph 6.5) meets both constraints for all drawn values
    # (6.5 >= 5.5 + 0.1*6 and 6 + 0.5*6.5 <= 9.5), so the region holds a design
    cons = [f"ph >= {intercept!r} + {slope!r}*chelator", f"chelator + 0.5*ph <= {upper!r}"]
    res = optimal_design((CHELATOR, PH), 6, model="interactions", constraints=cons,
                         tries=1, seed=0)
    nat = pd.DataFrame({"chelator": CHELATOR.to_natural(res.coded.chelator.to_numpy()),
                        "ph": PH.to_natural(res.coded.ph.to_numpy())})
    tol = 1e-7
    assert (nat.ph >= intercept + slope * nat.chelator - tol).all()
    assert (nat.chelator + 0.5 * nat.ph <= upper + tol).all()
    assert nat.chelator.between(2 - tol, 10 + tol).all()
    assert nat.ph.between(5 - tol, 8 + tol).all()


def test_constraint_boundary_is_used_by_the_design():
    # with pH >= 5 + 0.25*chelator the low-pH, high-chelator corner is cut off; the
    # D-optimal design puts a run on the cutting line (ph = 7.5 at chelator 10)
    res = optimal_design((CHELATOR, PH), 6, model="main",
                         constraints=["ph >= 5 + 0.25*chelator"], seed=2)
    nat = np.column_stack([CHELATOR.to_natural(res.coded.chelator.to_numpy()),
                           PH.to_natural(res.coded.ph.to_numpy())])
    assert np.all(nat[:, 1] >= 5 + 0.25 * nat[:, 0] - 1e-9)
    on_line = np.isclose(nat[:, 1], 5 + 0.25 * nat[:, 0], atol=1e-9)
    assert on_line.any()


def test_infeasible_constraints_give_a_clear_error():
    with pytest.raises(DesignError, match="no combination of factor levels"):
        optimal_design((CHELATOR, PH), 6, model="main",
                       constraints=["ph >= 7.5 + 0.5*chelator"])  # needs ph >= 8.5


def test_disallowed_combinations_never_appear():
    res = optimal_design((TEMP, SURF), 10, model="interactions",
                         cannot_mix=[{"surfactant": "added", "temperature": [40, 50]}], seed=1)
    temp = TEMP.to_natural(res.coded.temperature.to_numpy())
    bad = (res.coded.surfactant == "added") & (temp >= 40 - 1e-9)
    assert not bad.any()


def test_fixed_runs_stay_and_augmentation_beats_the_three_level_factorial():
    # augmenting a 2^2 (already run) with 5 runs for a quadratic model: the 3^2
    # factorial is one such augmentation, so the optimum is at least as good
    corners = pd.DataFrame(list(itertools.product([-1.0, 1.0], repeat=2)),
                           columns=["chelator", "ph"])
    res = optimal_design((CHELATOR, PH), 5, model="quadratic", runs_done=corners,
                         tries=10, seed=3)
    pd.testing.assert_frame_equal(res.coded.iloc[:4].reset_index(drop=True), corners)
    assert res.new.tolist() == [False] * 4 + [True] * 5
    dm = pw.DesignModel.from_spec("quadratic", (CHELATOR, PH))
    full3 = dm.expand(np.array(list(itertools.product([-1.0, 0.0, 1.0], repeat=2))))
    assert res.log_det >= pw.log_det_information(full3) - 1e-12


def test_too_few_runs_is_refused():
    with pytest.raises(DesignError, match="at least 6 runs"):
        optimal_design((CHELATOR, PH), 5, model="quadratic")


# -- the trial-file face ---------------------------------------------------------------
def _design_options(tmp_path, body):
    path = tmp_path / "trial.toml"
    path.write_text("[design]\nkind = \"optimal\"\n" + body, encoding="utf-8")
    opts = tomllib.loads(path.read_text(encoding="utf-8"))["design"]
    opts.pop("kind")
    return opts


def test_build_optimal_from_trial_file_options(tmp_path):
    opts = _design_options(tmp_path, """
runs = 10
model = "quadratic"
criterion = "D"
tries = 4
constraints = ["ph >= 5 + 0.2*chelator"]
keep_runs = [{chelator = 6, ph = 7, surfactant = "none"}]
""")
    d = build_optimal((CHELATOR, PH, SURF), opts, seed=8)
    assert d.kind == "optimal" and len(d.coded) == 11 and set(d.point) == {"optimal"}
    assert d.coded.iloc[0].tolist() == [0.0, pytest.approx(1 / 3), "none"]
    nat_c, nat_p = CHELATOR.to_natural(d.coded.chelator.to_numpy()), \
        PH.to_natural(d.coded.ph.to_numpy())
    assert np.all(nat_p >= 5 + 0.2 * nat_c - 1e-9)
    assert any("to keep are included" in n for n in d.notes)


def test_build_optimal_augments_an_earlier_plan_csv(tmp_path):
    earlier = pd.DataFrame({"bath": ["B01", "B02", "B03", "B04", "B05"],
                            "point": ["factorial"] * 4 + ["control"],
                            "chelator": [2, 10, 2, 10, np.nan],
                            "ph": [5, 5, 8, 8, np.nan]})
    (tmp_path / "first").mkdir()
    earlier.to_csv(tmp_path / "first" / "plan.csv", index=False)
    opts = _design_options(tmp_path, 'runs = 5\nruns_done = "first/plan.csv"\n')
    d = build_optimal((CHELATOR, PH), opts, seed=1, folder=tmp_path)
    assert len(d.coded) == 5                       # only the new runs
    assert any("earlier plan" in n for n in d.notes)


def test_bad_options_are_all_reported(tmp_path):
    opts = _design_options(tmp_path, """
run = 10
criterion = "A"
grid = 1
model = "chelator + acid"
constraints = ["ph >= chelator*chelator", "ph > 4 +"]
cannot_mix = [{colour = "red"}]
""")
    report = ProblemReport("trial.toml")
    check_optimal_options((CHELATOR, PH), opts, report, "design")
    checks = report.checks()
    for code in ("unknown_option", "missing_runs", "bad_criterion", "bad_integer",
                 "bad_model", "bad_constraints", "bad_cannot_mix"):
        assert code in checks, code
    assert checks.count("bad_constraints") == 2
    with pytest.raises(DesignError) as err:
        build_optimal((CHELATOR, PH), opts, seed=1)
    assert len(err.value.problems) == len(report)


def test_categorical_and_ordinal_factors_saturated_model_uses_every_cell():
    # two 3-level factors with their interaction have 9 coefficients, one a cell mean:
    # 9 runs can only estimate them if every cell is run once (design algebra)
    fs = (Factor.categorical("metal", ["mild", "cast", "wrought"]),
          Factor.ordinal("agitation", ["still", "slow", "fast"]))
    res = optimal_design(fs, 9, model="interactions", tries=3, seed=1)
    assert len(res.coded.drop_duplicates()) == 9
