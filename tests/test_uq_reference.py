"""The statistics layer against outside references: JCGM 101 §9.2, exact distributions, rank-correlation theory."""

import math
from fractions import Fraction

import numpy as np
import pytest
from scipy import optimize, stats

from uqthermo.uq import (
    InputSet,
    InputVariable,
    LogNormal,
    Normal,
    Rectangular,
    StudentT,
    numerical_tolerance,
    propagate_linear,
    propagate_monte_carlo,
    validate_linear,
)

SQRT3 = math.sqrt(3.0)


def additive(X):
    """JCGM 101 §9.2 additive model Y = X1 + X2 + X3 + X4."""
    return X.sum(axis=1)


def _four(dist):
    return InputSet([InputVariable(f"X{i + 1}", f"X{i + 1}", dist) for i in range(4)])


def irwin_hall_cdf(x: float, n: int) -> float:
    """Exact CDF of the sum of n independent U(0, 1) (Irwin 1927; Hall 1927):
    F(x) = (1/n!) Σ_{k=0}^{⌊x⌋} (−1)^k C(n, k) (x − k)^n, evaluated in rational arithmetic."""
    fx = Fraction(x)
    total = Fraction(0)
    for k in range(0, min(n, math.floor(x)) + 1):
        total += (-1) ** k * math.comb(n, k) * (fx - k) ** n
    return float(total / math.factorial(n))


def irwin_hall_ppf(p: float, n: int) -> float:
    return optimize.brentq(lambda s: irwin_hall_cdf(s, n) - p, 0.0, float(n), xtol=1e-14, rtol=1e-15)


# ---------------------------------------------------------------------------------------------
# JCGM 101 §9.2.2 -- normal inputs, u(x_i) = 1
# ---------------------------------------------------------------------------------------------
def test_jcgm101_922_normal_inputs():
    inputs = _four(Normal(0.0, 1.0))
    lin = propagate_linear(additive, inputs)
    # JCGM 101 9.2.2 (published): y = 0.00, u(y) = 2.00, 95 % interval [-3.92, 3.92] for GUF and MCM
    assert lin.standard_uncertainty[0] == pytest.approx(2.0, rel=1e-9)
    assert np.round(lin.coverage_interval[0], 2).tolist() == [-3.92, 3.92]
    mc = propagate_monte_carlo(additive, inputs, samples=2**18, sampling="sobol", seed=101)
    delta = numerical_tolerance(2.0, 2)
    assert abs(mc.standard_uncertainty[0] - 2.0) <= delta
    np.testing.assert_allclose(mc.coverage_interval[0], [-3.92, 3.92], atol=delta)
    assert validate_linear(lin, mc)[0].linear_validated


# ---------------------------------------------------------------------------------------------
# JCGM 101 §9.2.3 -- rectangular inputs with u(x_i) = 1 (half-width √3)
# ---------------------------------------------------------------------------------------------
def test_irwin_hall_reference_itself():
    # sanity of the exact reference: symmetric about n/2, and F(1) = 1/n! for n = 4
    assert irwin_hall_cdf(2.0, 4) == pytest.approx(0.5, abs=1e-15)
    assert irwin_hall_cdf(1.0, 4) == pytest.approx(1 / 24, rel=1e-15)
    # n = 2 is the triangular distribution on [0, 2]: F(1.5) = 1 - 0.25/2
    assert irwin_hall_cdf(1.5, 2) == pytest.approx(0.875, rel=1e-15)


def test_jcgm101_923_rectangular_inputs():
    inputs = _four(Rectangular(0.0, SQRT3))
    assert inputs.stds == pytest.approx([1.0] * 4)
    # exact 97.5 % point of Y = 2√3 (S − 2), S ~ Irwin–Hall(4)  (computed, not recalled)
    y_exact = 2 * SQRT3 * (irwin_hall_ppf(0.975, 4) - 2.0)
    # JCGM 101 9.2.3: MCM gives the interval [-3.88, 3.88] (recalled from memory); the exact value agrees
    assert round(y_exact, 2) == 3.88
    mc = propagate_monte_carlo(additive, inputs, samples=2**18, sampling="sobol", seed=7)
    np.testing.assert_allclose(mc.coverage_interval[0], [-y_exact, y_exact], atol=0.01)
    np.testing.assert_allclose(mc.coverage_interval[0], [-3.88, 3.88], atol=0.015)
    assert mc.standard_uncertainty[0] == pytest.approx(2.0, abs=0.005)
    # symmetric unimodal distribution: the exact shortest interval is the symmetric one; its estimate
    # (JCGM 101 7.7.2) can slide along the flat width minimum, so compare widths
    w_short = np.diff(mc.shortest_interval[0])[0]
    assert w_short <= np.diff(mc.coverage_interval[0])[0]
    assert w_short == pytest.approx(2 * y_exact, abs=0.01)
    # GUF gives ±3.92 (JCGM 101 9.2.3); d_low = d_high = 3.92 − 3.88 ≈ 0.04 by the exact quantile
    lin = propagate_linear(additive, inputs)
    v = validate_linear(lin, mc)[0]
    assert v.d_high == pytest.approx(2 * 1.959964 - y_exact, abs=0.01)
    # both other quantiles of the exact distribution (one-sided bounds for margins)
    for p in (0.05, 0.99):
        exact = 2 * SQRT3 * (irwin_hall_ppf(p, 4) - 2.0)
        assert mc.quantile(p)[0] == pytest.approx(exact, abs=0.01)


@pytest.mark.parametrize("method", ["random", "sobol"])
def test_adaptive_procedure_meets_claimed_tolerance(method):
    # JCGM 101 7.9.4: stop when 2s of y, u(y), y_low, y_high are all <= delta (ndig = 2 → delta = 0.05
    # for u(y) = 2). Repeating with independent seeds, the spread of each reported value must be
    # consistent with a standard deviation of at most delta/2, and each result within 2 delta of the
    # exact value (Irwin–Hall quantile; u = 2 exactly).
    inputs = _four(Rectangular(0.0, SQRT3))
    y_exact = 2 * SQRT3 * (irwin_hall_ppf(0.975, 4) - 2.0)
    runs = [propagate_monte_carlo(additive, inputs, samples="adaptive", sampling=method, seed=s, ndigits=2)
            for s in range(20)]
    assert all(r.converged for r in runs)
    delta = runs[0].tolerance[0]
    assert delta == pytest.approx(0.05)
    for key, exact, get in [("mean", 0.0, lambda r: r.mean[0]),
                            ("u", 2.0, lambda r: r.standard_uncertainty[0]),
                            ("low", -y_exact, lambda r: r.coverage_interval[0, 0]),
                            ("high", y_exact, lambda r: r.coverage_interval[0, 1])]:
        vals = np.array([get(r) for r in runs])
        assert np.std(vals, ddof=1) <= delta / 2, key
        assert np.all(np.abs(vals - exact) <= 2 * delta), key
        assert all(r.stability[key][0] <= delta for r in runs)


# ---------------------------------------------------------------------------------------------
# Gaussian copula: rank correlation of non-normal marginals
# ---------------------------------------------------------------------------------------------
@pytest.mark.parametrize("r", [0.6, -0.8])
def test_copula_reproduces_rank_correlation(r):
    # For a bivariate normal with correlation r (and hence for its Gaussian copula, since ranks are
    # invariant under the monotone marginal maps): Spearman rho_S = (6/π) asin(r/2) (Pearson 1907;
    # Kruskal 1958, J. Am. Stat. Assoc. 53, 814) and Kendall tau = (2/π) asin(r) (Greiner 1909; Kruskal 1958).
    inputs = InputSet([InputVariable("a", "a", LogNormal(1.0, 0.6)), InputVariable("b", "b", Rectangular(5.0, 2.0))],
                      np.array([[1.0, r], [r, 1.0]]), scale="normal-scores")
    mc = propagate_monte_carlo(lambda X: X, inputs, samples=2**15, sampling="sobol", seed=21, keep=2**15)
    X = mc.X_kept
    rho_s = stats.spearmanr(X[:, 0], X[:, 1]).statistic
    tau = stats.kendalltau(X[:, 0], X[:, 1]).statistic
    assert rho_s == pytest.approx(6 / math.pi * math.asin(r / 2), abs=0.01)
    assert tau == pytest.approx(2 / math.pi * math.asin(r), abs=0.01)
    # marginals are untouched by the copula: mean and u as assigned
    np.testing.assert_allclose(mc.mean, [1.0, 5.0], rtol=0.01)
    np.testing.assert_allclose(mc.standard_uncertainty, [0.6, 2.0 / SQRT3], rtol=0.02)


# ---------------------------------------------------------------------------------------------
# Student t input: Monte Carlo interval equals the exact t quantiles (JCGM 101 6.4.9)
# ---------------------------------------------------------------------------------------------
def test_student_t_input_interval_matches_scipy():
    d = StudentT(10.0, 0.5, 6)
    mc = propagate_monte_carlo(lambda X: X, InputSet([InputVariable("x", "x", d)]), samples=2**17,
                               sampling="sobol", seed=3)
    ref = stats.t(6, loc=10.0, scale=0.5 * math.sqrt(4 / 6))  # reference: scipy.stats.t
    np.testing.assert_allclose(mc.coverage_interval[0], ref.ppf([0.025, 0.975]), atol=0.005)
    assert mc.standard_uncertainty[0] == pytest.approx(0.5, rel=0.02)
    # and the linear method's t coverage factor for this single input uses nu_eff = 6
    lin = propagate_linear(lambda X: X, InputSet([InputVariable("x", "x", d)]))
    assert lin.coverage_factor[0] == pytest.approx(stats.t.ppf(0.975, 6), rel=1e-10)


@pytest.mark.parametrize("rho_s", [0.5, -0.7])
def test_requested_rank_correlation_through_pearson_scale(rho_s):
    # A requested Spearman rank correlation: r_z = 2 sin(π ρ_S/6) (Pearson 1907; Kruskal 1958), turned into
    # the Pearson correlation the linear method uses; sampling inverts it (NORTA) and reproduces ρ_S.
    from uqthermo.uq.correlation import normal_score_from_spearman, pearson_from_normal_score

    a, b = LogNormal(1.0, 0.6), Rectangular(5.0, 2.0)
    rho = pearson_from_normal_score(a, b, normal_score_from_spearman(rho_s))
    inputs = InputSet([InputVariable("a", "a", a), InputVariable("b", "b", b)], np.array([[1.0, rho], [rho, 1.0]]))
    mc = propagate_monte_carlo(lambda X: X, inputs, samples=2**15, sampling="sobol", seed=5, keep=2**15)
    X = mc.X_kept
    assert stats.spearmanr(X[:, 0], X[:, 1]).statistic == pytest.approx(rho_s, abs=0.01)
    # and the sampled Pearson correlation is the stated one, so linear and Monte Carlo agree on u(a + b)
    assert np.corrcoef(X[:, 0], X[:, 1])[0, 1] == pytest.approx(rho, abs=0.01)
    lin_u = math.sqrt(inputs.covariance().sum())
    mc2 = propagate_monte_carlo(lambda X: X.sum(axis=1, keepdims=True), inputs, samples=2**16, sampling="sobol", seed=5)
    assert mc2.standard_uncertainty[0] == pytest.approx(lin_u, rel=0.01)
