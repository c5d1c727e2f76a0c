"""What-if on data quality and design margins.

Outside references (named at each check):
* a direct re-run of the linear method (`propagate_linear`) on inputs whose uncertainty was
  scaled with `InputSet.with_scaled_uncertainty` (the GUM law of propagation, JCGM 100:2008
  eq. (13), with Welch–Satterthwaite k, eq. (G.2b));
* a direct re-run of Monte Carlo (`propagate_monte_carlo`, JCGM 101) with the same seed;
* the `uncertainties` package for an analytic removed-datum value;
* exact normal / Student-t / uniform quantiles (scipy.stats) for the design margins.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from uqthermo.errors import StatisticsError
from uqthermo.uq.distributions import LogNormal, Normal, Rectangular, StudentT, Triangular
from uqthermo.uq.inputs import InputSet, InputVariable
from uqthermo.uq.linear import propagate_linear
from uqthermo.uq.margins import (
    curve_band,
    level_key,
    margins_from_linear,
    margins_from_monte_carlo,
    margins_from_samples,
)
from uqthermo.uq.montecarlo import propagate_monte_carlo
from uqthermo.uq.whatif import Scenario, standard_scenarios, what_if


def _inputs(specs, correlation=None):
    return InputSet([InputVariable(n, d, dist) for n, d, dist in specs], correlation)


def _lin_case():
    R = np.eye(4)
    R[0, 1] = R[1, 0] = 0.6  # within datum A
    R[1, 3] = R[3, 1] = -0.3  # across data A and C
    inp = _inputs([("a0", "A", Normal(1.0, 0.2)), ("a1", "A", Normal(2.0, 0.1)),
                   ("b", "B", StudentT(-1.0, 0.3, 6)), ("c", "C", Normal(0.5, 0.25))], R)
    C = np.array([[1.5, -2.0, 3.0, 1.0], [0.2, 1.0, 1.0, 4.0]])

    def f(X):
        return X @ C.T + np.array([0.0, 10.0])

    return inp, f


# ---------------------------------------------------------------------------------------
# linear what-if vs direct re-run
# ---------------------------------------------------------------------------------------
def test_linear_what_if_equals_direct_rerun():
    inp, f = _lin_case()
    scen = standard_scenarios(inp) + [Scenario.stated("B", 0.05), Scenario("A & C x0.3", {"A": 0.3, "C": 0.3})]
    res = what_if(f, inp, scen, method="linear")
    base = propagate_linear(f, inp)
    assert res.U_now == pytest.approx(base.expanded_uncertainty, rel=1e-9)
    for s, sc in enumerate(scen):
        # reference: direct re-run of the linear method with the scaled inputs
        rerun = propagate_linear(f, inp.with_scaled_uncertainty(res.factors[s]))
        assert res.u[s] == pytest.approx(rerun.standard_uncertainty, rel=1e-9, abs=1e-14), sc.label
        assert res.U[s] == pytest.approx(rerun.expanded_uncertainty, rel=1e-9, abs=1e-14), sc.label
    # the stated scenario became a factor u_new/u_now
    st = [s for s, sc in enumerate(scen) if sc.kind == "stated"][0]
    assert res.factors[st]["B"] == pytest.approx(0.05 / 0.3)


def test_linear_removed_datum_matches_uncertainties_package():
    import uncertainties

    inp = _inputs([("x", "X", Normal(1.0, 0.3)), ("y", "Y", Normal(2.0, 0.4))])
    res = what_if(lambda X: (2 * X[:, 0] - X[:, 1])[:, None], inp, [Scenario.removed("X")], method="linear")
    x = 1.0  # removed: exact
    y = uncertainties.ufloat(2.0, 0.4)
    assert res.u[0, 0] == pytest.approx((2 * x - y).std_dev, rel=1e-9)
    assert res.U[0, 0] == pytest.approx(stats.norm.ppf(0.975) * 0.4, rel=1e-9)


def test_rows_contract_keys_and_order():
    inp, f = _lin_case()
    res = what_if(f, inp, method="linear")
    rows = res.rows(0)
    assert {r["datum"] for r in rows} == {"A", "B", "C"}
    for r in rows:
        assert set(r) >= {"datum", "U_now", "U_halved", "U_removed"}
    rb = next(r for r in rows if r["datum"] == "B")  # B is uncorrelated: monotone
    assert rb["U_removed"] < rb["U_halved"] < rb["U_now"]
    # ordered by the gain of removal (smallest remaining U first)
    rem = [r["U_removed"] for r in rows]
    assert rem == sorted(rem)
    d = res.to_dict()
    assert d["method"] == "linear" and len(d["outputs"]) == 2
    scaled = res.to_dict(0, scale=1e-3)
    assert scaled[0]["U_now"] == pytest.approx(rows[0]["U_now"] * 1e-3)


def test_scenario_errors():
    inp, f = _lin_case()
    with pytest.raises(StatisticsError):
        what_if(f, inp, [Scenario.stated("A", 0.1)])  # two-parameter datum: needs a factor
    with pytest.raises(StatisticsError):
        what_if(f, inp, [Scenario.halved("nope")])
    with pytest.raises(StatisticsError):
        what_if(f, inp, [Scenario.scaled("B", -1.0)])
    with pytest.raises(StatisticsError):
        what_if(f, inp, method="monte-carlo", samples="adaptive")
    with pytest.raises(StatisticsError):
        what_if(f, inp, method="bootstrap")


# ---------------------------------------------------------------------------------------
# Monte Carlo what-if with common random numbers vs direct re-run
# ---------------------------------------------------------------------------------------
def _nonlinear_case():
    inp = _inputs([("x0", "X0", Normal(2.0, 0.3)), ("x1", "X1", Rectangular(0.5, 0.4)),
                   ("x2", "X2", Triangular(1.0, 0.5))])

    def f(X):
        return np.column_stack([X[:, 0] * np.exp(0.5 * X[:, 1]) + X[:, 2] ** 2, np.sin(X[:, 0]) * X[:, 2]])

    return inp, f


def test_mc_what_if_x_space_equals_direct_rerun_same_seed():
    inp, f = _nonlinear_case()
    n = 4096
    res = what_if(f, inp, method="monte-carlo", samples=n, seed=17)
    base = propagate_monte_carlo(f, inp, samples=n, seed=17)
    assert res.u_now == pytest.approx(base.standard_uncertainty, rel=1e-9)
    assert res.interval_now == pytest.approx(base.coverage_interval, rel=1e-9)
    from uqthermo.uq.stats import intervals_from_sorted

    assert base.X_kept.shape[0] == n
    for s, sc in enumerate(res.scenarios):
        # reference 1: the base run's rows (common random numbers) with scaled deviations
        a = np.array([res.factors[s].get(d, 1.0) for d in ("X0", "X1", "X2")])
        y = f(inp.estimates + a * (base.X_kept - inp.estimates))
        sym, _ = intervals_from_sorted(np.sort(y, axis=0), 0.95)
        assert res.u[s] == pytest.approx(y.std(axis=0, ddof=1), rel=1e-9), sc.label
        assert res.interval[s] == pytest.approx(sym, rel=1e-9), sc.label
        # reference 2: a direct re-run with the scaled inputs (independent location-scale
        # marginals: x-space scaling is the scaled distribution; the re-run has its own
        # Sobol' design), within Monte Carlo error
        rerun = propagate_monte_carlo(f, inp.with_scaled_uncertainty(res.factors[s]), samples=n, seed=17)
        assert res.u[s] == pytest.approx(rerun.standard_uncertainty, rel=0.01), sc.label
        assert res.interval[s] == pytest.approx(rerun.coverage_interval, rel=0.01), sc.label


def test_mc_what_if_distribution_scaling_equals_direct_rerun():
    inp = _inputs([("x0", "X0", LogNormal(2.0, 0.5)), ("x1", "X1", Normal(1.0, 0.2))])

    def f(X):
        return X[:, 0] * X[:, 1]

    res = what_if(f, inp, [Scenario.halved("X0")], method="monte-carlo", samples=2048, seed=3,
                  scaling="distribution")
    # distribution scaling runs on the plain Sobol' axes (each input its own coordinate)
    rerun = propagate_monte_carlo(f, inp.with_scaled_uncertainty({"X0": 0.5}), samples=2048, seed=3, rotate=False)
    assert res.u[0] == pytest.approx(rerun.standard_uncertainty, rel=1e-12)
    assert res.U[0] == pytest.approx(0.5 * np.diff(rerun.coverage_interval, axis=1)[:, 0], rel=1e-12)


def test_mc_what_if_distribution_scaling_keeps_common_random_numbers():
    """An output that does not depend on the scaled or removed datum keeps exactly its
    uncertainty in every scenario (the scenarios share their random numbers)."""
    inp = _inputs([("x0", "X0", LogNormal(2.0, 0.5)), ("x1", "X1", Normal(1.0, 0.2)),
                   ("x2", "X2", Rectangular(3.0, 0.5))])

    def f(X):
        return np.column_stack([X[:, 0] * X[:, 1], X[:, 1] + X[:, 2] ** 2])

    res = what_if(f, inp, [Scenario.halved("X0"), Scenario.removed("X0")], method="monte-carlo",
                  samples=2048, seed=3, scaling="distribution")
    assert np.all(res.u[:, 1] == res.u_now[1])
    assert np.all(res.u[:, 0] < res.u_now[0])


def test_sobol_rotation_switch_reaches_what_if_and_planning():
    from uqthermo.uq import whatif as wi

    inp, f = _nonlinear_case()
    seen = []
    orig = wi.CommonSample.__init__

    def spy(self, *a, **kw):
        orig(self, *a, **kw)
        seen.append(self._rotation is not None)

    wi.CommonSample.__init__ = spy
    try:
        what_if(f, inp, method="monte-carlo", samples=1024, seed=1, rotate=False)
        what_if(f, inp, method="monte-carlo", samples=1024, seed=1)
    finally:
        wi.CommonSample.__init__ = orig
    assert seen == [False, True]


def test_common_random_numbers_make_differences_nearly_noise_free():
    # Y = X0 + X1 with standard normals; halving X0 gives U_halved/U_now = sqrt(1.25/2) (exact,
    # linear). Over 30 seeds the scatter of the difference U_now − U_halved from one CRN study
    # must be far smaller than from two independent runs (sample correlation of the two
    # spreads ≈ ρ² = 0.9 here, so the expected scatter ratio is about 0.35).
    inp = _inputs([("x0", "X0", Normal(0.0, 1.0)), ("x1", "X1", Normal(0.0, 1.0))])
    f = lambda X: X[:, 0] + X[:, 1]  # noqa: E731
    crn, ind = [], []
    for seed in range(30):
        res = what_if(f, inp, [Scenario.halved("X0")], method="monte-carlo", samples=512, sampling="random",
                      seed=seed)
        crn.append(res.u_now[0] - res.u[0, 0])
        other = propagate_monte_carlo(f, inp.with_scaled_uncertainty({"X0": 0.5}), samples=512,
                                      sampling="random", seed=1000 + seed)
        ind.append(res.u_now[0] - other.standard_uncertainty[0])
    exact = math.sqrt(2) - math.sqrt(1.25)
    assert np.mean(crn) == pytest.approx(exact, abs=0.02)
    assert np.std(crn) < 0.6 * np.std(ind)


# ---------------------------------------------------------------------------------------
# design margins
# ---------------------------------------------------------------------------------------
def test_level_keys():
    assert [level_key(q) for q in (0.95, 0.99, 0.05, 0.01, 0.999)] == ["P95", "P99", "P05", "P01", "P99.9"]


def test_linear_margins_normal_and_student_t():
    mg = margins_from_linear(np.array([10.0, 20.0]), np.array([1.0, 2.0]), np.array([np.inf, 5.0]))
    # exact quantiles: normal 1.6449 (p = 0.95), Student t_5 2.0150 (p = 0.95)
    assert mg.upper[0] == pytest.approx([10 + stats.norm.ppf(0.95), 20 + 2 * stats.t.ppf(0.95, 5)])
    assert mg.lower[1] == pytest.approx([10 - stats.norm.ppf(0.99), 20 - 2 * stats.t.ppf(0.99, 5)])
    pt = mg.point(0)
    assert pt["P95"] == pytest.approx(stats.norm.ppf(0.95))
    assert pt["P05"] == pytest.approx(-stats.norm.ppf(0.95))
    assert set(pt["bounds"]) == {"P95", "P99", "P05", "P01"}
    # from a LinearResult
    inp = _inputs([("x", "X", Normal(3.0, 0.5))])
    lin = propagate_linear(lambda X: 2 * X[:, 0], inp)
    mg2 = margins_from_linear(lin, probabilities=(0.9,))
    assert mg2.upper[0, 0] == pytest.approx(6.0 + stats.norm.ppf(0.9) * 1.0)


def test_mc_margins_against_exact_uniform_quantiles():
    # Y = X with X rectangular on [0, 1]: the p-quantile is p (exact)
    inp = _inputs([("x", "X", Rectangular(0.5, 0.5))])
    mc = propagate_monte_carlo(lambda X: X[:, :1], inp, samples=2**14, seed=1)
    mg = margins_from_monte_carlo(mc, probabilities=(0.95, 0.99))
    assert mg.upper[:, 0] == pytest.approx([0.95, 0.99], abs=1e-3)
    assert mg.lower[:, 0] == pytest.approx([0.05, 0.01], abs=1e-3)
    assert mg.estimate[0] == pytest.approx(0.5, abs=1e-3)
    ms = margins_from_samples(mc.Y_kept, (0.95,))
    assert ms.upper[0, 0] == pytest.approx(0.95, abs=2e-3)


def test_curve_band_worst_temperature_in_window():
    T = np.linspace(300, 800, 11)
    est = 100 - 0.01 * T
    u = 0.5 + 0.01 * (T - 300)  # spread grows with temperature
    mg = margins_from_linear(est, u)
    band = curve_band(mg, T)
    assert T[band.worst_upper[0]] == 800.0  # the upper bound 100 − 0.01T + 1.645u(T) grows with T
    assert mg.upper[0, band.worst_upper[0]] == pytest.approx(mg.upper[0].max())
    assert mg.lower[0, band.worst_lower[0]] == pytest.approx(mg.lower[0].min())
    b2 = curve_band(mg, T, window=(400, 600))
    assert 400 <= T[b2.worst_upper[0]] <= 600 and 400 <= T[b2.worst_lower[0]] <= 600
    d = b2.to_dict()
    assert d["worst"]["P95"]["upper"]["x"] == T[b2.worst_upper[0]]
    assert len(d["bands"]["P99"]["upper"]) == 11
    with pytest.raises(StatisticsError):
        curve_band(mg, T, window=(900, 1000))
    with pytest.raises(StatisticsError):
        margins_from_linear(est, u, probabilities=(0.3,))
