"""Dask backend: same answer as the local JCGM 101 engine, on a local cluster of 2 processes.

References: the local engine :func:`uqthermo.uq.montecarlo.propagate_monte_carlo` on the
same model and seed (Sobol' and random blocks are disjoint ranges of the same stream, so
the statistics agree to rounding); for Latin-hypercube blocks, agreement within Monte Carlo
error (standard error of a mean u/√N, of a standard deviation ≈ u/√(2N) for a near-normal
output — standard sampling theory); pairwise moment merging checked against numpy on the
concatenated sample (Chan, Golub & LeVeque 1979).
"""

from __future__ import annotations

import logging
from pathlib import Path

import numpy as np
import pytest

distributed = pytest.importorskip("distributed")

from uqthermo.case.model.builder import build_model  # noqa: E402
from uqthermo.case.loader import load_case  # noqa: E402
from uqthermo.errors import StatisticsError  # noqa: E402
from uqthermo.uq.distributed import block_plan, merge_moments, propagate_monte_carlo_dask  # noqa: E402
from uqthermo.uq.montecarlo import propagate_monte_carlo  # noqa: E402
from uqthermo.uq.stats import Moments  # noqa: E402

ROOT = Path(__file__).resolve().parents[1]
N = 80_000          # 4 blocks x 20000
BLOCK = 20_000


@pytest.fixture(scope="module")
def client():
    cluster = distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                       dashboard_address=None, silence_logs=logging.ERROR)
    c = distributed.Client(cluster)
    yield c
    c.close()
    cluster.close()


@pytest.fixture(scope="module")
def model():
    return build_model(load_case(ROOT / "inputs" / "methanation_reactor.toml"))


def test_model_closure_round_trips_through_cloudpickle(model):
    import cloudpickle

    f = cloudpickle.loads(cloudpickle.dumps(model.f))
    X = model.inputs.from_uniform(np.random.default_rng(0).random((50, len(model.inputs))))
    np.testing.assert_array_equal(f(X), model.f(X))


@pytest.mark.parametrize("sampling", ["sobol", "random"])
def test_same_stream_same_answer(client, model, sampling):
    loc = propagate_monte_carlo(model.f, model.inputs, samples=N, sampling=sampling, seed=11)
    seen = []
    dis = propagate_monte_carlo_dask(model.f, model.inputs, scheduler=client, samples=N, sampling=sampling,
                                     seed=11, block_rows=BLOCK, progress=lambda d, t: seen.append((d, t)))
    assert dis.samples_used == N and dis.quantile_method == "exact"
    np.testing.assert_allclose(dis.mean, loc.mean, rtol=1e-12, atol=1e-9)
    np.testing.assert_allclose(dis.standard_uncertainty, loc.standard_uncertainty, rtol=1e-9)
    np.testing.assert_allclose(dis.coverage_interval, loc.coverage_interval, rtol=1e-12, atol=1e-9)
    np.testing.assert_allclose(dis.shortest_interval, loc.shortest_interval, rtol=1e-12, atol=1e-9)
    np.testing.assert_allclose(dis.skewness, loc.skewness, atol=1e-8)
    if sampling == "sobol":     # Φ⁻¹ by the stratum table in whole 2^16 blocks, ndtri in Dask's 20 000-row ones
        np.testing.assert_allclose(dis.X_kept, loc.X_kept, rtol=4e-15, atol=0)
    else:
        np.testing.assert_array_equal(dis.X_kept, loc.X_kept)
    assert seen[-1] == (N, N) and len(seen) == 4
    assert [n for n, _ in dis.convergence[0]] == [20_000, 40_000, 60_000, 80_000]


def test_latin_hypercube_blocks_within_monte_carlo_error(client, model):
    loc = propagate_monte_carlo(model.f, model.inputs, samples=N, sampling="latin-hypercube", seed=11)
    dis = propagate_monte_carlo_dask(model.f, model.inputs, scheduler=client, samples=N,
                                     sampling="latin-hypercube", seed=11, block_rows=BLOCK)
    u = loc.standard_uncertainty
    assert np.all(np.abs(dis.mean - loc.mean) < 5 * u / np.sqrt(N))
    assert np.all(np.abs(dis.standard_uncertainty / u - 1) < 5 / np.sqrt(2 * N))
    assert np.all(np.abs(dis.coverage_interval - loc.coverage_interval) < 0.05 * u[:, None])


def test_histogram_mode_merges_counts(client, model):
    cap = 16 * 20_000   # forces the pilot + fixed-bin histogram path (N·M > cap)
    loc = propagate_monte_carlo(model.f, model.inputs, samples=N, seed=11)     # exact
    dis = propagate_monte_carlo_dask(model.f, model.inputs, scheduler=client, samples=N, seed=11,
                                     block_rows=BLOCK, max_stored_values=cap)
    assert dis.quantile_method == "histogram"
    u = loc.standard_uncertainty
    np.testing.assert_allclose(dis.mean, loc.mean, rtol=1e-12, atol=1e-9)
    assert np.all(np.abs(dis.coverage_interval - loc.coverage_interval) < 0.005 * u[:, None])
    assert np.all(np.abs(dis.quantile(0.99) - loc.quantile(0.99)) < 0.01 * u)


def test_adaptive_stops_at_the_same_batch(client, model):
    kw = dict(samples="adaptive", seed=3, batch_size=5000, ndigits=1)
    loc = propagate_monte_carlo(model.f, model.inputs, **kw)
    dis = propagate_monte_carlo_dask(model.f, model.inputs, scheduler=client, **kw)
    assert dis.adaptive and dis.converged == loc.converged
    assert dis.batches == loc.batches and dis.samples_used == loc.samples_used
    np.testing.assert_allclose(dis.mean, loc.mean, rtol=1e-12, atol=1e-9)
    np.testing.assert_allclose(dis.coverage_interval, loc.coverage_interval, rtol=1e-12, atol=1e-9)
    np.testing.assert_array_equal(dis.X_kept, loc.X_kept)


def test_run_case_on_a_scheduler_address(client):
    from uqthermo.pipeline.job import run_case

    res = run_case(ROOT / "inputs" / "methanation_reactor.toml", samples=20_000, method="monte-carlo",
                   engine="dask", scheduler=client.scheduler.address, what_if=False)
    assert res.monte_carlo.samples_used == 20_000
    assert res.results["outputs"][0]["points"][0]["monte_carlo"]["samples"] == 20_000


def test_merge_moments_equals_one_pass():
    rng = np.random.default_rng(1)
    a, b = rng.gamma(2.0, size=(700, 3)), rng.gamma(2.0, size=(300, 3)) + 1.0
    ma, mb = Moments(3), Moments(3)
    ma.add(a)
    mb.add(b)
    m = merge_moments(ma, mb)
    y = np.concatenate([a, b])
    np.testing.assert_allclose(m.mean, y.mean(0), rtol=1e-13)
    np.testing.assert_allclose(m.std, y.std(0, ddof=1), rtol=1e-12)
    dev = y - y.mean(0)
    np.testing.assert_allclose(m.m3, (dev ** 3).sum(0), rtol=1e-10)
    assert merge_moments(Moments(3), ma).n == 700


def test_block_plan_covers_the_run():
    plan = block_plan(1_000_003, 2)
    assert plan[0][0] == 0 and sum(r for _, r in plan) == 1_000_003
    assert all(s2 == s1 + r1 for (s1, r1), (s2, _) in zip(plan, plan[1:]))
    with pytest.raises(StatisticsError):
        block_plan(10, 2, 0)


def test_bad_arguments_raise_before_starting_a_cluster(model):
    with pytest.raises(StatisticsError):
        propagate_monte_carlo_dask(model.f, model.inputs, samples=1)
    with pytest.raises(StatisticsError):
        propagate_monte_carlo_dask(model.f, model.inputs, samples=100, coverage=1.5)


def test_affine_sobol_stream_of_the_span_same_answer(client):
    """An affine model of rank 2 in 5 normal inputs under Sobol': the stream has 2 coordinates
    (the span of the outputs' gradients) and the kept rows take the other 3 from the companion
    stream by global row, so Dask blocks give the local engine's answer, kept rows included."""
    from uqthermo.uq import InputSet, InputVariable, Normal

    rng = np.random.default_rng(4)
    C = rng.normal(size=(5, 2)) @ rng.normal(size=(2, 3))          # (5 inputs, 3 outputs), rank 2
    s = InputSet([InputVariable(f"x{i}", f"x{i}", Normal(float(i), 0.5 + 0.1 * i)) for i in range(5)])

    def f(X):
        return X @ C

    from uqthermo.uq.montecarlo import trial_design

    assert trial_design(f, s, "sobol", 5, True, True, None).stream_dimension == 2
    kw = dict(samples=N, sampling="sobol", seed=5, affine=True)
    loc = propagate_monte_carlo(f, s, **kw)
    dis = propagate_monte_carlo_dask(f, s, scheduler=client, block_rows=BLOCK, **kw)
    np.testing.assert_allclose(dis.mean, loc.mean, rtol=1e-12, atol=1e-12)
    np.testing.assert_allclose(dis.coverage_interval, loc.coverage_interval, rtol=1e-12, atol=1e-12)
    np.testing.assert_allclose(dis.X_kept, loc.X_kept, rtol=4e-15, atol=1e-15)
    np.testing.assert_allclose(dis.Y_kept, f(dis.X_kept), rtol=1e-12, atol=1e-12)
    assert np.linalg.matrix_rank(np.cov(loc.X_kept.T)) == 5          # every input varies in the kept rows
