"""Latin-hypercube designs drawn as normal scores (uqthermo/uq/latin.py).

Outside references: ``scipy.special.ndtri`` (Cephes) for Φ⁻¹ over every stratum, tails included;
the Latin-hypercube definition of McKay, Beckman & Conover (1979) (one point per stratum and
column); ``scipy.stats.kstest`` against the exact standard normal distribution.
"""

import numpy as np
import pytest
from scipy import special, stats

from uqthermo.errors import StatisticsError
from uqthermo.uq.latin import LHS_BLOCK, LatinScoreStream, latin_uniform_blocks, stratum_scores

EPS = 2.0**-52


def _reference(v, m, start=0):
    """Φ⁻¹((k + v)/m) by ndtri on the nearer tail (the upper tail as −Φ⁻¹((m − 1 − k + 1 − v)/m))."""
    k = np.arange(start, start + len(v))
    p, q = (k + v) / m, ((m - 1 - k) + (1.0 - v)) / m
    return np.where(k < m / 2, special.ndtri(np.maximum(p, 2.0**-53)), -special.ndtri(q)), np.minimum(p, q)


@pytest.mark.parametrize("m", [1, 2, 3, 7, 1000, 16384, 65536, 65537, LHS_BLOCK])
def test_stratum_scores_match_ndtri_over_every_stratum(m):
    """Few ulp of ndtri (Cephes) everywhere: the tolerance is 4 ulp of z plus 4 times the change
    in z that one ulp of p causes, eps·min(p, 1 − p)/φ(z) (Φ⁻¹ is ill-conditioned near p = ½
    in relative terms, where z → 0)."""
    rng = np.random.default_rng(m)
    v = rng.random(m)
    v[: min(m, 3)] = [0.5, 1.0 - 2.0**-53, 0.25][: min(m, 3)]
    ref, pq = _reference(v, m)
    z = stratum_scores(v.copy(), m)
    cond = EPS * pq * np.sqrt(2.0 * np.pi) * np.exp(0.5 * ref**2)
    assert np.all(np.abs(z - ref) <= 4.0 * (np.spacing(np.abs(ref)) + cond))


def test_stratum_scores_in_pieces_and_at_the_ends():
    m = 65536
    v = np.random.default_rng(1).random(m)
    whole = stratum_scores(v.copy(), m)
    pieces = np.concatenate([stratum_scores(v[a:a + 5000].copy(), m, a) for a in range(0, m, 5000)])
    assert np.array_equal(whole, pieces)
    # v = 0 in the lowest stratum: Φ⁻¹(2⁻⁵³) (the engine's clip), not −∞; v → 1 in the top one
    ends = stratum_scores(np.array([0.0]), m, 0), stratum_scores(np.array([1.0 - 2.0**-53]), m, m - 1)
    assert ends[0][0] == pytest.approx(special.ndtri(2.0**-53)) and np.isfinite(ends[1][0])
    assert ends[1][0] == pytest.approx(-special.ndtri(2.0**-53 / m), rel=1e-12)
    # strictly increasing along the strata (each value in its own stratum)
    assert np.all(np.diff(whole) > 0)


@pytest.mark.parametrize("n", [1, 5, 999, LHS_BLOCK + 3])
def test_one_point_per_stratum_and_column(n):
    """McKay, Beckman & Conover (1979): in every block each column has one point per stratum."""
    Z, V = LatinScoreStream([0, 4, 9], [2, 3], seed=5).draw(n)
    assert Z.shape == (n, 3) and V.shape == (n, 2)
    start = 0
    nb = -(-n // LHS_BLOCK)
    for b in range(nb):
        m = n // nb + (1 if b < n % nb else 0)
        for col in np.hstack([special.ndtr(Z[start:start + m]), V[start:start + m]]).T:
            strata = np.floor(col * m).astype(np.int64)
            # Φ(z) may round onto a stratum edge; the value itself is within the stratum
            assert np.array_equal(np.sort(strata), np.arange(m)) or \
                np.max(np.abs(np.sort(col * m) - np.arange(m) - 0.5)) <= 0.5 + 1e-9
        start += m


def test_columns_are_standard_normal_and_unpaired():
    """Each column is exactly N(0, 1) (KS test against the exact distribution, scipy) and the
    columns are paired at random (sample correlations within a few 1/√n)."""
    n = 20000
    Z, V = LatinScoreStream([0, 1, 2], [3], seed=11).draw(n)
    for col in Z.T:
        assert stats.kstest(col, "norm").pvalue > 1e-3
        assert abs(col.mean()) < 1e-3        # stratified: the mean is far better than 1/√n
    assert stats.kstest(V[:, 0], "uniform").pvalue > 1e-3
    C = np.corrcoef(np.hstack([Z, V]).T)
    assert np.max(np.abs(C - np.eye(4))) < 5.0 / np.sqrt(n)


def test_reproducible_chunk_independent_and_common_numbers():
    a = LatinScoreStream([0, 1], [5], seed=3, skip=7)
    Z, V = a.draw(70000)
    pieces = list(LatinScoreStream([0, 1], [5], seed=3, skip=7).chunks(70000, 4096))
    assert np.array_equal(np.vstack([p[0] for p in pieces]), Z)
    assert np.array_equal(np.vstack([p[1] for p in pieces]), V)
    # a column's numbers do not depend on which other columns are drawn
    Z1, _ = LatinScoreStream([1], [], seed=3, skip=7).draw(70000)
    assert np.array_equal(Z1[:, 0], Z[:, 1])
    # another position gives another design
    Z2, _ = LatinScoreStream([0, 1], [5], seed=3, skip=8).draw(70000)
    assert not np.array_equal(Z2, Z)
    # the uniform form is the same design as the scores' stratum values
    U = np.vstack(list(latin_uniform_blocks(1000, 2, seed=3, position=0)))
    Zs, _ = LatinScoreStream([0, 1], [], seed=3).draw(1000)
    assert np.allclose(special.ndtri(U), Zs, rtol=0, atol=1e-12)


def test_bad_arguments():
    with pytest.raises(StatisticsError):
        LatinScoreStream([0, 0])
    with pytest.raises(StatisticsError):
        LatinScoreStream([0], skip=-1)
    with pytest.raises(StatisticsError):
        list(LatinScoreStream([0]).chunks(10, 0))


def test_stratified_scores_of_sobol_blocks():
    """Every coordinate of an aligned 2^k block of scrambled Sobol' points (scipy.stats.qmc.Sobol)
    holds one point per stratum (a (0, k, 1)-net); Φ⁻¹ through the stratum table is within a few
    ulp of ``ndtri``. Columns that are not so stratified are refused."""
    from scipy.stats import qmc

    from uqthermo.uq.latin import NET_MIN, stratified_scores

    eng = qmc.Sobol(3, scramble=True, bits=30, rng=np.random.default_rng(2))
    eng.fast_forward(2**16)                      # the second block of 2^16 points
    U = eng.random(2**16) + 2.0**-31
    for col in U.T:
        out = np.empty_like(col)
        assert stratified_scores(np.ascontiguousarray(col), out)
        ref = special.ndtri(col)
        pq = np.minimum(col, 1.0 - col)
        cond = EPS * pq * np.sqrt(2.0 * np.pi) * np.exp(0.5 * ref**2)
        assert np.all(np.abs(out - ref) <= 4.0 * (np.spacing(np.abs(ref)) + cond) + 2.0 * cond)
    out = np.empty(NET_MIN)
    assert not stratified_scores(np.random.default_rng(1).random(NET_MIN), out)   # random: not stratified
    assert not stratified_scores(U[:NET_MIN + 1, 0].copy(), np.empty(NET_MIN + 1))  # not a power of two
    assert not stratified_scores(U[:NET_MIN // 2, 0].copy(), np.empty(NET_MIN // 2))  # too short


@pytest.mark.parametrize("sampling", ["latin-hypercube", "sobol"])
def test_runs_reproduce_exact_distributions(sampling):
    """End to end through the engine (normal scores by the stratum tables, a rectangular input by
    stratified uniforms): y1 = exp(x), x ~ N(0, 0.5²), is lognormal (scipy.stats.lognorm) and
    y2 = w, w rectangular on [1, 3], is uniform (scipy.stats.uniform); 2^17 trials in 2^16-row
    chunks (whole Sobol' blocks, so the table path is taken). Endpoints within 3 standard errors
    of pseudo-random sampling of the exact quantiles (stratified designs do better), means within
    3 u/√n of the exact means."""
    from uqthermo.uq.distributions import Normal, Rectangular
    from uqthermo.uq.inputs import InputSet, InputVariable
    from uqthermo.uq.montecarlo import propagate_monte_carlo

    inputs = InputSet([InputVariable("x", "x", Normal(0.0, 0.5)), InputVariable("w", "w", Rectangular(2.0, 1.0))])
    n = 2**17
    mc = propagate_monte_carlo(lambda X: np.column_stack([np.exp(X[:, 0]), X[:, 1]]), inputs, samples=n,
                               sampling=sampling, seed=4, chunk_size=2**16)
    for j, dist in enumerate((stats.lognorm(s=0.5), stats.uniform(loc=1.0, scale=2.0))):
        ps = np.array([0.025, 0.975])
        se = np.sqrt(ps * (1 - ps) / n) / dist.pdf(dist.ppf(ps))
        assert np.all(np.abs(mc.coverage_interval[j] - dist.ppf(ps)) <= 3 * se)
        assert abs(mc.mean[j] - dist.mean()) <= 3 * dist.std() / np.sqrt(n)
        assert mc.standard_uncertainty[j] == pytest.approx(dist.std(), rel=0.01)
