"""Input sets, correlation checks, the Gaussian copula and the uniform samplers."""

import numpy as np
import pytest

from uqthermo.errors import CorrelationError, StatisticsError
from uqthermo.uq import (
    Datum,
    Exact,
    InputSet,
    InputVariable,
    LogNormal,
    Normal,
    Rectangular,
    StudentT,
    iter_uniform_chunks,
    uniform_sample,
)
from uqthermo.uq.sampling import LHS_BLOCK, UniformStream


def _vars(n, dist=None):
    return [InputVariable(f"x{i}", f"d{i}", dist or Normal(0.0, 1.0)) for i in range(n)]


# ---------------------------------------------------------------------------------------------
# correlation validation
# ---------------------------------------------------------------------------------------------
def test_identity_default_and_attributes():
    s = InputSet([InputVariable("a[0]", "a", Normal(1.0, 0.1)), InputVariable("a[1]", "a", Normal(2.0, 0.2)),
                  InputVariable("b", "b", Rectangular(3.0, 0.3))])
    assert s.names == ["a[0]", "a[1]", "b"]
    assert s.data == ["a", "b"]
    assert s.groups == {"a": [0, 1], "b": [2]}
    np.testing.assert_allclose(s.estimates, [1, 2, 3])
    np.testing.assert_allclose(s.stds, [0.1, 0.2, 0.3 / np.sqrt(3)])
    np.testing.assert_array_equal(s.correlation, np.eye(3))
    np.testing.assert_allclose(s.covariance(), np.diag(s.stds**2))


def test_not_psd_names_entries():
    R = np.array([[1, 0.9, -0.9], [0.9, 1, 0.9], [-0.9, 0.9, 1.0]])
    with pytest.raises(CorrelationError) as e:
        InputSet(_vars(3), R)
    msg = str(e.value)
    assert "positive semidefinite" in msg
    assert "x0 ~ x1" in msg and "x1 ~ x2" in msg and "x0 ~ x2" in msg
    assert {(a, b) for a, b, _ in e.value.entries} == {("x0", "x1"), ("x0", "x2"), ("x1", "x2")}


def test_not_psd_only_involved_variables_named():
    R = np.eye(5)
    # x1, x2, x3 form an inconsistent triangle; x0, x4 are innocent (x4 weakly tied to x0)
    R[1, 2] = R[2, 1] = 0.95
    R[2, 3] = R[3, 2] = 0.95
    R[1, 3] = R[3, 1] = -0.95
    R[0, 4] = R[4, 0] = 0.3
    with pytest.raises(CorrelationError) as e:
        InputSet(_vars(5), R)
    assert set(e.value.variables) == {"x1", "x2", "x3"}
    assert set(e.value.data) == {"d1", "d2", "d3"} and e.value.key in {"d1", "d2", "d3"}


@pytest.mark.parametrize("R,word", [
    ([[1, 1.2], [1.2, 1]], "|r| > 1"),
    ([[1, 0.2], [0.3, 1]], "not symmetric"),
    ([[0.9, 0.2], [0.2, 1]], "unit diagonal"),
    ([[1, np.nan], [np.nan, 1]], "non-finite"),
    ([[1, 0.2, 0.1], [0.2, 1, 0.1], [0.1, 0.1, 1]], "shape"),
])
def test_invalid_matrices(R, word):
    with pytest.raises(CorrelationError) as e:
        InputSet(_vars(2), R)
    assert word in str(e.value)
    if word == "|r| > 1":
        assert "x0 ~ x1" in str(e.value)


def test_semidefinite_allowed_and_sampled():
    # r = 1 is positive semidefinite (singular): allowed, Cholesky falls back to the eigen factor
    R = np.array([[1.0, 1.0], [1.0, 1.0]])
    s = InputSet(_vars(2), R)
    X = s.from_uniform(uniform_sample(1000, 2, "random", seed=3))
    np.testing.assert_allclose(X[:, 0], X[:, 1], atol=1e-12)


def test_from_data_blocks_and_pairwise():
    cov = np.array([[0.04, 0.01], [0.01, 0.09]])
    data = [
        Datum("cp", [("cp[a]", Normal(1.0, 0.2)), ("cp[b]", Normal(2.0, 0.3))], covariance=cov),
        Datum("h1", [("h1", Normal(-100.0, 1.0))]),
        {"id": "h2", "variables": [("h2", Rectangular(50.0, 2.0))]},
        Datum("t", [("t[0]", Normal(0.0, 1.0)), ("t[1]", Exact(3.0))], correlation=np.eye(2)),
    ]
    s = InputSet.from_data(data, pairwise={("h1", "h2"): 0.4, ("cp[a]", "h1"): -0.2})
    i = s.names.index
    assert s.correlation[i("cp[a]"), i("cp[b]")] == pytest.approx(0.01 / 0.06)
    assert s.correlation[i("h1"), i("h2")] == 0.4
    assert s.correlation[i("cp[a]"), i("h1")] == -0.2
    assert s.groups["cp"] == [0, 1]
    np.testing.assert_allclose(s.covariance()[:2, :2], cov)
    # list form of pairwise is accepted as well
    s2 = InputSet.from_data(data, pairwise=[("h1", "h2", 0.4)])
    assert s2.correlation[i("h1"), i("h2")] == 0.4


def test_from_data_rules():
    data = [Datum("cp", [("cp[a]", Normal(1.0, 0.2)), ("cp[b]", Normal(2.0, 0.3))]),
            Datum("h", [("h", Normal(0.0, 1.0))])]
    with pytest.raises(CorrelationError, match="single-variable"):
        InputSet.from_data(data, pairwise={("cp", "h"): 0.5})
    with pytest.raises(CorrelationError, match="same datum"):
        InputSet.from_data(data, pairwise={("cp[a]", "cp[b]"): 0.5})
    with pytest.raises(StatisticsError, match="unknown"):
        InputSet.from_data(data, pairwise={("nope", "h"): 0.5})
    with pytest.raises(CorrelationError, match="given twice"):
        InputSet.from_data(data, pairwise=[("h", "cp[a]", 0.5), ("cp[a]", "h", 0.4)])
    with pytest.raises(CorrelationError, match=r"\[-1, 1\]"):
        InputSet.from_data(data, pairwise={("h", "cp[a]"): 1.5})
    with pytest.raises(CorrelationError, match="u ="):
        InputSet.from_data([Datum("cp", [("a", Normal(1.0, 0.2)), ("b", Normal(1.0, 0.2))],
                                  covariance=[[0.05, 0], [0, 0.04]])])
    # pairwise coefficients that together are inconsistent are caught by the PSD check
    d3 = [Datum(k, [(k, Normal(0.0, 1.0))]) for k in "abc"]
    with pytest.raises(CorrelationError, match="positive semidefinite"):
        InputSet.from_data(d3, pairwise={("a", "b"): 0.9, ("b", "c"): 0.9, ("a", "c"): -0.9})


def test_duplicate_names_rejected():
    with pytest.raises(StatisticsError, match="duplicate"):
        InputSet([InputVariable("a", "a", Normal(0, 1)), InputVariable("a", "b", Normal(0, 1))])


def test_with_scaled_uncertainty():
    s = InputSet.from_data([Datum("a", [("a", Normal(1.0, 0.2))]), Datum("b", [("b", Rectangular(0.0, 1.0))])],
                           pairwise={("a", "b"): 0.5})
    t = s.with_scaled_uncertainty({"a": 0.5, "b": 0})
    assert t.stds[0] == pytest.approx(0.1) and t.stds[1] == 0.0
    assert isinstance(t.variables[1].distribution, Exact)
    np.testing.assert_array_equal(t.correlation, s.correlation)
    X = t.from_uniform(uniform_sample(64, 2, "sobol", 1))
    assert np.all(X[:, 1] == 0.0)
    with pytest.raises(StatisticsError):
        s.with_scaled_uncertainty({"zzz": 2.0})


# ---------------------------------------------------------------------------------------------
# from_uniform / copula
# ---------------------------------------------------------------------------------------------
def test_all_normal_is_multivariate_normal():
    R = np.array([[1.0, 0.6, -0.3], [0.6, 1.0, 0.2], [-0.3, 0.2, 1.0]])
    dists = [Normal(1.0, 0.5), Normal(-2.0, 2.0), Normal(10.0, 0.1)]
    s = InputSet([InputVariable(f"v{i}", f"v{i}", d) for i, d in enumerate(dists)], R)
    U = uniform_sample(2**16, 3, "sobol", seed=11)
    X = s.from_uniform(U)
    # exact map: X = x_hat + (Phi^-1(U) L^T) * u with L = chol(R)
    from scipy.special import ndtri
    Z = ndtri(U) @ np.linalg.cholesky(R).T
    np.testing.assert_allclose(X, s.estimates + Z * s.stds, rtol=1e-13, atol=1e-13)
    np.testing.assert_allclose(np.cov(X.T), s.covariance(), rtol=0.02, atol=1e-4)


def test_exact_inputs_pass_through_and_do_not_break_factorisation():
    R = np.eye(3)
    R[0, 1] = R[1, 0] = 0.5
    R[1, 2] = R[2, 1] = 0.5
    vs = [InputVariable("a", "a", Normal(0, 1)), InputVariable("b", "b", Exact(7.0)),
          InputVariable("c", "c", StudentT(0, 1, 5))]
    s = InputSet(vs, R)
    X = s.from_uniform(uniform_sample(500, 3, "random", seed=2))
    assert np.all(X[:, 1] == 7.0)
    assert np.all(np.isfinite(X))


def test_uncorrelated_columns_use_inverse_cdf_directly():
    s = InputSet([InputVariable("a", "a", Rectangular(0.0, 1.0)), InputVariable("b", "b", LogNormal(1.0, 0.2))])
    U = uniform_sample(100, 2, "latin-hypercube", seed=5)
    X = s.from_uniform(U)
    np.testing.assert_allclose(X[:, 0], -1.0 + 2.0 * U[:, 0], rtol=1e-15)
    # LHS stratification is preserved: one point per 1/100 stratum
    assert sorted(np.floor((X[:, 0] + 1.0) / 2.0 * 100).astype(int)) == list(range(100))


def test_from_uniform_shape_error():
    s = InputSet(_vars(2))
    with pytest.raises(StatisticsError):
        s.from_uniform(np.zeros((10, 3)))


# ---------------------------------------------------------------------------------------------
# sampling
# ---------------------------------------------------------------------------------------------
@pytest.mark.parametrize("method", ["random", "sobol", "latin-hypercube"])
def test_same_seed_bit_identical_and_chunk_independent(method):
    a = uniform_sample(1000, 5, method, seed=42)
    b = uniform_sample(1000, 5, method, seed=42)
    assert a.tobytes() == b.tobytes()
    c = np.concatenate(list(iter_uniform_chunks(1000, 5, method, seed=42, chunk_size=137)), axis=0)
    assert c.tobytes() == a.tobytes()
    assert not np.array_equal(a, uniform_sample(1000, 5, method, seed=43))
    assert a.min() > 0.0 and a.max() < 1.0


@pytest.mark.parametrize("method", ["random", "sobol"])
def test_skip_continues_sequence(method):
    whole = uniform_sample(300, 4, method, seed=9)
    tail = uniform_sample(200, 4, method, seed=9, skip=100)
    assert tail.tobytes() == whole[100:].tobytes()
    st = UniformStream(4, method, 9)
    parts = [st.draw(10), st.draw(90), st.draw(200)]
    assert np.concatenate(parts).tobytes() == whole.tobytes()


def test_lhs_stratified_and_blocked():
    u = uniform_sample(64, 3, "latin-hypercube", seed=1)
    for j in range(3):
        assert sorted(np.floor(u[:, j] * 64).astype(int)) == list(range(64))
    # a design larger than one block is made of equal stratified blocks; chunked == whole
    n = LHS_BLOCK + 10
    st = UniformStream(2, "latin-hypercube", 4)
    whole = st.draw(n)
    chunks = np.concatenate(list(UniformStream(2, "latin-hypercube", 4).chunks(n, 100_000)))
    assert chunks.tobytes() == whole.tobytes()
    half = n // 2
    assert sorted(np.floor(whole[:half, 0] * half).astype(int)) == list(range(half))


def test_sampling_errors():
    with pytest.raises(StatisticsError):
        uniform_sample(10, 2, "grid", seed=1)
    with pytest.raises(StatisticsError):
        uniform_sample(10, 2, "random", seed=-1)
    with pytest.raises(StatisticsError):
        uniform_sample(-1, 2, "random", seed=1)


def test_vectorised_transform_equals_per_column_inverse_cdf():
    """The grouped Φ⁻¹ pass of from_uniform gives bit-identical columns to x_j = G_j⁻¹(u_j)
    (JCGM 101 §6.3) for every mix: normal, rectangular, exact, and copula-linked columns,
    including uniforms at 0 and 1 (clipped to [2⁻⁵³, 1 − 2⁻⁵³])."""
    from uqthermo.uq.inputs import U_CLIP

    variables = [InputVariable("n1", "n1", Normal(-74.87, 0.34)), InputVariable("r", "r", Rectangular(2.0, 0.3)),
                 InputVariable("x", "x", Exact(5.0)), InputVariable("n2", "n2", Normal(1.5, 0.02)),
                 InputVariable("n3", "n3", Normal(0.0, 1.0))]
    U = uniform_sample(4000, 5, "random", seed=8)
    U[0, 0], U[1, 3], U[2, 4] = 0.0, 1.0, 0.0
    independent = InputSet(variables)
    X = independent.from_uniform(U)
    for j, v in enumerate(variables):
        ref = v.distribution.ppf(np.clip(U[:, j], U_CLIP, 1 - U_CLIP)) if v.distribution.std else 5.0
        np.testing.assert_array_equal(X[:, j], ref)
    assert np.all(np.isfinite(X))
    R = np.eye(5)
    R[0, 3] = R[3, 0] = 0.6
    linked = InputSet(variables, R)
    XL = linked.from_uniform(U)
    for j in (1, 2, 4):                 # columns outside the copula are unchanged
        np.testing.assert_array_equal(XL[:, j], X[:, j])
    assert np.corrcoef(XL[:, 0], XL[:, 3])[0, 1] == pytest.approx(0.6, abs=0.03)
    only_normal = InputSet([variables[0], variables[3]])
    np.testing.assert_array_equal(only_normal.from_uniform(U[:, [0, 3]]), X[:, [0, 3]])


def test_from_uniform_of_no_rows():
    s = InputSet([InputVariable("a", "a", Normal(1.0, 0.1)), InputVariable("b", "b", Rectangular(0.0, 1.0))])
    assert s.from_uniform(np.empty((0, 2))).shape == (0, 2)
    assert InputSet([InputVariable("a", "a", Normal(1.0, 0.1))]).from_uniform(np.empty((0, 1))).shape == (0, 1)
