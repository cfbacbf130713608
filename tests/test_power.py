"""Tests of trialkit.planning.power: model expansion, F-test power, efficiencies,
batched simulation."""

import itertools

import numpy as np
import pandas as pd
import pytest
from scipy import stats

from trialkit.planning import power as pw
from trialkit.trial.factors import Factor
from trialkit.trial.model_grammar import parse_model
from trialkit.trial.model_matrix import model_matrix

FACTORS = (Factor.continuous("chelator", 2, 10, unit="% w/v"),
           Factor.continuous("ph", 5, 8),
           Factor.categorical("surfactant", ["none", "low", "high"]),
           Factor.ordinal("agitation", ["still", "slow", "fast"]))


def _mixed_points(seed=3, n=30):
    rng = np.random.default_rng(seed)
    return pd.DataFrame({
        "chelator": rng.uniform(-1, 1, n), "ph": rng.choice([-1.0, 0.0, 1.0], n),
        "surfactant": rng.choice(["none", "low", "high"], n),
        "agitation": rng.choice(["still", "slow", "fast"], n)})


@pytest.mark.parametrize("spec", ["main", "interactions", "quadratic",
                                  "chelator + surfactant + chelator:surfactant + ph^2"])
def test_expansion_equals_modelspec_model_matrix(spec):
    # self-consistency: the fast expansion used by the optimal-design search gives the
    # same matrix, column names and term slices as trialkit.trial.model_grammar (sum contrasts)
    data = _mixed_points()
    dm = pw.DesignModel.from_spec(spec, FACTORS)
    mm = model_matrix(parse_model(spec, FACTORS), data, coding="sum")
    assert dm.columns == tuple(mm.columns)
    np.testing.assert_allclose(dm.expand(dm.encode(data)), mm.X, atol=1e-12)
    for name, sl in dm.term_columns.items():
        assert mm.term_columns[name] == sl


def test_decode_inverts_encode():
    data = _mixed_points(n=8)
    dm = pw.DesignModel.from_spec("main", FACTORS)
    back = dm.decode(dm.encode(data))
    pd.testing.assert_frame_equal(back, data, check_dtype=False)


def test_moment_matrix_of_quadratic_in_one_factor_is_exact():
    # uniform on [-1, 1]: E[x^2] = 1/3, E[x^4] = 1/5 (elementary integrals)
    dm = pw.DesignModel.from_spec("quadratic", FACTORS[:1])
    M = dm.moment_matrix()
    expected = np.array([[1, 0, 1 / 3], [0, 1 / 3, 0], [1 / 3, 0, 1 / 5]])
    np.testing.assert_allclose(M, expected, atol=1e-14)


def test_f_test_power_matches_scipy_noncentral_f():
    # scipy.stats.ncf as the reference implementation of the non-central F
    fcrit = stats.f.isf(0.05, 2, 11)
    assert pw.f_test_power(7.5, 2, 11, 0.05) == pytest.approx(
        stats.ncf.sf(fcrit, 2, 11, 7.5), rel=1e-12)


def test_noncentrality_needed_inverts_power():
    lam = pw.noncentrality_needed(0.8, 1, 12, 0.05)
    assert pw.f_test_power(lam, 1, 12, 0.05) == pytest.approx(0.8, abs=1e-9)
    assert pw.f_test_power(lam * 0.9, 1, 12, 0.05) < 0.8


def test_d_efficiency_equals_pydoe3():
    # pyDOE3.doe_optimal.efficiency.d_efficiency: 100 * det(X'X/n)^(1/p) (read in its
    # source), the same definition as ours, so the values are equal without conversion
    from pyDOE3.doe_optimal import d_efficiency as pydoe_d

    rng = np.random.default_rng(11)
    dm = pw.DesignModel.from_spec("quadratic", FACTORS[:2])
    X = dm.expand(np.column_stack([rng.uniform(-1, 1, 12), rng.uniform(-1, 1, 12)]))
    assert pw.d_efficiency(X) == pytest.approx(pydoe_d(X), rel=1e-10)


def test_singular_design_has_zero_d_efficiency_and_infinite_variance():
    X = np.array([[1.0, 1.0], [1.0, 1.0], [1.0, 1.0]])
    assert pw.log_det_information(X) == float("-inf")
    assert pw.d_efficiency(X) == 0.0
    assert pw.average_variance(X, np.eye(2)) == float("inf")


def test_orthogonal_two_level_design_has_full_efficiencies_and_unit_vifs():
    # 2^3 full factorial, first-order model: X'X = 8 I (textbook orthogonality)
    U = np.array(list(itertools.product([-1.0, 1.0], repeat=3)))
    fs = tuple(Factor.continuous(n, 0, 1) for n in "abc")
    dm = pw.DesignModel.from_spec("main", fs)
    X = dm.expand(U)
    assert pw.d_efficiency(X) == pytest.approx(100.0, abs=1e-9)
    assert pw.i_efficiency(X, dm.moment_matrix()) == pytest.approx(100.0, abs=1e-9)
    np.testing.assert_allclose(pw.vifs(X), 1.0, atol=1e-12)


def test_vifs_match_statsmodels():
    from statsmodels.stats.outliers_influence import variance_inflation_factor

    rng = np.random.default_rng(5)
    a = rng.uniform(-1, 1, 15)
    X = np.column_stack([np.ones(15), a, 0.7 * a + 0.3 * rng.uniform(-1, 1, 15),
                         rng.uniform(-1, 1, 15)])
    ours = pw.vifs(X)
    ref = [variance_inflation_factor(X, j) for j in range(1, 4)]
    np.testing.assert_allclose(ours, ref, rtol=1e-9)


def test_term_directions_give_unit_change_over_levels():
    dm = pw.DesignModel.from_spec("main", FACTORS)
    d = dm.term_directions("chelator")
    assert d.tolist() == [[0.5]]                       # effect = 2 x coefficient
    dirs = dm.term_directions("surfactant")
    # level effects (+1/2, -1/2, 0) patterns for each pair of the three levels
    sl = dm.term_columns["surfactant"]
    levels = dm.expand(np.array([[0, 0, j, 0] for j in range(3)], float))[:, sl]
    spreads = [np.ptp(levels @ v) for v in dirs]
    np.testing.assert_allclose(spreads, 1.0)
    assert len(dirs) == 3


def test_batched_simulation_f_statistic_matches_statsmodels_fit():
    # the batched algebra gives the same F as statsmodels OLS + f_test on one data set
    import statsmodels.api as sm

    U = np.array(list(itertools.product([-1.0, 1.0], repeat=3)) * 2)
    fs = tuple(Factor.continuous(n, 0, 1) for n in "abc")
    dm = pw.DesignModel.from_spec("interactions", fs)
    X = dm.expand(U)
    y = np.random.default_rng(2).standard_normal(len(X)) + 0.4 * X[:, 1]
    sl = dm.term_columns["a:b"]
    R = np.zeros((1, X.shape[1]))
    R[0, sl.start] = 1
    ref = sm.OLS(y, X).fit().f_test(R)
    Q, Rm = np.linalg.qr(X)
    b = np.linalg.solve(Rm, Q.T @ y)
    rss = float(((y - X @ b) ** 2).sum())
    info = pw.information(X, sl)
    F = float(b[sl] @ info @ b[sl]) / (rss / (len(y) - X.shape[1]))
    assert F == pytest.approx(float(np.squeeze(ref.fvalue)), rel=1e-9)


def test_simulated_power_agrees_with_analytic_power():
    # 2^2 x 3 replicates, effect of 'a' = 2 sd: analytic non-central F vs simulation
    U = np.array(list(itertools.product([-1.0, 1.0], repeat=2)) * 3)
    fs = tuple(Factor.continuous(n, 0, 1) for n in "ab")
    dm = pw.DesignModel.from_spec("main", fs)
    X = dm.expand(U)
    sl = dm.term_columns["a"]
    beta = np.zeros(X.shape[1])
    beta[sl] = 1.0                                         # effect 2, sd 1
    lam = pw.term_noncentrality(pw.information(X, sl), dm.term_directions("a"), 2.0, 1.0)
    exact = pw.f_test_power(lam[0], 1, len(X) - 3, 0.05)
    sim, se = pw.simulate_power(X, sl, beta, 1.0, n_sim=20_000, seed=7)
    assert abs(sim - exact) < 3 * se
