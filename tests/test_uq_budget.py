"""The GUM uncertainty budget with covariance rows (uqthermo.uq.budget) and the what-if standard errors.

Outside references (named at each check):
* the `uncertainties` package (linear propagation with correlated inputs: correlated_values,
  std_dev and error_components);
* the closed form of JCGM 100:2008 §5.2.2 eq. (16) for y = x1 − x2 with correlated inputs,
  u²(y) = u1² + u2² − 2 r u1 u2 (hand-derived);
* an exact linear what-if: for y = x0 + x1 with standard normals, halving u(x0) gives
  U = k·sqrt(1.25) exactly (JCGM 100 eq. (13)), which Monte Carlo must reach within its
  reported standard error (k the normal 97.5 % quantile, scipy).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from uqthermo.uq.budget import BudgetQuantity, datum_terms, gum_budget
from uqthermo.uq.distributions import Normal
from uqthermo.uq.inputs import InputSet, InputVariable
from uqthermo.uq.whatif import Scenario, what_if


def _q(name, datum, est, u):
    return BudgetQuantity(name, datum, est, u, "kJ/mol")


def test_budget_of_a_difference_matches_closed_form():
    # y = x1 − x2, u1 = 8.66, u2 = 8, r = 0.5: u²(y) = u1² + u2² − 2 r u1 u2 (JCGM 100 eq. (16))
    u1, u2, r = 8.66, 8.0, 0.5
    R = np.array([[1.0, r], [r, 1.0]])
    b = gum_budget([1.0, -1.0], R, [_q("A", "A", -58.0, u1), _q("B", "B", -432.0, u2)], "kJ/mol")
    exact = u1**2 + u2**2 - 2 * r * u1 * u2
    assert b["variance"] == pytest.approx(exact, rel=1e-14)
    assert b["standard_uncertainty"] == pytest.approx(math.sqrt(exact), rel=1e-14)
    rows = {x["quantity"]: x for x in b["rows"]}
    assert rows["A"]["variance"] == pytest.approx(u1**2) and rows["B"]["contribution"] == pytest.approx(-u2)
    (cov,) = b["covariance_rows"]
    assert cov["variance"] == pytest.approx(-2 * r * u1 * u2) and cov["correlation"] == r
    assert rows["A"]["share"] > 1  # the correlation removes variance: a single row exceeds 100 %
    total = sum(x["share"] for x in b["rows"]) + sum(x["share"] for x in b["covariance_rows"])
    assert total == pytest.approx(1.0, abs=1e-14)


def test_budget_matches_uncertainties_package_with_correlated_inputs():
    import uncertainties

    est = np.array([1.0, 2.0, -1.0, 0.5, 3.0])
    u = np.array([0.2, 0.1, 0.3, 0.25, 0.05])
    R = np.eye(5)
    R[0, 1] = R[1, 0] = 0.7      # two coefficients of one datum A
    R[2, 3] = R[3, 2] = -0.4     # between data B and C
    R[1, 4] = R[4, 1] = 0.2      # between A and D
    c = np.array([1.5, -2.0, 3.0, 1.0, -4.0])
    qs = [_q("A.a", "A", est[0], u[0]), _q("A.b", "A", est[1], u[1]), _q("B", "B", est[2], u[2]),
          _q("C", "C", est[3], u[3]), _q("D", "D", est[4], u[4])]
    b = gum_budget(c, R, qs, "kJ/mol")
    cov = np.outer(u, u) * R
    xs = uncertainties.correlated_values(est, cov)
    y = sum(ci * xi for ci, xi in zip(c, xs))
    # reference: the `uncertainties` package
    assert b["variance"] == pytest.approx(y.std_dev**2, rel=1e-12)
    # each quantity's own variance c_i² u²(x_i): the package's variance of c_i x_i alone
    rows = {x["quantity"]: x for x in b["rows"]}
    for i, q in enumerate(qs):
        assert rows[q.quantity]["variance"] == pytest.approx((c[i] * xs[i]).std_dev ** 2, rel=1e-12)
    # rows and covariance rows add up to u²(y) (JCGM 100 §5.2.2)
    total = sum(x["variance"] for x in b["rows"]) + sum(x["variance"] for x in b["covariance_rows"])
    assert total == pytest.approx(y.std_dev**2, rel=1e-12)
    assert {tuple(x["between"]) for x in b["covariance_rows"]} == {("A.a", "A.b"), ("B", "C"), ("A.b", "D")}
    # by datum: A's own variance holds its inner covariance; B~C and A~D stay signed rows
    own, between = datum_terms(b)
    for datum, idx in (("A", [0, 1]), ("B", [2]), ("C", [3]), ("D", [4])):
        yg = sum(c[i] * xs[i] for i in idx)
        assert own[datum] == pytest.approx(yg.std_dev**2, rel=1e-12)
    pairs = {tuple(sorted(x["between"])): x["variance"] for x in between}
    assert pairs[("B", "C")] == pytest.approx(2 * c[2] * c[3] * cov[2, 3], rel=1e-12)
    assert pairs[("A", "D")] == pytest.approx(2 * c[1] * c[4] * cov[1, 4], rel=1e-12)
    assert sum(own.values()) + sum(pairs.values()) == pytest.approx(b["variance"], rel=1e-12)


def test_budget_skips_quantities_the_output_does_not_depend_on():
    b = gum_budget([0.0, 2.0], np.eye(2), [_q("A", "A", 1.0, 0.1), _q("B", "B", 1.0, 0.1)], "K")
    assert [x["quantity"] for x in b["rows"]] == ["B"] and b["covariance_rows"] == []
    assert b["rows"][0]["dof"] is None


def test_mc_what_if_standard_error_covers_the_exact_change_and_flags_noise():
    inp = InputSet([InputVariable("x0", "X0", Normal(0.0, 1.0)), InputVariable("x1", "X1", Normal(0.0, 1.0)),
                    InputVariable("x2", "X2", Normal(0.0, 1e-4))])
    f = lambda X: (X[:, 0] + X[:, 1] + X[:, 2])[:, None]  # noqa: E731
    k = stats.norm.ppf(0.975)
    exact_change = k * (math.sqrt(1.25) - math.sqrt(2.0))        # JCGM 100 eq. (13), exact
    flagged = 0
    for seed in range(20):
        res = what_if(f, inp, [Scenario.halved("X0"), Scenario.removed("X2")], method="monte-carlo",
                      samples=4096, seed=seed, batches=8)
        se, ok = res.change(0, 0)
        assert se > 0 and ok
        # the Monte Carlo change lies within 4 of its standard errors of the exact change
        assert abs((res.U[0, 0] - res.U_now[0]) - exact_change) <= 4 * se
        # removing a datum with a negligible u (true change ~1e-8 of U) is noise; it is flagged
        # measurable only at the test's false-alarm rate (|t_7| > 2.36: 5 %, binomial(20, 0.05)
        # exceeds 5 with probability 3e-4)
        se2, ok2 = res.change(1, 0)
        flagged += ok2
        row = next(r for r in res.rows(0) if r["datum"] == "X2")
        assert row["method"] == "monte-carlo" and row["measurable"]["U_removed"] is ok2
        assert row["standard_error"]["U_removed"] == pytest.approx(se2)
    assert flagged <= 5


def test_linear_what_if_is_exact_with_zero_standard_error():
    inp = InputSet([InputVariable("x0", "X0", Normal(0.0, 1.0)), InputVariable("x1", "X1", Normal(0.0, 1.0))])
    res = what_if(lambda X: (X[:, 0] + X[:, 1])[:, None], inp, [Scenario.halved("X0")], method="linear")
    k = stats.norm.ppf(0.975)
    assert res.U[0, 0] == pytest.approx(k * math.sqrt(1.25), rel=1e-9)
    assert res.change(0, 0) == (0.0, True)
    (row,) = res.rows(0)
    assert row["method"] == "linear" and row["standard_error"]["U_halved"] == 0.0
