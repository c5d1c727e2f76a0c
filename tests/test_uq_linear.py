"""GUM linear method (uqthermo.uq.linear) against the `uncertainties` package and scipy.stats.t."""

import numpy as np
import pytest
from scipy import stats
from uncertainties import correlated_values, covariance_matrix, ufloat, umath

from uqthermo.errors import StatisticsError
from uqthermo.uq import (
    Datum,
    Exact,
    InputSet,
    InputVariable,
    Normal,
    Rectangular,
    StudentT,
    coverage_factor,
    propagate_linear,
)

NOMINAL = np.array([2.0, 0.5, 3.0, 1.2])
STD = np.array([0.05, 0.02, 0.1, 0.03])
R = np.array([[1.0, 0.3, -0.2, 0.0],
              [0.3, 1.0, 0.1, 0.4],
              [-0.2, 0.1, 1.0, -0.5],
              [0.0, 0.4, -0.5, 1.0]])


def model(X):
    """Smooth nonlinear two-output model, vectorised over rows."""
    x1, x2, x3, x4 = X.T
    return np.stack([x1 * np.exp(x2) / x3 + np.sin(x4), x1**2 + x2 * x3 * np.log(x4 + 1.0)], axis=1)


def model_uncertainties(v):
    x1, x2, x3, x4 = v
    return [x1 * umath.exp(x2) / x3 + umath.sin(x4), x1**2 + x2 * x3 * umath.log(x4 + 1.0)]


def _inputs():
    return InputSet([InputVariable(f"x{i + 1}", f"x{i + 1}", Normal(m, s)) for i, (m, s) in
                     enumerate(zip(NOMINAL, STD))], R)


def test_matches_uncertainties_package_with_correlations():
    # reference: the `uncertainties` package (first-order propagation with automatic derivatives)
    cov = STD[:, None] * R * STD[None, :]
    xs = correlated_values(NOMINAL, cov)
    ys = model_uncertainties(xs)
    ref_u = np.array([y.std_dev for y in ys])
    ref_cov = np.array(covariance_matrix(ys))
    res = propagate_linear(model, _inputs())
    np.testing.assert_allclose(res.estimate, [y.nominal_value for y in ys], rtol=1e-14)
    np.testing.assert_allclose(res.standard_uncertainty, ref_u, rtol=1e-7)
    np.testing.assert_allclose(res.covariance, ref_cov, rtol=1e-6, atol=1e-12 * np.abs(ref_cov).max())
    # output correlation matrix is consistent with the covariance
    rho = res.correlation()
    assert rho[0, 1] == pytest.approx(ref_cov[0, 1] / np.sqrt(ref_cov[0, 0] * ref_cov[1, 1]), rel=1e-6)


def test_sensitivities_match_uncertainties_derivatives():
    # reference: `uncertainties` automatic derivatives (independent ufloats expose .derivatives)
    xs = [ufloat(m, s) for m, s in zip(NOMINAL, STD)]
    ys = model_uncertainties(xs)
    res = propagate_linear(model, _inputs())
    ref = np.array([[y.derivatives[x] for x in xs] for y in ys])
    np.testing.assert_allclose(res.sensitivity, ref, rtol=1e-7)


def test_single_vectorised_call():
    calls = []

    def f(X):
        calls.append(X.shape)
        return model(X)

    inputs = InputSet([InputVariable("a", "a", Normal(2.0, 0.1)), InputVariable("b", "b", Exact(0.5)),
                       InputVariable("c", "c", Normal(3.0, 0.1)), InputVariable("d", "d", Normal(1.0, 0.1))])
    res = propagate_linear(f, inputs)
    assert calls == [(7, 4)]  # 2K + 1 points with K = 3 uncertain inputs
    assert np.all(res.sensitivity[:, 1] == 0.0)
    assert res.steps[1] == 0.0


def test_contributions_by_datum_and_correlation_part():
    cov_cp = np.array([[0.01, 0.004], [0.004, 0.04]])
    data = [Datum("cp", [("cp[a]", Normal(1.0, 0.1)), ("cp[b]", Normal(2.0, 0.2))], covariance=cov_cp),
            Datum("h", [("h", Normal(5.0, 0.3))]),
            Datum("t", [("t", Rectangular(0.0, 0.5))])]
    s = InputSet.from_data(data, pairwise={("cp[a]", "h"): 0.5})

    def f(X):
        return (2 * X[:, 0] + 3 * X[:, 1] - X[:, 2] + 4 * X[:, 3])[:, None]

    res = propagate_linear(f, s)
    c = np.array([2.0, 3.0, -1.0, 4.0])
    Sigma = s.covariance()
    var = c @ Sigma @ c
    assert res.standard_uncertainty[0] ** 2 == pytest.approx(var, rel=1e-9)
    np.testing.assert_allclose(res.contributions[0], [c[:2] @ cov_cp @ c[:2], 1.0 * 0.09, 16 * 0.25 / 3],
                               rtol=1e-8)
    assert res.correlation_part[0] == pytest.approx(2 * 2.0 * -1.0 * 0.5 * 0.1 * 0.3, rel=1e-8)
    assert res.shares[0].sum() + res.correlation_share[0] == pytest.approx(1.0, abs=1e-12)
    assert res.data == ["cp", "h", "t"]
    assert [d for d, _ in res.drivers(0)] == ["t", "cp", "h"]


def test_normal_coverage_factor_and_interval():
    s = InputSet([InputVariable(f"x{i}", f"x{i}", Normal(0.0, 1.0)) for i in range(4)])
    res = propagate_linear(lambda X: X.sum(axis=1), s, coverage=0.95)
    # reference: scipy.stats.norm.ppf(0.975) = 1.959964
    assert res.coverage_factor[0] == pytest.approx(stats.norm.ppf(0.975), rel=1e-12)
    np.testing.assert_allclose(res.coverage_interval[0], [-2 * 1.959964, 2 * 1.959964], atol=1e-5)
    assert np.isinf(res.effective_dof[0])


@pytest.mark.parametrize("nu,p", [(3, 0.95), (7.5, 0.95), (12, 0.99), (50, 0.6827)])
def test_student_t_coverage_factor_vs_scipy(nu, p):
    # reference: scipy.stats.t.ppf((1 + p)/2, nu) (GUM G.3 / table G.2)
    assert coverage_factor(p, nu) == pytest.approx(stats.t.ppf((1 + p) / 2, nu), rel=1e-12)


def test_welch_satterthwaite():
    # two t inputs and one normal; Y = X1 + 2 X2 + X3
    s = InputSet([InputVariable("a", "a", StudentT(0.0, 1.0, 4)), InputVariable("b", "b", StudentT(0.0, 0.5, 9)),
                  InputVariable("c", "c", Normal(0.0, 0.7))])
    res = propagate_linear(lambda X: X[:, 0] + 2 * X[:, 1] + X[:, 2], s)
    u2 = 1.0 + 1.0 + 0.49
    nu = u2**2 / (1.0**4 / 4 + 1.0**4 / 9)  # GUM G.4.1 eq. (G.2b)
    assert res.effective_dof[0] == pytest.approx(nu, rel=1e-8)
    assert res.coverage_factor[0] == pytest.approx(stats.t.ppf(0.975, nu), rel=1e-8)
    assert res.expanded_uncertainty[0] == pytest.approx(res.coverage_factor[0] * np.sqrt(u2), rel=1e-8)


def test_errors():
    s = InputSet([InputVariable("a", "a", Normal(1.0, 0.1))])
    with pytest.raises(StatisticsError):
        propagate_linear(lambda X: X[:2], s)
    with pytest.raises(StatisticsError, match="stepping a"):
        propagate_linear(lambda X: np.where(X[:, 0] > 1.0, np.nan, X[:, 0]), s)
    with pytest.raises(StatisticsError):
        propagate_linear(lambda X: X, s, coverage=1.5)
    inf_t = InputSet([InputVariable("a", "a", StudentT.from_scale(0.0, 1.0, 2))])
    with pytest.raises(StatisticsError, match="infinite"):
        propagate_linear(lambda X: X, inf_t)


def test_constant_output():
    s = InputSet([InputVariable("a", "a", Normal(1.0, 0.1))])
    res = propagate_linear(lambda X: np.stack([X[:, 0], np.ones(len(X))], axis=1), s)
    assert res.standard_uncertainty[1] == 0.0
    assert res.shares[1, 0] == 0.0
    assert res.coverage_interval[1].tolist() == [1.0, 1.0]
