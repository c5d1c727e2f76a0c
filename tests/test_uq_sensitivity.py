"""Ranking by datum: linear shares, grouped Sobol' indices, delta index, automatic choice.

Outside references used (named at each check):
* the `uncertainties` package (linear propagation with correlated inputs);
* the exact variance decomposition of an additive model with independent factors:
  for Y = Σ_g c_gᵀ x_g with independent data g, V(E[Y|x_g]) = E[V(Y|x_~g)] = c_gᵀ Σ_gg c_g,
  hence S_g = ST_g = c_gᵀ Σ_gg c_g / u²(y) (Sobol' 1993; Saltelli et al. 2008, *Global
  Sensitivity Analysis: The Primer*, §1.2.5) — an exact identity;
* the Ishigami function (Ishigami & Homma 1990) with a = 7, b = 0.1: analytic variances
  V = a²/8 + bπ⁴/5 + b²π⁸/18 + 1/2, V1 = (1 + bπ⁴/5)²/2, V2 = a²/8, V3 = 0,
  V13 = 8b²π⁸/225 (formulas as given by Sobol' & Levitan 1999 and Saltelli et al. 2008 —
  recalled from memory, and the first-order values S ≈ 0.314, 0.442, 0.000 recalled from
  memory too; both are checked against each other below);
* SALib's own `sobol.analyze` (our vectorised estimator must reproduce it);
* Borgonovo's (2007) definition of δ evaluated by quadrature for a Gaussian additive model.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from uqthermo.errors import StatisticsError
from uqthermo.uq.distributions import Exact, Normal, Rectangular
from uqthermo.uq.inputs import InputSet, InputVariable
from uqthermo.uq.linear import propagate_linear
from uqthermo.uq.sensitivity.delta import delta_index
from uqthermo.uq.sensitivity.driver import Driver
from uqthermo.uq.sensitivity.linear_shares import linear_shares
from uqthermo.uq.sensitivity.ranking import linearity_check, rank_drivers
from uqthermo.uq.sensitivity.sobol import sobol_indices


def _inputs(specs, correlation=None):
    """specs: list of (name, datum, distribution)."""
    return InputSet([InputVariable(n, d, dist) for n, d, dist in specs], correlation)


# ---------------------------------------------------------------------------------------
# linear shares
# ---------------------------------------------------------------------------------------
def test_linear_shares_match_uncertainties_package_with_correlations():
    import uncertainties

    # three data: A (2 correlated coefficients), B, C; B and C correlated across data
    est = np.array([1.0, 2.0, -1.0, 0.5])
    u = np.array([0.2, 0.1, 0.3, 0.25])
    R = np.eye(4)
    R[0, 1] = R[1, 0] = 0.7
    R[2, 3] = R[3, 2] = -0.4
    specs = [("a0", "A", Normal(est[0], u[0])), ("a1", "A", Normal(est[1], u[1])),
             ("b", "B", Normal(est[2], u[2])), ("c", "C", Normal(est[3], u[3]))]
    inp = _inputs(specs, R)
    C = np.array([[1.5, -2.0, 3.0, 1.0], [0.0, 1.0, 1.0, 4.0]])
    ls = linear_shares(C, inp.covariance(), inp.groups, inp.data)
    # reference: the `uncertainties` package, correlated_values
    xs = uncertainties.correlated_values(est, inp.covariance())
    for m in range(2):
        y = sum(C[m, i] * xs[i] for i in range(4))
        var = y.std_dev**2
        assert ls.variance[m] == pytest.approx(var, rel=1e-12)
        for j, (datum, cols) in enumerate(inp.groups.items()):
            yg = sum(C[m, i] * xs[i] for i in cols)
            assert ls.shares[m, j] == pytest.approx(yg.std_dev**2 / var, rel=1e-10, abs=1e-14)
        # shares + correlation part = 1 (exact bookkeeping)
        assert ls.shares[m].sum() + ls.correlation_part[m] == pytest.approx(1.0, abs=1e-12)
    assert ls.correlation_part[1] < 0  # negative cross-datum correlation shows up, not hidden


def test_linear_shares_exact_output():
    ls = linear_shares(np.zeros((1, 2)), np.eye(2), {"a": [0], "b": [1]})
    assert np.all(ls.shares == 0) and ls.correlation_part[0] == 0


# ---------------------------------------------------------------------------------------
# Sobol' indices on additive models (exact identity) and grouping
# ---------------------------------------------------------------------------------------
def test_sobol_equals_linear_shares_for_additive_model_independent_data():
    # exact identity (module docstring): additive model, independent data → S_g = ST_g = share_g
    # includes a non-normal (rectangular) input: the identity needs independence, not normality
    specs = [("x0", "d0", Normal(1.0, 0.5)), ("x1", "d1", Rectangular(2.0, 0.6)),
             ("x2", "d2", Normal(-1.0, 0.2)), ("x3", "d3", Exact(0.0))]
    inp = _inputs(specs)
    c = np.array([1.0, 2.0, -3.0, 5.0])

    def f(X):
        return np.column_stack([X @ c, 2.0 * X @ c + 7.0])

    lin = propagate_linear(f, inp)
    res = sobol_indices(f, inp, n_base=2048, seed=11, sensitivity=lin.sensitivity, delta=False)
    assert res.data == ["d0", "d1", "d2"]  # the exact datum is not a factor
    share = (c[:3] * inp.stds[:3]) ** 2 / np.sum((c[:3] * inp.stds[:3]) ** 2)
    for m in range(2):
        assert res.S1[m] == pytest.approx(share, abs=0.02)
        assert res.ST[m] == pytest.approx(share, abs=0.02)
        # the bootstrap interval should cover the exact value (95 % CI, generous factor 2)
        assert np.all(np.abs(res.S1[m] - share) <= 2 * res.S1_conf[m] + 1e-3)
    assert not res.cross_datum_correlation


def test_grouped_sobol_two_correlated_coefficients_form_one_factor():
    # Y = a0 + a1 + b, with (a0, a1) one datum correlated r = 0.8: S_A = (u0² + u1² + 2 r u0 u1)/u²
    # (exact: additive, the two data independent)
    r = 0.8
    u0, u1, ub = 0.3, 0.4, 0.35
    R = np.eye(3)
    R[0, 1] = R[1, 0] = r
    inp = _inputs([("a0", "A", Normal(0.0, u0)), ("a1", "A", Normal(0.0, u1)), ("b", "B", Normal(0.0, ub))], R)

    def f(X):
        return X.sum(axis=1)

    vA = u0**2 + u1**2 + 2 * r * u0 * u1
    exact = np.array([vA, ub**2]) / (vA + ub**2)
    res = sobol_indices(f, inp, n_base=2048, seed=5, delta=False)
    assert res.data == ["A", "B"]
    assert res.S1[0] == pytest.approx(exact, abs=0.02)
    assert res.ST[0] == pytest.approx(exact, abs=0.02)
    lin = propagate_linear(f, inp)
    assert lin.shares[0] == pytest.approx(exact, rel=1e-6)


def test_cross_datum_correlation_is_flagged():
    R = np.eye(2)
    R[0, 1] = R[1, 0] = 0.5
    inp = _inputs([("a", "A", Normal(0.0, 1.0)), ("b", "B", Normal(0.0, 1.0))], R)

    def f(X):
        return X[:, 0] + X[:, 1] ** 2  # nonlinear → Sobol' ranking in auto mode

    res = sobol_indices(f, inp, n_base=256, seed=1, delta=False)
    assert res.cross_datum_correlation
    assert any("cross-datum" in n for n in res.notes)
    rk = rank_drivers(f, inp, n_base=256, seed=1, delta=False)
    assert rk.method == "sobol"
    assert "cross-datum" in rk.reason
    # the linear correlation part is still reported
    assert rk.correlation_part is not None


# ---------------------------------------------------------------------------------------
# Ishigami function through the grouped wrapper
# ---------------------------------------------------------------------------------------
A_ISH, B_ISH = 7.0, 0.1


def _ishigami(X):
    return np.sin(X[:, 0]) + A_ISH * np.sin(X[:, 1]) ** 2 + B_ISH * X[:, 2] ** 4 * np.sin(X[:, 0])


def _ishigami_analytic():
    a, b, pi = A_ISH, B_ISH, math.pi
    V = a**2 / 8 + b * pi**4 / 5 + b**2 * pi**8 / 18 + 0.5
    V1 = 0.5 * (1 + b * pi**4 / 5) ** 2
    V2 = a**2 / 8
    V13 = 8 * b**2 * pi**8 / 225
    return V, V1, V2, V13


def test_ishigami_analytic_values_agree_with_recalled_ones():
    V, V1, V2, _ = _ishigami_analytic()
    # recalled from memory: S1 ≈ 0.314, 0.442, 0.000
    assert V1 / V == pytest.approx(0.314, abs=1e-3)
    assert V2 / V == pytest.approx(0.442, abs=1e-3)


def test_ishigami_grouped_wrapper():
    # x_i ~ U(-π, π), independent
    inp = _inputs([(f"x{i}", f"x{i}", Rectangular(0.0, math.pi)) for i in range(3)])
    V, V1, V2, V13 = _ishigami_analytic()
    res = sobol_indices(_ishigami, inp, n_base=4096, seed=3, delta=False)
    assert res.S1[0] == pytest.approx([V1 / V, V2 / V, 0.0], abs=0.03)
    assert res.ST[0] == pytest.approx([(V1 + V13) / V, V2 / V, V13 / V], abs=0.03)

    # group x1 and x3 into one datum: S_{13} = (V1 + V3 + V13)/V = ST_{13}; x2 unchanged
    inp_g = _inputs([("x0", "g13", Rectangular(0.0, math.pi)), ("x1", "x1", Rectangular(0.0, math.pi)),
                     ("x2", "g13", Rectangular(0.0, math.pi))])
    res_g = sobol_indices(_ishigami, inp_g, n_base=4096, seed=3, delta=False)
    assert res_g.data == ["g13", "x1"]
    assert res_g.S1[0] == pytest.approx([(V1 + V13) / V, V2 / V], abs=0.03)
    assert res_g.ST[0] == pytest.approx([(V1 + V13) / V, V2 / V], abs=0.03)


def test_numpy_engine_reproduces_salib_analyze():
    # reference: SALib's sobol.analyze on the same sample (same estimator and resampling)
    inp = _inputs([(f"x{i}", f"x{i}", Rectangular(0.0, math.pi)) for i in range(3)])

    def f(X):
        y = _ishigami(X)
        return np.column_stack([y, y**2])

    a = sobol_indices(f, inp, n_base=512, seed=9, delta=False, engine="salib")
    b = sobol_indices(f, inp, n_base=512, seed=9, delta=False, engine="numpy")
    for k in ("S1", "ST", "S1_conf", "ST_conf"):
        assert getattr(b, k) == pytest.approx(getattr(a, k), rel=1e-9, abs=1e-12)


# ---------------------------------------------------------------------------------------
# delta index
# ---------------------------------------------------------------------------------------
def test_delta_index_against_quadrature_of_definition():
    # Y = X1 + X2, X_i ~ N(0, 1): Y|X1=x ~ N(x, 1), Y ~ N(0, 2);
    # δ_1 = E_x[½ ∫ |φ_Y − φ_{Y|x}| dy] (Borgonovo 2007), evaluated by Gauss–Hermite quadrature
    yy = np.linspace(-12, 12, 4001)
    xs, ws = np.polynomial.hermite_e.hermegauss(60)
    tv = [0.5 * np.trapezoid(np.abs(stats.norm.pdf(yy, 0, math.sqrt(2)) - stats.norm.pdf(yy, x, 1)), yy)
          for x in xs]
    exact = float(np.dot(ws, tv) / math.sqrt(2 * math.pi))
    rng = np.random.default_rng(3)
    X = rng.normal(size=(2048, 3))
    Y = X[:, 0] + X[:, 1]
    d, conf = delta_index(X, Y, num_resamples=10, seed=1)
    assert d[:2] == pytest.approx([exact, exact], abs=0.04)
    assert d[2] == pytest.approx(0.0, abs=0.06)  # irrelevant input
    assert np.all(conf > 0)


def test_delta_in_sobol_result_uses_linear_projection_for_groups():
    R = np.eye(3)
    R[0, 1] = R[1, 0] = 0.5
    inp = _inputs([("a0", "A", Normal(0.0, 1.0)), ("a1", "A", Normal(0.0, 1.0)), ("b", "B", Normal(0.0, 0.1))], R)

    def f(X):
        return X[:, 0] + X[:, 1] + X[:, 2]

    lin = propagate_linear(f, inp)
    res = sobol_indices(f, inp, n_base=512, seed=2, sensitivity=lin.sensitivity)
    assert "projection" in res.delta_method
    assert res.delta[0, 0] > 0.5 > res.delta[0, 1]
    d = res.indices(0)
    assert set(d["delta"]) == {"A", "B"}


# ---------------------------------------------------------------------------------------
# automatic method choice and the results.json point
# ---------------------------------------------------------------------------------------
def test_rank_drivers_auto_linear_for_linear_normal_model():
    inp = _inputs([("x0", "d0", Normal(1.0, 0.5)), ("x1", "d1", Normal(2.0, 0.1)), ("x2", "d2", Normal(0.0, 0.3))])

    def f(X):
        return X @ np.array([1.0, 3.0, -2.0])

    rk = rank_drivers(f, inp, seed=1)
    assert rk.method == "linear"
    assert "linear" in rk.reason and rk.linearity["max_residual_fraction"] < 1e-10
    shares = [d.share for d in rk.drivers[0]]
    assert shares == sorted(shares, reverse=True)
    lin = propagate_linear(f, inp)
    for d in rk.drivers[0]:
        assert d.share == pytest.approx(lin.shares[0, lin.data.index(d.datum)], rel=1e-9)
        assert d.share_ci is None and d.method == "linear"
    pt = rk.point(0)
    assert set(pt) >= {"drivers", "drivers_method", "drivers_reason", "correlation_share", "sensitivity"}
    assert pt["drivers"][0] == {"datum": "d2", "share": pytest.approx(rk.drivers[0][0].share), "share_ci": None}


def test_rank_drivers_auto_sobol_for_nonlinear_or_non_normal():
    inp = _inputs([("x0", "d0", Normal(0.0, 1.0)), ("x1", "d1", Normal(0.0, 0.5))])

    def f(X):
        return X[:, 0] ** 2 + X[:, 1]

    rk = rank_drivers(f, inp, n_base=512, seed=4, delta=False)
    assert rk.method == "sobol" and "nonlinear" in rk.reason
    # linear ranking would miss x0 entirely (zero derivative at the estimate)
    assert rk.drivers[0][0].datum == "d0"
    assert rk.drivers[0][0].share_ci is not None
    # exact: Var(x0²) = 2, Var(x1) = 0.25 → S_d0 = 2/2.25
    assert rk.drivers[0][0].share == pytest.approx(2 / 2.25, abs=0.05)

    inp_r = _inputs([("x0", "d0", Rectangular(0.0, 1.0)), ("x1", "d1", Normal(0.0, 0.5))])
    rk2 = rank_drivers(lambda X: X[:, 0] + X[:, 1], inp_r, n_base=256, seed=4, delta=False)
    assert rk2.method == "sobol" and "non-normal" in rk2.reason

    rk3 = rank_drivers(lambda X: X[:, 0] + X[:, 1], inp, n_base=256, seed=4, delta=False, nonlinear_hint=True)
    assert rk3.method == "sobol" and "caller" in rk3.reason
    rk4 = rank_drivers(f, inp, method="linear")
    assert rk4.method == "linear" and rk4.sobol is None


def test_linearity_check_detects_curvature():
    inp = _inputs([("x0", "d0", Normal(1.0, 0.5))])
    f = lambda X: np.exp(X[:, 0])  # noqa: E731
    lin = propagate_linear(f, inp)
    chk = linearity_check(f, inp, lin.estimate, lin.sensitivity, n=256, seed=0)
    assert chk["max_residual_fraction"] > 0.01
    assert chk["u_ratio"][0] < 1.0  # linear u underestimates the lognormal spread


def test_bad_method_raises():
    inp = _inputs([("x0", "d0", Normal(1.0, 0.5))])
    with pytest.raises(StatisticsError):
        rank_drivers(lambda X: X[:, 0], inp, method="random-forest")


def test_driver_to_dict():
    d = Driver("A", 0.5, (0.4, 0.6), "sobol")
    assert d.to_dict() == {"datum": "A", "share": 0.5, "share_ci": [0.4, 0.6]}


def test_same_seed_gives_identical_indices_even_for_seed_zero():
    inp = _inputs([("x0", "d0", Rectangular(0.0, 1.0)), ("x1", "d1", Normal(0.0, 0.5))])

    def f(X):
        return np.column_stack([X[:, 0] ** 2 + X[:, 1], X[:, 0] * X[:, 1]])

    a = sobol_indices(f, inp, n_base=256, seed=0)
    b = sobol_indices(f, inp, n_base=256, seed=0)
    for k in ("S1", "S1_conf", "ST", "ST_conf", "delta", "delta_conf"):
        assert np.array_equal(getattr(a, k), getattr(b, k))
    state = np.random.get_state()[1].copy()
    sobol_indices(f, inp, n_base=256, seed=4)
    assert np.array_equal(np.random.get_state()[1], state)  # numpy's global generator untouched
