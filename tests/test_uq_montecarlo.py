"""Monte Carlo propagation (JCGM 101): reproducibility, chunking, memory bound, summaries, validation."""

import numpy as np
import pytest
from scipy import special, stats

from uqthermo.errors import StatisticsError
from uqthermo.uq import (
    Exact,
    InputSet,
    InputVariable,
    LogNormal,
    Normal,
    Rectangular,
    Triangular,
    numerical_tolerance,
    propagate_linear,
    propagate_monte_carlo,
    validate_linear,
)
from uqthermo.uq.sampling import UniformStream
from uqthermo.uq.stats import Moments, intervals_from_sorted


def _inputs():
    R = np.array([[1.0, 0.4, 0.0], [0.4, 1.0, -0.3], [0.0, -0.3, 1.0]])
    return InputSet([InputVariable("a", "a", Normal(1.0, 0.1)), InputVariable("b", "b", Rectangular(2.0, 0.3)),
                     InputVariable("c", "c", LogNormal(0.5, 0.05))], R, scale="normal-scores")


def model(X):
    return np.stack([X[:, 0] * X[:, 1] + X[:, 2], np.exp(X[:, 0]) - X[:, 2] ** 2], axis=1)


@pytest.mark.parametrize("method", ["random", "sobol", "latin-hypercube"])
def test_bit_identical_with_same_seed(method):
    a = propagate_monte_carlo(model, _inputs(), samples=20_000, sampling=method, seed=77)
    b = propagate_monte_carlo(model, _inputs(), samples=20_000, sampling=method, seed=77)
    for name in ("mean", "standard_uncertainty", "coverage_interval", "shortest_interval", "skewness",
                 "Y_kept", "X_kept"):
        assert getattr(a, name).tobytes() == getattr(b, name).tobytes(), name
    c = propagate_monte_carlo(model, _inputs(), samples=20_000, sampling=method, seed=78)
    assert not np.array_equal(a.Y_kept, c.Y_kept)


@pytest.mark.parametrize("method", ["random", "sobol", "latin-hypercube"])
def test_chunk_size_does_not_change_results(method):
    a = propagate_monte_carlo(model, _inputs(), samples=30_000, sampling=method, seed=5, chunk_size=30_000)
    b = propagate_monte_carlo(model, _inputs(), samples=30_000, sampling=method, seed=5, chunk_size=777)
    assert a.coverage_interval.tobytes() == b.coverage_interval.tobytes()
    assert a.shortest_interval.tobytes() == b.shortest_interval.tobytes()
    assert a.Y_kept.tobytes() == b.Y_kept.tobytes()
    np.testing.assert_allclose(a.mean, b.mean, rtol=1e-13)
    np.testing.assert_allclose(a.standard_uncertainty, b.standard_uncertainty, rtol=1e-12)
    assert [n for n, _ in a.convergence[0]] == [n for n, _ in b.convergence[0]]


@pytest.mark.parametrize("method", ["random", "sobol", "latin-hypercube"])
def test_adaptive_chunk_size_independent(method):
    kw = dict(samples="adaptive", sampling=method, seed=3, ndigits=2)
    a = propagate_monte_carlo(model, _inputs(), chunk_size=10_000, **kw)
    b = propagate_monte_carlo(model, _inputs(), chunk_size=70_000, **kw)
    assert a.converged and b.converged
    # JCGM 101 7.9.4 b): M = max(100/(1-p), 10^4) for p = 0.95; for Sobol' the nearest power of two >= J
    M = 8192 if method == "sobol" else 10_000
    assert a.batch_size == M
    assert a.samples_used == b.samples_used and a.samples_used % M == 0
    assert a.coverage_interval.tobytes() == b.coverage_interval.tobytes()
    # stability holds 2s per quantity (JCGM 101 7.9.4 k): none exceeds delta
    assert all(s2 <= t for v in a.stability.values() for s2, t in zip(v, a.tolerance))


def test_histogram_mode_matches_exact_mode():
    kw = dict(samples=300_000, sampling="random", seed=12)
    exact = propagate_monte_carlo(model, _inputs(), **kw)
    binned = propagate_monte_carlo(model, _inputs(), max_stored_values=200_000, chunk_size=7_000, **kw)
    assert not binned.warnings
    assert exact.quantile_method == "exact" and binned.quantile_method == "histogram"
    res = binned.quantile_resolution
    assert np.all(res < 0.1 * binned.tolerance)
    np.testing.assert_allclose(binned.coverage_interval, exact.coverage_interval, atol=2 * res.max())
    np.testing.assert_allclose(binned.quantile([0.05, 0.5, 0.95]), exact.quantile([0.05, 0.5, 0.95]),
                               atol=2 * res.max())
    # the shortest interval (JCGM 101 §7.7.2) is the argmin of a flat valley of widths: its
    # width is sharp, its position only to about δ (seeds 12-23: widths within 5e-5, ends 1.4e-3)
    w_b, w_e = np.diff(binned.shortest_interval, axis=1), np.diff(exact.shortest_interval, axis=1)
    np.testing.assert_allclose(w_b, w_e, atol=0.05 * binned.tolerance.max())
    np.testing.assert_allclose(binned.shortest_interval, exact.shortest_interval, atol=binned.tolerance.max())
    np.testing.assert_allclose(binned.standard_uncertainty, exact.standard_uncertainty, rtol=1e-12)
    pa, _ = exact.probability_above(exact.median)
    pb, _ = binned.probability_above(exact.median)
    np.testing.assert_allclose(pa, 0.5, atol=1e-4)
    np.testing.assert_allclose(pb, 0.5, atol=1e-3)
    e1, c1 = binned.histogram(0, 20)
    assert len(e1) == 21 and abs(c1.sum() - 300_000) < 300


def test_summaries_for_a_normal_output():
    s = InputSet([InputVariable("x", "x", Normal(10.0, 2.0))])
    seen = []
    mc = propagate_monte_carlo(lambda X: X, s, samples=2**17, sampling="sobol", seed=1,
                               progress=lambda done, total: seen.append((done, total)))
    assert seen[-1] == (2**17, 2**17)
    # reference: exact normal quantiles (scipy.stats.norm)
    np.testing.assert_allclose(mc.coverage_interval[0], stats.norm.ppf([0.025, 0.975], 10, 2), atol=0.01)
    np.testing.assert_allclose(mc.quantile(0.99), stats.norm.ppf(0.99, 10, 2), atol=0.01)
    p, se = mc.probability_above(14.0)
    assert p[0] == pytest.approx(stats.norm.sf(2.0), abs=3 * se[0])
    assert abs(mc.skewness[0]) < 0.02
    n, u = mc.history(0)
    assert n[-1] == 2**17 and u[-1] == mc.standard_uncertainty[0]
    assert mc.Y_kept.shape == (65_536, 1) and mc.X_kept.shape == (65_536, 1)


def test_intervals_from_sorted_rules():
    # JCGM 101 7.7.1: q = pM (or int(pM + 1/2)); symmetric r = (M - q)/2 or int((M - q + 1)/2)
    ys = np.arange(1.0, 21.0)[:, None]
    sym, short = intervals_from_sorted(ys, 0.9)  # q = 18, r = 1
    assert sym.tolist() == [[1.0, 19.0]]
    sym, _ = intervals_from_sorted(ys, 0.85)  # q = 17, r = int(4/2) = 2
    assert sym.tolist() == [[2.0, 19.0]]
    skewed = np.sort(np.array([0, 0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 5, 9.0]))[:, None]
    _, short = intervals_from_sorted(skewed, 0.7)  # q = 7: narrowest window of 8 points
    assert short.tolist() == [[0.0, 0.7]]


def test_numerical_tolerance_jcgm101_792():
    # JCGM 101 7.9.2: z = c x 10^l with c an ndig-digit integer, delta = 10^l / 2
    assert numerical_tolerance(2.0, 2) == pytest.approx(0.05)
    assert numerical_tolerance(2.0, 1) == pytest.approx(0.5)
    assert numerical_tolerance(0.0123, 2) == pytest.approx(0.0005)
    assert numerical_tolerance(9.96, 2) == pytest.approx(0.5)  # rounds to 10 -> c = 10, l = 0
    assert numerical_tolerance(0.0, 2) == 0.0


def test_moments_merge_is_chunk_independent():
    rng = np.random.default_rng(0)
    y = rng.lognormal(size=(10_001, 2))
    m1, m2 = Moments(2), Moments(2)
    m1.add(y)
    for i in range(0, len(y), 333):
        m2.add(y[i:i + 333])
    np.testing.assert_allclose(m2.mean, y.mean(axis=0), rtol=1e-13)
    np.testing.assert_allclose(m2.std, y.std(axis=0, ddof=1), rtol=1e-12)
    np.testing.assert_allclose(m2.skewness, stats.skew(y, axis=0), rtol=1e-10)  # reference: scipy.stats.skew
    np.testing.assert_allclose(m1.skewness, m2.skewness, rtol=1e-10)


def test_validation_flags():
    lin_in = InputSet([InputVariable(f"x{i}", f"x{i}", Normal(0.0, 1.0)) for i in range(4)])
    f = lambda X: np.stack([X.sum(axis=1), np.exp(X[:, 0])], axis=1)  # linear / strongly skewed output
    lin = propagate_linear(f, lin_in)
    mc = propagate_monte_carlo(f, lin_in, samples=200_000, seed=2)
    v = validate_linear(lin, mc, ndigits=2)
    assert v[0].linear_validated and not v[1].linear_validated
    y, U = lin.estimate[1], lin.expanded_uncertainty[1]
    assert v[1].d_low == pytest.approx(abs(y - U - mc.coverage_interval[1, 0]))
    assert v[1].d_high == pytest.approx(abs(y + U - mc.coverage_interval[1, 1]))
    assert v[0].tolerance == pytest.approx(0.05)
    assert {"tolerance", "d_low", "d_high", "verdict", "monte_carlo_stable"} <= set(v[0].as_dict())
    assert v[0].verdict == "validated" and v[1].verdict == "not validated"


def test_errors_and_warnings():
    s = InputSet([InputVariable("x", "x", Normal(0.0, 1.0))])
    with pytest.raises(StatisticsError, match="non-finite"):
        with np.errstate(invalid="ignore"):
            propagate_monte_carlo(lambda X: np.log(X), s, samples=1000, seed=1)
    with pytest.raises(StatisticsError):
        propagate_monte_carlo(lambda X: X, s, samples="lots", seed=1)
    with pytest.raises(StatisticsError):
        propagate_monte_carlo(lambda X: X, s, samples=1000, sampling="grid", seed=1)
    small = propagate_monte_carlo(lambda X: X, s, samples=500, seed=1)
    assert small.warnings and "trials" in small.warnings[0]
    capped = propagate_monte_carlo(lambda X: X, s, samples="adaptive", seed=1, ndigits=4, max_samples=30_000,
                                   sampling="random")
    assert not capped.converged and capped.samples_used == 30_000 and capped.warnings


def test_constant_output_converges():
    s = InputSet([InputVariable("x", "x", Normal(0.0, 1.0))])
    mc = propagate_monte_carlo(lambda X: np.stack([X[:, 0], np.zeros(len(X))], axis=1), s, samples="adaptive",
                               seed=4)
    assert mc.converged and mc.standard_uncertainty[1] == 0.0


def test_seed_recorded_when_not_given():
    s = InputSet([InputVariable("x", "x", Normal(0.0, 1.0))])
    a = propagate_monte_carlo(lambda X: X, s, samples=1000)
    b = propagate_monte_carlo(lambda X: X, s, samples=1000, seed=a.seed)
    assert a.Y_kept.tobytes() == b.Y_kept.tobytes()


def test_bin_layout_counts_equal_binary_search_and_read_back():
    """BinLayout's arithmetic binning equals a binary search of its edges, value by value,
    for a continuous, a skewed and a two-valued (indicator) output; quantiles read back
    within one bin of numpy's exact hazen quantiles (JCGM 101 §7.5.2)."""
    from uqthermo.uq.stats import BinLayout, BinnedCDF, quantile_sorted

    rng = np.random.default_rng(5)
    pilot = np.column_stack([rng.standard_normal(300_000), rng.lognormal(0.0, 1.0, 300_000),
                             (rng.random(300_000) < 0.3).astype(float)])
    layout = BinLayout.from_pilot(pilot, 20_000)
    assert np.all(np.diff(layout.edges, axis=1) > 0)
    Y = np.column_stack([1.3 * rng.standard_normal(50_000), rng.lognormal(0.0, 1.2, 50_000),
                         (rng.random(50_000) < 0.3).astype(float)])
    ref = np.stack([np.bincount(np.searchsorted(layout.edges[j], Y[:, j], side="right"),
                                minlength=layout.n_counts) for j in range(3)])
    np.testing.assert_array_equal(layout.count(Y), ref)
    h = BinnedCDF(pilot, 20_000)
    h.add(Y)
    allv = np.sort(np.concatenate([pilot, Y]), axis=0)
    p = [0.01, 0.025, 0.5, 0.975, 0.99]
    exact = np.quantile(allv, p, axis=0, method="hazen")
    np.testing.assert_allclose(quantile_sorted(allv, p), exact, rtol=0, atol=1e-12)
    width = h.resolution(exact)
    assert np.all(np.abs(h.quantile(p) - exact)[:, :2] <= width[:2])
    np.testing.assert_allclose(h.quantile([0.5, 0.975])[:, 2], [0.0, 1.0], atol=1e-4)   # jumps over the empty gap
    # a pilot sorted once and counted by binary search gives the same counts as value by value
    b = BinnedCDF(layout=layout)
    b.add(pilot)
    c = BinnedCDF(layout=layout)
    c.add_sorted(np.sort(pilot, axis=0))
    np.testing.assert_array_equal(b.counts, c.counts)


def test_bin_slots_far_from_zero_and_of_odd_values():
    """Outputs far from zero relative to their spread (c_lo/w beyond 2⁴⁰ takes the subtract-first
    rule), with non-finite values and values on the central range's edges: every value lands in
    the bin a binary search of the edges gives, except at rounding distance (10⁻⁴ of a bin) from
    an edge."""
    from uqthermo.uq.stats import BinLayout

    rng = np.random.default_rng(12)
    for offset, spread in [(0.0, 1.0), (-4.2e5, 3.0), (1e9, 1e-3), (7e13, 1.0)]:
        layout = BinLayout.from_pilot(offset + spread * rng.standard_normal((40_000, 2)), 50_000, ndigits=2)
        Y = offset + spread * rng.standard_t(3, (3001, 2))
        Y[:5, 0] = [np.nan, np.inf, -np.inf, layout.lo[0], layout.edges[0, -1]]
        flat = layout.indices(np.asfortranarray(Y)).reshape(2, -1)
        for j in range(2):
            ref = j * layout.n_counts + np.searchsorted(layout.edges[j], Y[:, j], side="right")
            off = np.flatnonzero(flat[j] != ref)
            gap = np.min(np.abs(layout.edges[j][None, :] - Y[off, j][:, None]), axis=1, initial=np.inf)
            assert np.all(gap <= 1e-4 / layout.inv_width[j]), (offset, j, off)


def test_bin_layout_from_pilot_is_as_fine_as_ndigits_needs():
    """With ndigits the central bins are just fine enough: width ≤ 0.05 δ(0.8 s) per output
    (δ of JCGM 101 §7.9.2, s the pilot's standard deviation), the widest output needing the
    most bins decides their number, which is not more than that needs (and at least 2000)."""
    from uqthermo.uq.stats import MIN_CENTRAL_BINS, BinLayout, numerical_tolerance

    rng = np.random.default_rng(8)
    pilot = np.column_stack([3.0 * rng.standard_normal(2**18), 0.003 * rng.lognormal(0.0, 0.5, 2**18),
                             np.full(2**18, 4.0)])      # the last one constant: u = 0 asks nothing
    full = BinLayout.from_pilot(pilot, 100_000)
    lay = BinLayout.from_pilot(pilot, 100_000, ndigits=2)
    width = 1.0 / lay.inv_width
    limit = 0.05 * numerical_tolerance(0.8 * pilot.std(axis=0, ddof=1), 2)
    assert np.all(width[:2] <= limit[:2] * (1 + 1e-12))
    assert lay.k < full.k and (lay.k == MIN_CENTRAL_BINS or np.any(width[:2] > 0.99 * limit[:2] * (lay.k - 1) / lay.k))
    assert lay.first == full.first and np.all(np.diff(lay.edges[:2], axis=1) > 0)
    coarse = BinLayout.from_pilot(pilot[:, :1], 100_000, ndigits=1)
    assert coarse.k == MIN_CENTRAL_BINS     # one digit of u = 3 (δ = 0.5) needs few bins
    # an unsorted pilot (only its tails get sorted) gives the layout of the sorted one, edge for edge
    ref = BinLayout.from_pilot(np.sort(pilot, axis=0), 100_000, is_sorted=True, ndigits=2)
    assert np.array_equal(ref.edges, lay.edges) and ref.k == lay.k


def test_histogram_mode_known_in_advance_uses_a_small_pilot():
    kw = dict(samples=400_000, sampling="sobol", seed=3)
    exact = propagate_monte_carlo(model, _inputs(), **kw)
    binned = propagate_monte_carlo(model, _inputs(), max_stored_values=300_000, **kw)
    assert binned.quantile_method == "histogram" and not binned.warnings
    np.testing.assert_allclose(binned.coverage_interval, exact.coverage_interval,
                               atol=2 * binned.quantile_resolution.max())
    np.testing.assert_allclose(binned.mean, exact.mean, rtol=1e-12)


def _additive(n_inputs=8):
    """JCGM 101 §9.2-style additive model Y = Σ c_i X_i of independent normal inputs:
    Y is exactly normal (mean Σ c_i x_i, variance Σ c_i² u_i²), so every §7.9 quantity has
    an exact reference (scipy.stats.norm)."""
    rng = np.random.default_rng(42)
    c = rng.uniform(-2.0, 2.0, n_inputs) * np.logspace(0, -1.5, n_inputs)
    xs = rng.normal(0.0, 3.0, n_inputs)
    us = rng.uniform(0.2, 1.0, n_inputs)
    s = InputSet([InputVariable(f"x{i}", f"x{i}", Normal(xs[i], us[i])) for i in range(n_inputs)])
    mean, sd = float(c @ xs), float(np.sqrt(np.sum((c * us) ** 2)))
    return (lambda X: X @ c), s, mean, sd


def test_adaptive_sobol_batches_are_independent_scrambles():
    from uqthermo.uq.montecarlo import batch_sampler, batch_seed
    from uqthermo.uq.sampling import UniformStream

    _, s, _, _ = _additive(5)
    draw = batch_sampler(s, "sobol", 9, 1024)
    U3 = draw(3)
    np.testing.assert_array_equal(U3, UniformStream(5, "sobol", batch_seed(9, 3)).draw(1024))
    assert not np.array_equal(draw(4), U3) and batch_seed(9, 3) != batch_seed(9, 4) != batch_seed(10, 3)


def test_score_rotation_points_the_first_sobol_coordinate_along_the_gradient():
    """One output of an additive model: W's first column is c·u/|c·u| (the score gradient),
    W is orthogonal, and the output then depends on the first coordinate alone."""
    from uqthermo.uq.montecarlo import score_rotation

    f, s, mean, sd = _additive(6)
    W = score_rotation(f, s)
    np.testing.assert_allclose(W.T @ W, np.eye(6), atol=1e-12)
    g = (f(s.estimates + np.diag(s.stds)) - f(s.estimates - np.diag(s.stds))) / 2
    np.testing.assert_allclose(np.abs(W[:, 0]), np.abs(g) / np.linalg.norm(g), atol=1e-12)
    # next: the most important input's score axis, made orthogonal to the gradient
    j = int(np.argmax(np.abs(g)))
    e = np.eye(6)[j] - g[j] * g / (g @ g)
    np.testing.assert_allclose(np.abs(W[:, 1]), np.abs(e) / np.linalg.norm(e), atol=1e-12)
    U = np.random.default_rng(0).random((1000, 6))
    y = f(s.from_uniform(U, W))
    np.testing.assert_allclose(y, mean + np.sign(g @ W[:, 0]) * sd * special.ndtri(U[:, 0]), rtol=0, atol=1e-9 * sd)
    # a model with no linear part (even in every score) keeps the plain Sobol' axes
    assert score_rotation(lambda X: ((X - s.estimates) ** 2).sum(axis=1), s) is None
    assert score_rotation(lambda X: np.full(len(X), 1.0), s) is None


def test_rotated_scores_keep_the_joint_input_distribution():
    """Any orthogonal rotation of the independent scores leaves the inputs' distribution as it
    is: means, standard deviations and the stated correlation of a copula pair (normal and
    rectangular marginals), checked on 2·10⁵ rows against the unrotated mapping."""
    from scipy.stats import special_ortho_group

    v = [InputVariable("a", "a", Normal(1.0, 0.5)), InputVariable("b", "b", Rectangular(2.0, 1.0)),
         InputVariable("c", "c", Normal(-3.0, 2.0)), InputVariable("e", "e", Exact(4.0)),
         InputVariable("t", "t", Triangular(0.0, 1.0))]
    R = np.eye(5)
    R[0, 2] = R[2, 0] = 0.6
    R[1, 2] = R[2, 1] = -0.4
    s = InputSet(v, R)
    W = special_ortho_group.rvs(4, random_state=3)
    U = np.random.default_rng(5).random((200_000, 5))
    X, X0 = s.from_uniform(U, W), s.from_uniform(U)
    assert np.all(X[:, 3] == 4.0)
    np.testing.assert_allclose(X.mean(axis=0), X0.mean(axis=0), atol=0.01 * max(s.stds))
    np.testing.assert_allclose(X.std(axis=0), s.stds, rtol=0.01, atol=1e-12)
    C, C0 = np.corrcoef(X[:, [0, 1, 2, 4]].T), np.corrcoef(X0[:, [0, 1, 2, 4]].T)
    np.testing.assert_allclose(C, C0, atol=0.01)
    np.testing.assert_allclose(C[[0, 1], [2, 2]], [0.6, -0.4], atol=0.01)
    with pytest.raises(StatisticsError, match="rotation must have shape"):
        s.from_uniform(U[:10], np.eye(5))


@pytest.mark.parametrize("seed", [1, 2])
def test_adaptive_sobol_with_rotation_on_a_nonlinear_output_against_the_exact_lognormal(seed):
    """Y = exp(Σ c_i X_i) of independent normal inputs is exactly lognormal
    (scipy.stats.lognorm with s = σ, scale = e^μ): the rotated Sobol' run stops on both
    intervals and its y, u(y) and both 95 % intervals agree with the exact values within the
    numerical tolerance (JCGM 101 §7.9), in far fewer trials than pseudo-random sampling."""
    g, s, mu, sig = _additive(6)
    sig = 0.35
    scale = sig / float(np.sqrt(np.sum((np.array([g(np.eye(6)[i])[()] for i in range(6)]) * s.stds) ** 2)))

    def f(X):
        return np.exp(scale * (g(X) - mu))

    ln = stats.lognorm(s=sig)
    mc = propagate_monte_carlo(f, s, samples="adaptive", sampling="sobol", seed=seed, ndigits=2)
    assert mc.converged and mc.rotated_scores
    delta = mc.tolerance[0]
    assert abs(mc.mean[0] - ln.mean()) <= delta and abs(mc.standard_uncertainty[0] - ln.std()) <= delta
    assert np.all(np.abs(mc.coverage_interval[0] - ln.ppf([0.025, 0.975])) <= delta)
    # shortest 95 % interval of the lognormal: the lower tail probability a minimising the width
    from scipy.optimize import minimize_scalar

    a = minimize_scalar(lambda a: ln.ppf(a + 0.95) - ln.ppf(a), bounds=(1e-9, 0.05 - 1e-9), method="bounded",
                        options={"xatol": 1e-10}).x
    # the shortest interval is an argmin along a flat valley of widths, its endpoints the noisiest
    # quantity; §7.9 asks 2s <= δ, a two-standard-deviation statement, hence the 1.5 δ here
    assert np.all(np.abs(mc.shortest_interval[0] - ln.ppf([a, a + 0.95])) <= 1.5 * delta)
    n_random = propagate_monte_carlo(f, s, samples="adaptive", sampling="random", seed=seed, ndigits=2).samples_used
    assert n_random >= 4 * mc.samples_used


def test_rotation_can_be_switched_off_and_matches_the_plain_design():
    f, s, _, _ = _additive(4)
    plain = propagate_monte_carlo(f, s, samples=4096, sampling="sobol", seed=3, rotate=False)
    rot = propagate_monte_carlo(f, s, samples=4096, sampling="sobol", seed=3)
    assert rot.rotated_scores and not plain.rotated_scores
    ref = f(s.from_uniform(UniformStream(4, "sobol", 3).draw(4096)))
    assert plain.mean[0] == pytest.approx(ref.mean(), rel=1e-13)
    assert not propagate_monte_carlo(f, s, samples=4096, sampling="random", seed=3).rotated_scores


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_adaptive_sobol_meets_its_tolerance_against_the_exact_normal(seed):
    """§7.9 stopping with independent scrambled batches: y, u(y) and the probabilistically
    symmetric interval agree with the exact normal output within the numerical tolerance."""
    f, s, mean, sd = _additive()
    mc = propagate_monte_carlo(f, s, samples="adaptive", sampling="sobol", seed=seed, ndigits=2,
                               check_shortest=False)
    assert mc.converged and mc.batch_size == 8192
    delta = mc.tolerance[0]
    exact = stats.norm.ppf([0.025, 0.975], mean, sd)
    assert abs(mc.mean[0] - mean) <= delta
    assert abs(mc.standard_uncertainty[0] - sd) <= delta
    assert np.all(np.abs(mc.coverage_interval[0] - exact) <= 1.5 * delta)


def test_sobol_batch_sizes():
    from uqthermo.uq.montecarlo import adaptive_batch_size

    assert [adaptive_batch_size(p) for p in (0.9, 0.95, 0.99, 0.999)] == [10_000, 10_000, 10_000, 100_000]
    assert [adaptive_batch_size(p, "sobol") for p in (0.9, 0.95, 0.99, 0.999)] == [8192, 8192, 16_384, 131_072]


def test_adaptive_sobol_needs_fewer_trials_than_random():
    """The issue's target (>= 4x fewer model evaluations to the same §7.9 tolerance) on the
    additive model, under the JCGM 101 rule; the plain-axes Sobol' design is kept as a lower
    bar (it measured about 4x here before the score rotation)."""
    f, s, _, _ = _additive()
    kw = dict(samples="adaptive", ndigits=2, check_shortest=False)
    n_sobol = [propagate_monte_carlo(f, s, sampling="sobol", seed=k, **kw).samples_used for k in (1, 2)]
    n_axes = [propagate_monte_carlo(f, s, sampling="sobol", seed=k, rotate=False, **kw).samples_used for k in (1, 2)]
    n_random = [propagate_monte_carlo(f, s, sampling="random", seed=k, **kw).samples_used for k in (1, 2)]
    assert np.mean(n_random) >= 4 * np.mean(n_sobol)
    assert np.mean(n_axes) >= 2 * np.mean(n_sobol)


def test_score_rotation_is_insensitive_to_rounding_of_the_model_values():
    """The methanation demo (18 uncertain inputs, 16 outputs whose gradients are nearly
    collinear): model values perturbed at the 1e-13 relative level, as another BLAS or libm
    would, move W only slightly (central differences of values ~10³ times the gradient and
    nearly collinear gradients amplify the 1e-13 to ~1e-7), never to another basis."""
    from uqthermo.case.model.builder import build_model
    from uqthermo.case.loader import load_case
    from uqthermo.uq.montecarlo import score_rotation

    from conftest import DEMOS

    model = build_model(load_case(DEMOS["methanation"]))
    W = score_rotation(model.f, model.inputs)
    rng = np.random.default_rng(0)
    for _ in range(10):
        W2 = score_rotation(lambda X: (Y := model.f(X)) * (1 + 1e-13 * rng.standard_normal(Y.shape)), model.inputs)
        assert np.abs(W2 - W).max() < 1e-5


def test_rotated_rows_do_not_depend_on_the_chunking():
    """from_uniform(U, W) (and the plain from_uniform(U)) row by row equals the whole block bit
    for bit (mixed, correlated inputs; one-row chunks included), so fixed-N runs and Dask
    blocks do not depend on where chunks end; a non-orthogonal matrix is refused."""
    from uqthermo.uq.montecarlo import score_rotation

    v = [InputVariable("a", "a", Normal(1.0, 0.5)), InputVariable("b", "b", Rectangular(2.0, 1.0)),
         InputVariable("c", "c", Normal(-3.0, 2.0)), InputVariable("t", "t", Triangular(0.0, 1.0))]
    R = np.eye(4)
    R[0, 2] = R[2, 0] = 0.5
    s = InputSet(v, R)
    W = score_rotation(lambda X: np.column_stack([X.sum(axis=1), X[:, 0] * X[:, 1]]), s)
    U = np.random.default_rng(2).random((300, 4))
    for rot in (W, None):
        whole = s.from_uniform(U, rot)
        for n in (1, 2, 7, 64):
            parts = np.concatenate([s.from_uniform(U[i:i + n], rot) for i in range(0, 300, n)])
            np.testing.assert_array_equal(parts, whole)
    with pytest.raises(StatisticsError, match="orthogonal"):
        s.from_uniform(U, 1.01 * W)
    f, s2, _, _ = _additive(5)
    a = propagate_monte_carlo(f, s2, samples=4097, sampling="sobol", seed=2, chunk_size=4096)
    b = propagate_monte_carlo(f, s2, samples=4097, sampling="sobol", seed=2, chunk_size=65536)
    np.testing.assert_array_equal(a.X_kept, b.X_kept)


@pytest.mark.parametrize("n", [17, 255, 1000, 40_001])
@pytest.mark.parametrize("p", [0.5, 0.9, 0.95, 0.99])
def test_order_statistics_equal_a_full_sort(n, p):
    """Partial ordering (partition + sorted tails) gives exactly the order statistics of a
    full sort: both §7.7 intervals, §7.5.2 quantiles anywhere (middle ranks included), counts
    at or below limits; with ties (rounded values) and for an interval at another p."""
    from uqthermo.uq.stats import OrderStatistics, quantile_sorted

    rng = np.random.default_rng(n)
    Y = np.column_stack([rng.standard_normal(n), np.round(rng.gamma(2.0, size=n), 1), rng.random(n)])
    ys = np.sort(Y, axis=0)
    order = OrderStatistics(Y.T.copy(), p)
    sym, short = order.intervals(p)
    sym_ref, short_ref = intervals_from_sorted(ys, p)
    np.testing.assert_array_equal(sym, sym_ref)
    np.testing.assert_array_equal(short, short_ref)
    ps = np.array([0.0, 1e-6, 0.01, 0.025, 0.3, 0.5, 0.77, 0.95, 0.975, 0.999, 1.0])
    np.testing.assert_array_equal(order.quantile(ps), quantile_sorted(ys, ps))
    np.testing.assert_array_equal(order.quantile(0.5), quantile_sorted(ys, 0.5))
    lim = np.array([0.1, 2.0, 0.5])
    np.testing.assert_array_equal(order.count_at_most(lim), (Y <= lim).sum(axis=0))
    other = 0.8 if p != 0.8 else 0.9
    for a, b in zip(order.intervals(other), intervals_from_sorted(ys, other)):
        np.testing.assert_array_equal(a, b)


@pytest.mark.parametrize("p", [0.501, 0.51, 0.6827])
def test_order_statistics_near_half_coverage(p):
    from uqthermo.uq.stats import OrderStatistics, quantile_sorted

    Y = np.random.default_rng(7).standard_normal((1000, 2))
    ys = np.sort(Y, axis=0)
    order = OrderStatistics(Y.T.copy(), p)
    for a, b in zip(order.intervals(p), intervals_from_sorted(ys, p)):
        np.testing.assert_array_equal(a, b)
    np.testing.assert_array_equal(order.quantile([0.25, 0.5, 0.75]), quantile_sorted(ys, [0.25, 0.5, 0.75]))


@pytest.mark.parametrize("shape", ["normal", "ties", "discrete", "adversarial", "shifted"])
def test_order_statistics_by_pilot_thresholds_equal_a_full_sort(shape):
    """Long rows find their tails by thresholds from a pilot; whatever the pilot sees
    (an indicator column, heavy ties, a pilot planted far from the rest), the order statistics
    equal those of a full sort exactly."""
    from uqthermo.uq.order_statistics import OrderStatistics, pilot_positions, quantile_sorted

    n = 8 * 2**16 + 7
    rng = np.random.default_rng(3)
    y = rng.standard_normal(n)
    if shape == "ties":
        y = np.round(y, 1)
    elif shape == "discrete":
        y = (rng.random(n) < 0.03).astype(float)
    elif shape == "adversarial":       # the pilot's values sit in one narrow spot of the distribution
        y[pilot_positions(n)] = 0.37
    elif shape == "shifted":           # the pilot's thresholds leave too few values in a tail
        y[pilot_positions(n)] -= 3.0
    Y = np.column_stack([y, -2.0 * y + 1.0])
    ys = np.sort(Y, axis=0)
    for p in (0.95, 0.9):
        order = OrderStatistics(Y.T.copy(), p)
        for a, b in zip(order.intervals(p), intervals_from_sorted(ys, p)):
            np.testing.assert_array_equal(a, b)
        ps = [0.0, 0.01, 0.03, 0.2, 0.5, 0.9, 0.975, 1.0]
        np.testing.assert_array_equal(order.quantile(ps), quantile_sorted(ys, ps))


def test_pilot_of_sobol_ordered_values_finds_the_tails():
    """Values in Sobol' sequence order (every 2^k-th point of a digital sequence lies in one
    2⁻ᵏ slice of its leading coordinate, Sobol' 1967) still give the pilot thresholds that
    capture the tails: the pilot is a random subset, not a stride (a stride made every such
    row fall back to a full partition)."""
    from scipy.stats import qmc

    from uqthermo.uq import order_statistics as stats

    n = 2**19
    u = qmc.Sobol(2, scramble=True, rng=np.random.default_rng(5)).random(n)
    y = special.ndtri(u[:, 0]) + 0.1 * special.ndtri(u[:, 1])
    a = n - stats.q_count(0.95, n)
    got = stats.select_row(y, a, a, [n // 2 - 1, n // 2])
    assert got is not None
    ys = np.sort(y)
    assert got[0].size >= a and got[1].size >= a       # every value beyond the thresholds
    np.testing.assert_array_equal(got[0], ys[:got[0].size])
    np.testing.assert_array_equal(got[1], ys[n - got[1].size:])
    np.testing.assert_array_equal(got[2], ys[[n // 2 - 1, n // 2]])
