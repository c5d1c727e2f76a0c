"""The result of a Monte Carlo run and the collection of model values it is computed from.

:class:`Collector` takes the model values chunk by chunk (or batch by batch) and keeps what
the summary needs; :func:`summarised_result` / :func:`collected_result` turn that into a
:class:`MonteCarloResult`: estimate, u(y), skewness, probabilistically symmetric and shortest
coverage intervals, quantiles and exceedance probabilities (JCGM 101:2008 §7.5–7.7). Shared
by the local engine (:mod:`uqthermo.uq.montecarlo`) and the Dask engine
(:mod:`uqthermo.uq.distributed`).

**Memory.** All model values are kept while N·M ≤ ``max_stored_values`` (default 2·10⁷)
and the quantities above are computed exactly from their order statistics
(:class:`~uqthermo.uq.stats.OrderStatistics`: the same values as a full sort). Beyond that the
stored values become the pilot of a fixed fine histogram per output
(:class:`~uqthermo.uq.stats.BinnedCDF`: equal-width over the central pilot range,
equal-probability in the far tails); later chunks only add counts. When a fixed N is known
to exceed the bound, the pilot is the first :data:`PILOT_ROWS` rows. A quantile from it is
accurate to within one bin width; ``quantile_resolution`` reports the widest bin holding an
interval endpoint. The central bins are made no wider than δ/20 for the pilot's spread
(δ is at least 0.005 u(y) for two significant digits) and no finer than that needs, up to
10⁵ bins (``histogram_bins``): fewer counters are counted faster. A warning is added if the
resolution ever exceeds δ/10.
Mean, u(y) and skewness always use all values (mergeable moments).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..errors import StatisticsError
from .stats import BinLayout, BinnedCDF, Moments, OrderStatistics, numerical_tolerance

__all__ = ["MonteCarloResult", "Collector", "summarised_result", "collected_result", "kept_rows",
           "MAX_STORED_VALUES", "HISTOGRAM_BINS", "KEEP_VALUES", "PILOT_ROWS"]

MAX_STORED_VALUES = 20_000_000
HISTOGRAM_BINS = 100_000
KEEP_VALUES = 4_000_000
#: pilot rows for the histogram when a fixed N is known to exceed the stored-values bound
PILOT_ROWS = 2**18


def kept_rows(keep: int, d: int, m: int) -> int:
    """Rows kept for ``X_kept``/``Y_kept``: ``keep``, reduced so that rows·(D + M) ≤ 4·10⁶ (at least 1000)."""
    return int(max(0, min(keep, max(1000, KEEP_VALUES // max(1, d + m)))))


@dataclass
class MonteCarloResult:
    """Monte Carlo summary for M outputs.

    Attributes
    ----------
    mean : (M,) estimate y (average of the model values)
    standard_uncertainty : (M,) u(y)
    coverage_interval : (M, 2) probabilistically symmetric 100p % interval
    shortest_interval : (M, 2) shortest 100p % interval
    median : (M,)
    skewness : (M,)
    coverage_probability : float
    samples_used : int (trials in the reported statistics)
    convergence : list (per output) of [(n, u(y) after n trials), ...]
    Y_kept : (K, M) the first K model values (K ≤ ``keep``), for sensitivity and figures
    X_kept : (K, D) the matching input rows
    adaptive : bool; converged : bool (adaptive only; True for fixed N)
    tolerance : (M,) δ of u(y) for ``ndigits`` (JCGM 101 §7.9.2)
    stability : dict name → (M,) 2s for "mean", "u", "low", "high" (and "shortest_low",
        "shortest_high") from the adaptive batches; empty for fixed N
    batch_size, batches : adaptive batch size and number of batches (0 for fixed N)
    seed, sampling : what produced the samples (record them)
    quantile_method : "exact" (all values kept) or "histogram"
    quantile_resolution : (M,) 0 for exact, else the widest histogram bin holding an interval endpoint
    warnings : list[str]
    rotated_scores : bool; True when Sobol' coordinates drove the rotated input scores of
        :func:`score_rotation` (a sampling design: the input distribution is the same)
    """

    mean: np.ndarray
    standard_uncertainty: np.ndarray
    coverage_interval: np.ndarray
    shortest_interval: np.ndarray
    median: np.ndarray
    skewness: np.ndarray
    coverage_probability: float
    samples_used: int
    convergence: list
    Y_kept: np.ndarray
    X_kept: np.ndarray
    adaptive: bool
    converged: bool
    tolerance: np.ndarray
    stability: dict
    batch_size: int
    batches: int
    seed: int
    sampling: str
    quantile_method: str
    quantile_resolution: np.ndarray
    ndigits: int = 2
    warnings: list = field(default_factory=list)
    minimum: np.ndarray | None = None
    maximum: np.ndarray | None = None
    rotated_scores: bool = False
    _order: OrderStatistics | None = field(default=None, repr=False)
    _binned: BinnedCDF | None = field(default=None, repr=False)

    @property
    def n_outputs(self) -> int:
        return int(self.mean.shape[0])

    @property
    def estimate(self) -> np.ndarray:
        """Alias of ``mean`` (JCGM 101 §7.6: the estimate y of Y)."""
        return self.mean

    def quantile(self, p) -> np.ndarray:
        """p-quantile of each output (one-sided bound): shape (M,) for scalar p, (len(p), M) otherwise.

        Exact: JCGM 101 §7.5.2 distribution function (plotting positions (r − ½)/N).
        Histogram mode: inverse of the binned CDF (see module docstring).
        """
        pa = np.asarray(p, dtype=float)
        if np.any((pa < 0) | (pa > 1)) or np.any(np.isnan(pa)):
            raise StatisticsError(f"probability must lie in [0, 1], got {p!r}")
        if self._order is not None:
            return self._order.quantile(pa)
        return self._binned.quantile(pa)

    def probability_above(self, limit) -> tuple[np.ndarray, np.ndarray]:
        """P(Y > limit) per output and its binomial standard error √(P(1 − P)/N).

        ``limit`` scalar or (M,). The standard error is the pseudo-random one (for
        Sobol' or Latin-hypercube sampling it is an upper bound in practice). With no
        exceedance among N trials, 3/N is a 95 % upper bound (rule of three, common practice).
        """
        lim = np.broadcast_to(np.asarray(limit, dtype=float), (self.n_outputs,))
        n = self.samples_used
        if self._order is not None:
            pr = 1.0 - self._order.count_at_most(lim) / n
        else:
            pr = 1.0 - self._binned.cdf(lim)
        pr = np.clip(pr, 0.0, 1.0)
        return pr, np.sqrt(pr * (1.0 - pr) / n)

    def tail_sums(self, low, high) -> tuple[np.ndarray, np.ndarray] | None:
        """(Σ_{y ≤ low} (y − ȳ), Σ_{y > high} (y − ȳ)) per output from the exact order statistics
        (``low``/``high`` (M,): interval endpoints); None in histogram mode."""
        if self._order is None:
            return None
        return self._order.tail_sums(low, high, self.mean)

    def histogram(self, output: int = 0, bins: int = 50, range_p: tuple[float, float] = (0.0, 1.0)):
        """(edges (bins+1,), counts (bins,)) of one output over its quantile range ``range_p``."""
        if self._order is not None:
            col = self._order.rows[output]
            lo, hi = self._order.quantile(np.asarray(range_p, dtype=float))[:, output]
            if not hi > lo:
                lo, hi = lo - 0.5, hi + 0.5
            counts, edges = np.histogram(col, bins=bins, range=(lo, hi))
            return edges, counts
        return self._binned.histogram(output, bins, range_p)

    def history(self, output: int = 0) -> tuple[np.ndarray, np.ndarray]:
        """Convergence history of one output as arrays (n, u)."""
        h = self.convergence[output]
        return np.array([a for a, _ in h], dtype=np.int64), np.array([b for _, b in h], dtype=float)


class Collector:
    """Accumulates model values: moments always; values (or a fixed histogram); a kept subsample.

    Stored values are kept transposed, one contiguous row per output, so that the final
    sort runs along contiguous memory. When the number of rows is known in advance and
    all values will be kept, they are written into one preallocated (M, N) array (no
    final concatenation, half the peak memory).
    """

    def __init__(self, m: int, d: int, keep: int, cap: int, bins: int, expect_rows: int | None = None,
                 ndigits: int | None = None):
        self.m = m
        self.ndigits = ndigits      # the histogram's bins need be no finer than this many digits of u ask
        self.moments = Moments(m)
        self.stored: list[np.ndarray] | None = []    # chunks of shape (M, n)
        self.n_stored = 0
        self.binned: BinnedCDF | None = None
        self.cap = cap
        self.store: np.ndarray | None = None
        if expect_rows is not None and expect_rows * m > cap:
            # the histogram is certain to be needed: a pilot of PILOT_ROWS rows places its edges
            self.cap = min(cap, PILOT_ROWS * m)
        elif expect_rows is not None:
            self.store = np.empty((m, expect_rows))
        self.bins = int(min(bins, max(2000, cap // max(1, 2 * m))))
        self.keep = keep
        self.X_kept: list[np.ndarray] = []
        self.Y_kept: list[np.ndarray] = []
        self.n_kept = 0

    def add(self, X: np.ndarray, Y: np.ndarray) -> None:
        self.moments.add(Y)
        if self.n_kept < self.keep:
            t = min(self.keep - self.n_kept, Y.shape[0])
            self.X_kept.append(X[:t].copy())
            self.Y_kept.append(Y[:t].copy())
            self.n_kept += t
        if self.binned is None:
            if self.store is not None and self.n_stored + Y.shape[0] <= self.store.shape[1]:
                self.store[:, self.n_stored:self.n_stored + Y.shape[0]] = Y.T
                self.n_stored += Y.shape[0]
            elif self.store is None and (self.n_stored + Y.shape[0]) * self.m <= self.cap:
                self.stored.append(Y.T.copy(order="C"))
                self.n_stored += Y.shape[0]
            else:
                # the stored values are the pilot: they place the edges (only their tails are
                # sorted) and are the first to be counted, block by block (no copy of them all)
                parts = [q.T for q in self._take_parts()] + [Y]
                layout = BinLayout.from_pilot(parts, self.bins, ndigits=self.ndigits, spread=self.moments.std)
                self.binned = BinnedCDF(layout=layout)
                for q in parts:
                    for a in range(0, q.shape[0], 65536):
                        self.binned.add(q[a:a + 65536])
        else:
            self.binned.add(Y, extremes=(self.moments.min, self.moments.max))

    def kept(self, d: int):
        if self.n_kept:
            return np.concatenate(self.X_kept, axis=0), np.concatenate(self.Y_kept, axis=0)
        return np.empty((0, d)), np.empty((0, self.m))

    def _take_parts(self) -> list[np.ndarray]:
        """The stored values as blocks (M, n_i), in no order; releases the store."""
        parts = [self.store[:, :self.n_stored]] if self.store is not None else self.stored
        self.store = self.stored = None
        return parts

    def _take_rows(self) -> np.ndarray:
        """All stored values as one (M, N) array, in no order; releases the store."""
        parts = self._take_parts()
        return parts[0] if len(parts) == 1 else np.concatenate(parts, axis=1)

    def order_statistics(self, p: float) -> OrderStatistics:
        """All stored values as :class:`OrderStatistics` for coverage probability p; releases the store."""
        return OrderStatistics(self._take_rows(), p)


def summarised_result(mom: Moments, order: OrderStatistics | None, binned: BinnedCDF | None, X_kept: np.ndarray,
                      Y_kept: np.ndarray, p: float, ndigits: int, warnings: list[str], conv_n: list[int],
                      conv_u: list[np.ndarray], **fields) -> MonteCarloResult:
    """The JCGM 101 §7.5–7.7 summary of a run as a :class:`MonteCarloResult`.

    ``mom``: moments of all values; ``order``: all values as :class:`OrderStatistics` for
    exact intervals, or None with the fixed histogram ``binned`` (a warning is added if its
    bins are not much finer than δ). ``fields``: adaptive, converged, stability, batch_size,
    batches, seed, sampling, rotated_scores. Shared by the local and the Dask engines.
    """
    mean, u = mom.mean.copy(), mom.std.copy()
    if order is not None:
        sym, short = order.intervals(p)
        median = order.quantile(0.5)
        qmethod, resolution, binned = "exact", np.zeros_like(mean), None
    else:
        sym, short = binned.intervals(p)
        median = binned.quantile(0.5)
        qmethod = "histogram"
        resolution = binned.resolution(np.concatenate([sym.T, short.T], axis=0))
    tol = np.atleast_1d(numerical_tolerance(u, ndigits))
    if qmethod == "histogram" and np.any(resolution > 0.1 * tol):
        warnings.append("quantile histogram bins are not much finer than the numerical tolerance; "
                        "raise max_stored_values or histogram_bins")
    convergence = [[(int(n), float(uu[j])) for n, uu in zip(conv_n, conv_u)] for j in range(mean.shape[0])]
    return MonteCarloResult(
        mean=mean, standard_uncertainty=u, coverage_interval=sym, shortest_interval=short, median=median,
        skewness=mom.skewness, coverage_probability=p, samples_used=int(mom.n), convergence=convergence,
        Y_kept=Y_kept, X_kept=X_kept, tolerance=tol, quantile_method=qmethod, quantile_resolution=resolution,
        ndigits=int(ndigits), warnings=warnings, minimum=mom.min.copy(), maximum=mom.max.copy(),
        _order=order, _binned=binned, **fields)


def collected_result(collector: Collector, d: int, p: float, ndigits: int, warnings: list[str],
                     conv_n: list[int], conv_u: list[np.ndarray], **fields) -> MonteCarloResult:
    """:func:`summarised_result` of everything a collector holds (exact or histogram)."""
    order = collector.order_statistics(p) if collector.binned is None else None
    Xk, Yk = collector.kept(d)
    return summarised_result(collector.moments, order, collector.binned, Xk, Yk, p, ndigits, warnings,
                             conv_n, conv_u, **fields)
