"""JCGM 101 Monte Carlo on a Dask cluster, with mergeable statistics.

:func:`propagate_monte_carlo_dask` takes the same arguments as
:func:`~uqthermo.uq.montecarlo.propagate_monte_carlo` (plus ``scheduler``) and returns the
same :class:`~uqthermo.uq.montecarlo_result.MonteCarloResult`.

Streams
-------
The N trials are split into consecutive *blocks* of rows ``[start, start + n)``. Each
block draws its rows from the run's one stream with
:class:`~uqthermo.uq.sampling.UniformStream` ``(d, method, seed, skip=start)``:

* Sobol': the block is the index range ``start … start + n − 1`` of the one scrambled
  sequence (``fast_forward``), so the blocks are disjoint and together are exactly the
  points of the local run;
* random: the block jumps the PCG64 stream by ``start·d`` numbers (``PCG64.advance``,
  O'Neill 2014), again disjoint and together exactly the local run's numbers. We prefer
  this to ``SeedSequence.spawn`` (equally independent) because the answer then does not
  depend on the number of blocks, and it is bit-for-bit reproducible against the local
  engine;
* Latin hypercube: each block is its own stratified design (seeded from ``(seed, start)``),
  as documented in :mod:`uqthermo.uq.sampling`; results agree with the local run within
  Monte Carlo error.

Merged statistics
-----------------
Each block returns count, mean, M2 = Σ(y − ȳ)², M3, min and max per output; blocks are
merged in index order with the pairwise formulas of Chan, Golub & LeVeque (1979) and
Pébay (2008, SAND2008-6212) — the same as :class:`~uqthermo.uq.stats.Moments`, so mean,
u(y) and skewness do not depend on the blocking beyond rounding. Quantiles and coverage
intervals (JCGM 101 §7.7):

* when N·M ≤ ``max_stored_values`` the blocks return their values and the intervals are
  computed exactly from all sorted values (as the local engine does);
* otherwise a *pilot* block of ``max_stored_values / M`` rows runs first, its values fix
  the bin edges of one fine histogram per output (:class:`~uqthermo.uq.stats.BinnedCDF`),
  and every further block only returns bin counts on those edges, which add.

The convergence history records u(y) after each block (in index order).

Adaptive mode (JCGM 101 §7.9) runs the batches of size max(⌈100/(1 − p)⌉, 10⁴) several at
a time in parallel (one round = four per worker); the stopping rule is then
applied batch by batch in order, so the batch at which it stops — and the result — are the
same as with the local engine; batches computed beyond it are discarded.

Cluster
-------
``scheduler=None`` starts a ``LocalCluster`` (2 worker processes, 1 thread each) for the
run and closes it afterwards; a scheduler address (``"tcp://host:8786"``) or an existing
``distributed.Client`` uses that cluster. The model and the input set are sent to the
workers once (``Client.scatter``); distributed serialises them with cloudpickle, which
handles the case builder's closures. Workers run with one BLAS thread (distributed's
default ``OMP_NUM_THREADS=1``/``OPENBLAS_NUM_THREADS=1``).
"""

from __future__ import annotations

import logging
import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from ..errors import StatisticsError
from .inputs import InputSet
from .montecarlo import (BatchLedger, batch_origin, batch_summary, check_run_arguments,
                         evaluate_batch, trial_design)
from .montecarlo_result import (HISTOGRAM_BINS, KEEP_VALUES, MAX_STORED_VALUES, Collector, MonteCarloResult,
                                collected_result, kept_rows, summarised_result)
from .sampling import UniformStream
from .stats import BinLayout, BinnedCDF, Moments, OrderStatistics
from .trials import TrialDesign

__all__ = ["propagate_monte_carlo_dask", "merge_moments", "block_plan", "check_scheduler"]

#: seconds a scheduler address has to send the Dask greeting (see :func:`check_scheduler`)
PROBE_SECONDS = 5.0


def check_scheduler(address: str, timeout: float | None = None) -> None:
    """Make sure a ``tcp://host:port`` (or ``host:port``) address is a Dask scheduler, before any work.

    A Dask scheduler greets every new TCP connection at once with its handshake: an 8-byte
    little-endian message length, the frame count and a msgpack map holding keys such as
    ``compression`` and ``pickle-protocol`` (the framing of ``distributed.comm.tcp``). A
    service that says nothing (a web server waiting for a request) or something else (an SSH
    banner, whose first bytes ``distributed`` would read as a huge length and try to
    allocate) is reported as "not a Dask scheduler". Other schemes (``tls://``, ``inproc://``)
    are left to ``distributed``.

    Raises
    ------
    StatisticsError
        The address cannot be reached or is not a Dask scheduler.
    """
    import socket

    timeout = PROBE_SECONDS if timeout is None else timeout
    text = str(address)
    rest = text[len("tcp://"):] if text.startswith("tcp://") else text
    if "://" in rest:
        return
    host, _, port = rest.rpartition(":")
    host = host.strip("[]")
    try:
        port_n = int(port)
    except ValueError:
        raise StatisticsError(f"scheduler address {text!r} is not of the form tcp://HOST:PORT") from None
    try:
        conn = socket.create_connection((host or "127.0.0.1", port_n), timeout=timeout)
    except OSError as exc:
        raise StatisticsError(f"cannot reach the Dask scheduler at {text!r} ({exc.strerror or exc})") from None
    data = b""
    try:
        conn.settimeout(timeout)
        while len(data) < 64:
            chunk = conn.recv(64 - len(data))
            if not chunk:
                break
            data += chunk
    except OSError:
        pass
    finally:
        conn.close()
    if not data:
        raise StatisticsError(f"the service at {text!r} is not a Dask scheduler: it sent no Dask greeting within "
                              f"{timeout:g} s (check the address and port of the scheduler)")
    length = int.from_bytes(data[:8], "little") if len(data) >= 8 else -1
    if not (0 < length < 1 << 20) or not any(k in data for k in (b"compression", b"pickle-protocol", b"python")):
        raise StatisticsError(f"the service at {text!r} is not a Dask scheduler: it answered {data[:24]!r}… "
                              "(check the address and port of the scheduler)")

#: largest block (rows) of a fixed-N run; more, smaller blocks balance the workers
MAX_BLOCK_ROWS = 2**22
MIN_BLOCK_ROWS = 2**14


# ----------------------------------------------------------------------------- merging

def merge_moments(a: Moments, b: Moments) -> Moments:
    """Merge two :class:`Moments` (a first, then b) into a new one.

    Pairwise update (Chan, Golub & LeVeque 1979; Pébay 2008, eqs. 1.1–1.3), with
    δ = ȳ_B − ȳ_A and n = n_A + n_B::

        ȳ  = ȳ_A + δ n_B/n
        M2 = M2_A + M2_B + δ² n_A n_B/n
        M3 = M3_A + M3_B + δ³ n_A n_B (n_A − n_B)/n² + 3δ (n_A M2_B − n_B M2_A)/n
    """
    out = Moments(a.mean.shape[0])
    if b.n == 0:
        src = a
    elif a.n == 0:
        src = b
    else:
        na, nb = a.n, b.n
        n = na + nb
        d = b.mean - a.mean
        out.n = n
        out.mean = a.mean + d * nb / n
        out.m2 = a.m2 + b.m2 + d**2 * na * nb / n
        out.m3 = a.m3 + b.m3 + d**3 * na * nb * (na - nb) / n**2 + 3.0 * d * (na * b.m2 - nb * a.m2) / n
        out.min = np.minimum(a.min, b.min)
        out.max = np.maximum(a.max, b.max)
        return out
    out.n, out.mean, out.m2, out.m3 = src.n, src.mean.copy(), src.m2.copy(), src.m3.copy()
    out.min, out.max = src.min.copy(), src.max.copy()
    return out


def block_plan(n_total: int, n_workers: int, block_rows: int | None = None) -> list[tuple[int, int]]:
    """Consecutive blocks ``(start, rows)`` covering ``n_total`` trials.

    Default size: about four blocks per worker, between 2¹⁴ and 2²² rows, rounded up to a
    power of two (Sobol' blocks then start at multiples of a power of two).
    """
    if block_rows is None:
        target = max(MIN_BLOCK_ROWS, math.ceil(n_total / max(1, 4 * n_workers)))
        block_rows = min(MAX_BLOCK_ROWS, 1 << (target - 1).bit_length())
    block_rows = int(block_rows)
    if block_rows < 1:
        raise StatisticsError(f"block size must be a positive integer, got {block_rows!r}")
    return [(s, min(block_rows, n_total - s)) for s in range(0, n_total, block_rows)]


# ----------------------------------------------------------------------------- worker side

@dataclass
class _BlockResult:
    start: int
    moments: Moments
    values: np.ndarray | None        # all Y of the block (exact mode / pilot)
    counts: np.ndarray | None        # histogram counts (M, bins + 2) on the pilot's edges
    X_kept: np.ndarray | None
    Y_kept: np.ndarray | None
    summary: np.ndarray | None = None   # adaptive: (6, M) batch summary (JCGM 101 §7.9.4)


def _run_block(design: TrialDesign, origin: tuple[int, int], start: int, rows: int, chunk_size: int,
               keep: int, want_values: bool, layout: BinLayout | None,
               coverage: float | None = None) -> _BlockResult:
    """Evaluate ``rows`` trials of the run (runs on a worker): the stream position ``origin``
    = (seed, skip) (see ``montecarlo.batch_origin``), global rows ``[start, start + rows)``
    (for the kept rows), rows below ``keep`` kept."""
    moments = Moments(design.n_outputs)
    values: list[np.ndarray] = []
    counts = None
    Xk: list[np.ndarray] = []
    Yk: list[np.ndarray] = []
    done = 0
    stream = design.stream(*origin)
    for chunk in (stream.chunks(rows, chunk_size) if coverage is None else [stream.draw(rows)]):
        if coverage is None:
            X, Y = design.evaluate(chunk, start + done, keep)
        else:   # an adaptive batch: one chunk, evaluated in pieces
            X, Y = evaluate_batch(design, chunk, start, keep, chunk_size)
        moments.add(Y)
        if X.shape[0]:
            Xk.append(X)
            Yk.append(Y[:X.shape[0]].copy())
        if want_values:
            values.append(Y)
        if layout is not None:
            if counts is None:
                counts = BinnedCDF(layout=layout)
            counts.add(Y)
        done += Y.shape[0]
    Yall = np.concatenate(values, axis=0) if want_values else None
    summary = batch_summary(Yall, coverage) if coverage is not None else None
    return _BlockResult(start=start, moments=moments, values=Yall, counts=None if counts is None else counts.counts,
                        X_kept=np.concatenate(Xk, axis=0) if Xk else None,
                        Y_kept=np.concatenate(Yk, axis=0) if Yk else None, summary=summary)


# ----------------------------------------------------------------------------- driver side

class _Cluster:
    """A Client for ``scheduler`` (None: a LocalCluster for the duration of the run)."""

    def __init__(self, scheduler, n_workers: int):
        from distributed import Client, LocalCluster

        self._own: list = []
        if scheduler is None:
            cluster = LocalCluster(n_workers=n_workers, threads_per_worker=1, processes=True,
                                   dashboard_address=None, silence_logs=logging.ERROR)
            self.client = Client(cluster)
            self._own = [self.client, cluster]
        elif isinstance(scheduler, Client):
            self.client = scheduler
        else:
            check_scheduler(scheduler)
            try:
                self.client = Client(scheduler, timeout="10s")
            except (OSError, TimeoutError, ValueError) as exc:
                raise StatisticsError(f"cannot reach the Dask scheduler at {scheduler!r} ({exc})") from None
            except MemoryError:
                raise StatisticsError(f"the service at {scheduler!r} is not a Dask scheduler (its answer could not be "
                                      "read as Dask messages)") from None
            self._own = [self.client]

    @property
    def n_workers(self) -> int:
        return max(1, len(self.client.scheduler_info().get("workers", {})))

    def close(self) -> None:
        for obj in self._own:
            try:
                obj.close()
            except Exception:  # closing a cluster must never hide the run's own error
                pass


def propagate_monte_carlo_dask(
    f: Callable[[np.ndarray], np.ndarray],
    inputs: InputSet,
    scheduler=None,
    samples: int | str = 200_000,
    sampling: str = "sobol",
    seed: int | None = None,
    coverage: float = 0.95,
    chunk_size: int | None = None,
    ndigits: int = 2,
    progress: Callable[[int, int | None], None] | None = None,
    *,
    keep: int = 65_536,
    max_samples: int = 10_000_000,
    batch_size: int | None = None,
    check_shortest: bool = True,
    max_stored_values: int = MAX_STORED_VALUES,
    histogram_bins: int = HISTOGRAM_BINS,
    rotate: bool = True,
    affine: bool = False,
    depends_on=None,
    block_rows: int | None = None,
    n_workers: int = 2,
    stop_columns: int | None = None,
) -> MonteCarloResult:
    """Propagate distributions by Monte Carlo (JCGM 101 §7) on a Dask cluster.

    Parameters are those of :func:`~uqthermo.uq.montecarlo.propagate_monte_carlo`, plus:

    scheduler : None, str or distributed.Client
        None: a local cluster of ``n_workers`` processes for this run; a string: the
        scheduler address; a Client: use it (left open).
    block_rows : int, optional
        Rows per task (fixed N; default see :func:`block_plan`).
    n_workers : int
        Workers of the local cluster started when ``scheduler`` is None.

    Returns
    -------
    MonteCarloResult
        Same fields as the local engine (see module docstring for how they are merged).
    """
    p, method, seed, d, chunk_size, adaptive, samples = check_run_arguments(
        inputs, samples, sampling, seed, coverage, ndigits, chunk_size)
    UniformStream(d, method, seed)   # validates the seed and the dimension before starting a cluster
    # computed once, here (score rotation, affine map, active inputs); sent to the workers once
    design = trial_design(f, inputs, method, int(seed), rotate, affine, depends_on)

    cluster = _Cluster(scheduler, n_workers)
    try:
        client = cluster.client
        remote = client.scatter(design, broadcast=True, hash=False)
        kp = kept_rows(keep, d, design.n_outputs)
        if adaptive:
            return _adaptive(client, cluster.n_workers, remote, design, method, int(seed), p,
                             chunk_size, int(ndigits), progress, kp, int(max_samples), batch_size,
                             check_shortest, int(max_stored_values), int(histogram_bins),
                             stop_columns=stop_columns)
        return _fixed(client, cluster.n_workers, remote, design, d, method, int(seed), p, int(samples),
                      chunk_size, int(ndigits), progress, kp, int(max_stored_values), int(histogram_bins),
                      block_rows)
    finally:
        cluster.close()


def _fixed(client, n_workers, remote, design, d, method, seed, p, n_total, chunk_size, ndigits, progress,
           keep, cap, bins, block_rows) -> MonteCarloResult:
    from distributed import as_completed

    warnings: list[str] = []
    if n_total < max(math.ceil(100 / (1 - p)), 10_000):
        warnings.append(f"only {n_total} Monte Carlo trials: coverage-interval endpoints may be unreliable "
                        f"(JCGM 101 §7.2.1 asks for many more than 1/(1 - p) = {1 / (1 - p):.0f})")
    # the first block tells the number of outputs M and, in histogram mode, starts the pilot
    plan = block_plan(n_total, n_workers, block_rows)
    first_rows = plan[0][1]

    def submit(start, rows, values, layout=None):
        return client.submit(_run_block, remote, (seed, start), start, rows, chunk_size, keep, values, layout,
                             pure=False)

    head = submit(0, first_rows, True).result()
    m = design.n_outputs
    exact = n_total * m <= cap
    layout = None
    blocks: dict[int, _BlockResult] = {0: head}
    done = first_rows
    if progress is not None:
        progress(done, n_total)
    if not exact:
        # pilot: the first max(cap/M, first block) rows return their values and fix the layout
        pilot_rows = max(first_rows, min(n_total, cap // max(1, m)))
        for fut in [submit(first_rows + s, r, True)
                    for s, r in block_plan(pilot_rows - first_rows, n_workers, block_rows)]:
            br = fut.result()
            blocks[br.start] = br
        pilot = np.concatenate([blocks[k].values for k in sorted(blocks)], axis=0)
        layout = BinLayout.from_pilot(pilot, int(min(bins, max(2000, cap // max(1, 2 * m)))), ndigits=ndigits)
        done = pilot_rows
    offset = done
    layout_remote = client.scatter(layout, broadcast=True, hash=False) if layout is not None else None  # sent once
    futures = [submit(offset + s, r, exact, layout_remote)
               for s, r in block_plan(n_total - offset, n_workers, block_rows)]
    for fut in as_completed(futures):
        br = fut.result()
        blocks[br.start] = br
        done += br.moments.n
        if progress is not None:
            progress(done, n_total)
    return _finish(blocks, d, m, p, ndigits, exact, layout, warnings, method, seed, keep, design.rotation is not None)


def _finish(blocks: dict, d, m, p, ndigits, exact, layout, warnings, method, seed, keep,
            rotated: bool) -> MonteCarloResult:
    """The fixed-N result from the blocks, merged in index order."""
    order = sorted(blocks)
    mom = Moments(m)
    conv_n: list[int] = []
    conv_u: list[np.ndarray] = []
    counts = None
    for k in order:
        br = blocks[k]
        mom = merge_moments(mom, br.moments)
        conv_n.append(int(mom.n))
        conv_u.append(mom.std.copy())
        if not exact:
            c = br.counts
            if c is None:   # pilot blocks returned values: count them on the layout
                c = layout.count(br.values)
            counts = c if counts is None else counts + c
    if exact:   # one contiguous row per output, as the local engine stores them
        stats_order = OrderStatistics(np.concatenate([blocks[k].values.T for k in order], axis=1), p)
        binned = None
    else:
        stats_order = None
        binned = BinnedCDF.from_counts(layout, counts, mom.n, mom.min, mom.max)  # no pilot re-counting
    # kept rows: the first K rows of the run, K as in the local engine
    kp = int(max(0, min(keep, max(1000, KEEP_VALUES // max(1, d + m)))))
    Xk = [blocks[k].X_kept for k in order if blocks[k].X_kept is not None]
    Yk = [blocks[k].Y_kept for k in order if blocks[k].Y_kept is not None]
    Xk = np.concatenate(Xk, axis=0)[:kp] if Xk else np.empty((0, d))
    Yk = np.concatenate(Yk, axis=0)[:kp] if Yk else np.empty((0, m))
    return summarised_result(mom, stats_order, binned, Xk, Yk, p, ndigits, warnings, conv_n, conv_u, adaptive=False,
                             converged=True, stability={}, batch_size=0, batches=0, seed=int(seed),
                             sampling=method, rotated_scores=rotated)


def _adaptive(client, n_workers, remote, design, method, seed, p, chunk_size, ndigits, progress,
              keep, max_samples, batch_size, check_shortest, cap, bins, *,
              stop_columns: int | None = None) -> MonteCarloResult:
    """JCGM 101 §7.9 with batches computed in parallel rounds, stopping rule applied in order."""
    d = len(design.inputs)
    ledger = BatchLedger(p, method, batch_size, max_samples, ndigits, check_shortest, stop_columns)
    M_b = ledger.size
    # batches as in the local engine (montecarlo.batch_sampler): one random stream, or
    # independently scrambled Sobol' nets, with the run's score rotation
    per_round = 4 * n_workers
    collector: Collector | None = None
    while ledger.room():
        first = ledger.batches
        n_round = min(per_round, (max_samples - ledger.done) // M_b)
        futs = [client.submit(_run_block, remote, batch_origin(method, seed, first + i, M_b), (first + i) * M_b,
                              M_b, min(chunk_size, M_b), keep, True, None, p, pure=False)
                for i in range(n_round)]
        results = [fu.result() for fu in futs]          # in batch order
        for br in results:
            if collector is None:
                collector = Collector(design.n_outputs, d, keep, cap, bins, ndigits=ndigits)
            # feed the collector the batch (kept rows come from the first batch's X)
            Xb = br.X_kept if br.X_kept is not None else np.empty((0, d))
            _collector_add(collector, Xb, br.values)
            if ledger.record(br.summary, collector.moments.std, progress):
                break
    return collected_result(collector, d, p, ndigits, ledger.warnings(), ledger.conv_n, ledger.conv_u, adaptive=True,
                            converged=ledger.converged, stability=ledger.stability, batch_size=M_b,
                            batches=ledger.batches, seed=int(seed), sampling=method,
                            rotated_scores=design.rotation is not None)


def _collector_add(collector: Collector, X_kept: np.ndarray, Y: np.ndarray) -> None:
    """Add a batch's values to the collector.

    Workers return input rows only as far as they may be kept; the collector copies at
    most that many (``X[:t]`` with t ≤ rows kept), so the rest is padding that is never read.
    """
    n = Y.shape[0]
    if X_kept.shape[0] < n:
        X = np.full((n, X_kept.shape[1]), np.nan)
        X[:X_kept.shape[0]] = X_kept
    else:
        X = X_kept
    collector.add(X, Y)
