"""Input distributions (uqthermo.uq.distributions) against scipy.stats and closed forms."""

import math

import numpy as np
import pytest
from scipy import stats

from uqthermo.errors import StatisticsError
from uqthermo.uq import (
    Exact,
    LogNormal,
    Normal,
    Rectangular,
    StudentT,
    Triangular,
    TruncatedNormal,
)
from uqthermo.uq.distribution_specs import distribution_from_mapping, from_relative
from uqthermo.uq.distributions import parse_relative

P = np.array([1e-12, 1e-6, 0.001, 0.025, 0.3, 0.5, 0.77, 0.975, 0.999, 1 - 1e-9])


def test_exact():
    d = Exact(3.5)
    assert d.estimate == 3.5 and d.std == 0.0 and math.isinf(d.dof)
    assert np.all(d.ppf(P) == 3.5)
    assert d.describe() == "exact"


def test_normal_against_scipy():
    d = Normal(10.0, 0.4)
    ref = stats.norm(10.0, 0.4)  # reference: scipy.stats.norm
    np.testing.assert_allclose(d.ppf(P), ref.ppf(P), rtol=1e-12)
    np.testing.assert_allclose(d.cdf(d.ppf(P)), P, rtol=1e-9)
    assert d.estimate == 10.0 and d.std == 0.4


def test_normal_from_expanded():
    # GUM 4.3.3 / 6.2.1: u = U / k
    d = Normal.from_expanded(5.0, 0.2, 2)
    assert d.std == pytest.approx(0.1)
    with pytest.raises(StatisticsError):
        Normal.from_expanded(5.0, 0.2, 0)


def test_rectangular_and_bounds():
    d = Rectangular(1.0, 0.5)
    ref = stats.uniform(0.5, 1.0)  # reference: scipy.stats.uniform on [0.5, 1.5]
    assert d.std == pytest.approx(ref.std(), rel=1e-14)  # GUM 4.3.7: a/sqrt(3)
    np.testing.assert_allclose(d.ppf(P), ref.ppf(P), rtol=1e-14)
    np.testing.assert_allclose(d.isf(1 - P), ref.ppf(P), rtol=1e-12, atol=1e-15)
    a = Rectangular.from_bounds(2.0, 5.0)
    assert a.estimate == 3.5 and a.half_width == 1.5
    assert "half-width 0.5" in d.describe()


def test_triangular_symmetric_and_general():
    d = Triangular(0.0, 2.0)
    ref = stats.triang(0.5, loc=-2.0, scale=4.0)  # reference: scipy.stats.triang
    assert d.std == pytest.approx(2.0 / math.sqrt(6.0), rel=1e-14)  # GUM 4.3.9: a/sqrt(6)
    np.testing.assert_allclose(d.ppf(P), ref.ppf(P), rtol=1e-9, atol=1e-12)
    np.testing.assert_allclose(d.cdf(ref.ppf(P)), P, rtol=1e-8, atol=1e-15)
    g = Triangular.from_bounds(1.0, 4.0, mode=1.5)
    refg = stats.triang((1.5 - 1.0) / 3.0, loc=1.0, scale=3.0)
    assert g.estimate == pytest.approx(refg.mean(), rel=1e-13)
    assert g.std == pytest.approx(refg.std(), rel=1e-12)
    np.testing.assert_allclose(g.ppf(P), refg.ppf(P), rtol=1e-9)
    np.testing.assert_allclose(g.isf(P), refg.isf(P), rtol=1e-9)
    assert "mode 1.5" in g.describe()


def test_lognormal_mean_and_std():
    d = LogNormal(2.0, 0.5)
    ref = stats.lognorm(s=d.sigma_log, scale=math.exp(d.mu_log))  # reference: scipy.stats.lognorm
    assert ref.mean() == pytest.approx(2.0, rel=1e-12)  # estimate is the mean
    assert ref.std() == pytest.approx(0.5, rel=1e-12)
    np.testing.assert_allclose(d.ppf(P), ref.ppf(P), rtol=1e-10)
    np.testing.assert_allclose(d.isf(P), ref.isf(P), rtol=1e-10)
    with pytest.raises(StatisticsError):
        LogNormal(-1.0, 0.1)


def test_student_t_convention():
    # JCGM 101 6.4.9: u = s * sqrt(nu/(nu-2)); constructor takes u
    d = StudentT(1.0, 0.3, 5)
    assert d.scale == pytest.approx(0.3 * math.sqrt(3 / 5))
    ref = stats.t(5, loc=1.0, scale=d.scale)  # reference: scipy.stats.t
    assert ref.std() == pytest.approx(0.3, rel=1e-12)
    np.testing.assert_allclose(d.ppf(P), ref.ppf(P), rtol=1e-10)
    s = StudentT.from_scale(1.0, 0.2, 9)
    assert s.std == pytest.approx(0.2 * math.sqrt(9 / 7))
    assert math.isinf(StudentT.from_scale(0.0, 1.0, 2).std)
    for bad in (2, 1.5, 0, float("nan")):
        with pytest.raises(StatisticsError):
            StudentT(1.0, 0.3, bad)


def test_truncated_normal_moments():
    d = TruncatedNormal(1.0, 2.0, lower=0.0)
    ref = stats.truncnorm(-0.5, np.inf, loc=1.0, scale=2.0)  # reference: scipy.stats.truncnorm
    assert d.estimate == pytest.approx(ref.mean(), rel=1e-12)
    assert d.std == pytest.approx(ref.std(), rel=1e-12)
    assert np.all(d.ppf(P) >= 0.0)
    np.testing.assert_allclose(d.ppf(P), ref.ppf(P), rtol=1e-10)
    with pytest.raises(StatisticsError):
        TruncatedNormal(1.0, 1.0, 3.0, 2.0)


@pytest.mark.parametrize("lo,hi", [(1.5, None), (None, -1.0), (-1.0, 2.0), (-0.3, None), (3.0, 4.0), (None, 0.5)])
def test_truncated_normal_quantiles_against_scipy(lo, hi):
    d = TruncatedNormal(0.0, 1.0, lo, hi)
    a = -np.inf if lo is None else lo
    b = np.inf if hi is None else hi
    ref = stats.truncnorm(a, b)  # reference: scipy.stats.truncnorm
    q = P[1:-1]
    np.testing.assert_allclose(d.ppf(q), ref.ppf(q), rtol=1e-9, atol=1e-12)
    np.testing.assert_allclose(d.isf(q), ref.isf(q), rtol=1e-9, atol=1e-12)
    assert d.estimate == pytest.approx(ref.mean(), rel=1e-12)


@pytest.mark.parametrize("dist", [Normal(0.5, 0.1), Rectangular(0.5, 0.2), Triangular(0.5, 0.2),
                                  LogNormal(0.5, 0.1), StudentT(0.5, 0.1, 4), TruncatedNormal(0.5, 0.2, 0.3)])
def test_from_standard_normal_both_tails(dist):
    z = np.array([-9.0, -3.0, -0.1, 0.0, 0.2, 3.0, 9.0, 12.0])
    x = dist.from_standard_normal(z)
    assert np.all(np.isfinite(x))
    assert np.all(np.diff(x) >= 0)
    # middle values equal the inverse-CDF definition G^-1(Phi(z))
    mid = slice(1, 6)
    np.testing.assert_allclose(x[mid], dist.ppf(stats.norm.cdf(z[mid])), rtol=1e-9, atol=1e-12)


def test_student_t_upper_tail_keeps_resolution():
    d = StudentT(0.0, 1.0, 3)
    # Phi(12) rounds to 1.0 in double precision; the isf branch must still be finite and match scipy
    ref = stats.t(3, scale=d.scale).isf(stats.norm.sf(12.0))
    assert d.from_standard_normal(np.array([12.0]))[0] == pytest.approx(ref, rel=1e-9)


def test_relative():
    assert parse_relative("2 %") == pytest.approx(0.02)
    assert parse_relative("2%") == pytest.approx(0.02)
    assert parse_relative("500 ppm") == pytest.approx(5e-4)
    assert parse_relative(0.01) == 0.01
    d = from_relative(-200.0, "1.5 %")
    assert isinstance(d, Normal) and d.std == pytest.approx(3.0)
    r = from_relative(10.0, "2 %", "rectangular")
    assert r.std == pytest.approx(0.2)
    assert Normal.relative(4.0, "5 %").std == pytest.approx(0.2)
    for bad in ("two percent", "-1 %", "0 %", None):
        with pytest.raises(StatisticsError):
            parse_relative(bad)
    with pytest.raises(StatisticsError):
        from_relative(0.0, "1 %")


@pytest.mark.parametrize("ctor", [lambda: Normal(1.0, 0.0), lambda: Normal(1.0, -0.1),
                                  lambda: Normal(float("nan"), 0.1), lambda: Normal(1.0, float("inf")),
                                  lambda: Rectangular(1.0, 0.0), lambda: Triangular(0.0, -1.0),
                                  lambda: Rectangular.from_bounds(2.0, 1.0), lambda: Normal("a", 1.0),
                                  lambda: Triangular.from_bounds(0, 1, 2)])
def test_invalid_parameters(ctor):
    with pytest.raises(StatisticsError):
        ctor()


def test_scaled():
    assert Normal(1.0, 0.2).scaled(0.5).std == pytest.approx(0.1)
    assert isinstance(Normal(1.0, 0.2).scaled(0), Exact)
    assert Rectangular(1.0, 0.3).scaled(2).half_width == pytest.approx(0.6)
    t = StudentT(0.0, 1.0, 5).scaled(0.5)
    assert t.std == pytest.approx(0.5) and t.dof == 5
    assert LogNormal(2.0, 0.4).scaled(0.5).std == pytest.approx(0.2)
    tr = Triangular.from_bounds(0.0, 3.0, 1.0)
    assert tr.scaled(0.5).std == pytest.approx(0.5 * tr.std)
    assert tr.scaled(0.5).estimate == pytest.approx(tr.estimate)
    with pytest.raises(StatisticsError):
        Normal(1.0, 0.2).scaled(-1)


def test_from_mapping():
    assert distribution_from_mapping({"kind": "normal", "estimate": 1, "U": 0.4, "k": 2}).std == pytest.approx(0.2)
    assert isinstance(distribution_from_mapping({"kind": "exact", "estimate": 1}), Exact)
    with pytest.raises(StatisticsError):
        distribution_from_mapping({"kind": "student-t", "estimate": 1, "u": 1})
    with pytest.raises(StatisticsError):
        distribution_from_mapping({"kind": "weird", "estimate": 1})
