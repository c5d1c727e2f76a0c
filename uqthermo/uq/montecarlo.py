"""Propagation of distributions by the Monte Carlo method (JCGM 101:2008).

Trials come from the run's :class:`~uqthermo.uq.trials.TrialDesign` (normal scores drawn
directly for pseudo-random sampling, uniforms through Φ⁻¹ for Sobol' and Latin hypercube; only
the inputs the model depends on; an affine model evaluated as one product of the scores with
its map) and are evaluated chunk by chunk so memory stays bounded for any number of trials.

Summary of the output distribution (JCGM 101 §7.5–7.7), per output:

* estimate y = mean of the model values, standard uncertainty u(y) = their standard
  deviation (divisor N − 1) (§7.6), sample skewness;
* probabilistically symmetric and shortest 100p % coverage intervals (§7.7);
* ``quantile(p)`` from the §7.5.2 distribution function, for one-sided design bounds;
* exceedance probabilities P(Y > limit).

**Fixed N or adaptive (§7.9).** With ``samples="adaptive"`` the §7.9.4 procedure runs
batches of M = max(J, 10⁴) trials, J the smallest integer ≥ 100/(1 − p); after each batch
h ≥ 2 it computes the standard deviations of the batch means, batch standard
deviations and batch interval endpoints, s_z = [Σ_r (z⁽ʳ⁾ − z̄)² / (h(h − 1))]^{1/2},
and stops when none of k·s_y, k·s_u(y), k·s_ylow, k·s_yhigh exceeds the numerical tolerance
δ of u(y) from all h·M values (§7.9.2, ``ndigits`` significant digits), for every output.
JCGM 101 takes k = 2; here k = max(2, t_0.975(h − 1)) (:func:`stability_factor`), so that
a spread estimated from a few batches cannot stop the run by chance. Endpoints of both the
symmetric and (``check_shortest=True``) the shortest interval are checked. Pseudo-random
batches continue one stream (a Latin-hypercube batch is its own design). A Sobol' batch is
its own independently scrambled net of a power-of-two size (:func:`adaptive_batch_size`,
:func:`batch_sampler`): the batches are then independent replicates, as §7.9 assumes, and
each batch's estimates carry the smaller randomised-QMC error. Batches may be evaluated
several per model call; the stopping batch is the same as when evaluating one batch at a
time, so results never depend on the chunk size.

**Sobol' design.** With Sobol' sampling (fixed N or adaptive) the inputs' independent normal
scores are rotated onto the model's linear directions (:func:`score_rotation`, on by
default, ``rotate=False`` switches it off): the leading Sobol' coordinates, the best
stratified, then carry the linear part of the outputs. The rotation is orthogonal, so
every trial is still a draw from the joint input distribution (JCGM 101 §7).

**Memory.** Bounded for any N: the model values are collected by
:class:`~uqthermo.uq.montecarlo_result.Collector` (exact order statistics while they fit,
else a fixed fine histogram; see :mod:`uqthermo.uq.montecarlo_result`).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence

import numpy as np

from ..errors import StatisticsError
from .inputs import InputSet
from .montecarlo_result import (HISTOGRAM_BINS, MAX_STORED_VALUES, Collector, MonteCarloResult, collected_result,
                                kept_rows)
from .sampling import UniformStream, sampling_method
from .stats import OrderStatistics, numerical_tolerance
from .trials import TrialDesign

__all__ = ["BatchLedger", "cap_warning", "propagate_monte_carlo", "adaptive_batch_size", "batch_summary", "batch_test", "check_run_arguments"]

#: relative size below which a gradient direction (or the new part of a score axis) is
#: left out of :func:`score_rotation`'s leading columns
ROTATION_CUTOFF = 1e-3
#: with an affine model's exact score gradients, every gradient direction whose singular value
#: exceeds this fraction of the first leads in :func:`score_rotation` (below it: rounding)
SPAN_FLOOR = 1e-10


def adaptive_batch_size(coverage: float, sampling: str = "random") -> int:
    """Batch size M = max(J, 10⁴), J = ⌈100/(1 − p)⌉ (JCGM 101 §7.9.4 b).

    For Sobol' sampling the power of two closest to that M among those ≥ J (8192 for
    p = 0.95, 16384 for p = 0.99): a scrambled Sobol' net is balanced only in sets of 2^m
    points, and each batch must still hold at least J points (50 beyond each endpoint).
    """
    j = math.ceil(100.0 / (1.0 - coverage) - 1e-9)
    m = max(j, 10_000)
    if sampling_method(sampling) == "sobol":
        up = 1 << (m - 1).bit_length()
        down = up >> 1
        m = down if down >= j and (m - down) <= (up - m) else up
    return m


def stability_factor(h: int) -> float:
    """Factor k of the §7.9 test k·s_z ≤ δ after h batches: max(2, t_0.975(h − 1)).

    JCGM 101 §7.9.4 uses k = 2, the large-h value. With few batches the batch spread s_z
    has few degrees of freedom and can be far too small by chance, so the Student-t
    quantile with h − 1 degrees of freedom is used instead (12.7 for h = 2, 4.30 for 3,
    2.26 for 10, 2.06 for 25; 2 from about h = 60 on). This only ever asks for more batches.
    """
    from scipy import stats

    return float(max(2.0, stats.t.ppf(0.975, max(1, int(h) - 1))))


def batch_seed(seed: int, batch: int) -> int:
    """Seed of the independent scramble of adaptive batch ``batch`` (numpy SeedSequence of (seed, batch))."""
    return int(np.random.SeedSequence([int(seed), int(batch)]).generate_state(1, dtype=np.uint64)[0] >> 1)


def score_rotation(f: Callable[[np.ndarray], np.ndarray], inputs: InputSet,
                   columns: np.ndarray | None = None, gradients: np.ndarray | None = None,
                   values: np.ndarray | None = None) -> np.ndarray | None:
    """Orthogonal matrix W (K, K) that points the leading Sobol' coordinates along the model's
    linear directions in the space of the K independent normal input scores.

    Every uncertain input is a function of one independent standard normal score (or, for
    a Gaussian copula, of several; see :meth:`InputSet.from_scores`). With scores s = W z,
    z = Φ⁻¹(Sobol' point), any orthogonal W leaves the joint distribution of the inputs as
    it is; it only changes which combination of scores each Sobol' coordinate carries.
    For each output k the score gradient is estimated by central differences of one
    standard deviation of score (2K model evaluations),

        g_jk = [f_k(x(s = +e_j)) − f_k(x(s = −e_j))] / 2,

    each output's column is scaled to unit length so that all outputs count alike. W's
    leading columns are the left singular vectors of the matrix of the ĝ_k (the principal
    directions of the gradients, i.e. the eigenvectors of Σ_k ĝ_k ĝ_kᵀ), by decreasing
    singular value, as far as those exceed the cut-off below; the remaining columns
    are the score axes in order of decreasing linear importance Σ_k ĝ_jk², each made
    orthogonal to the columns before it, so that the nonlinear remainder of the important
    inputs lands on the next-best coordinates. For one output, W's first column is g/|g|: the whole
    linear part of the output is then a function of the first Sobol' coordinate alone, the
    best-stratified one, and the interval endpoints (order statistics) are nearly exact in
    every batch; several outputs share the few leading coordinates that span their
    gradients. This is the linear-transformation method of Imai & Tan (2006, Journal of
    Computational Finance 10(2)), there for one output; on orthogonal transforms in
    quasi-Monte Carlo see also Wang & Sloan (2011, Operations Research 59(1)).

    W is built to be insensitive to rounding: directions are kept only when their singular
    value exceeds :data:`ROTATION_CUTOFF` times the first, an axis joins the completion only
    when more than that fraction of it is left after orthogonalisation, axes of equal
    importance to 9 digits go in index order, and each column's sign is fixed (first of its
    largest entries positive). Model values that differ in the last bits (another
    BLAS or libm) then move W by rounding only, not to another basis. Returns None (plain
    Sobol' axes) when the model cannot be evaluated at those points or no output has a
    linear part (|g_k| ≤ 10⁻⁹ max|f_k| is taken as rounding).

    ``columns``: the uncertain input columns to rotate (those the model depends on, see
    :class:`~uqthermo.uq.trials.TrialDesign`); W is then (len(columns), len(columns)) over
    their scores, in that order, and the other scores stay 0. Default: all uncertain columns.

    ``gradients``: (K, M) the exact score gradients of a model that is affine in its inputs
    (its map in score space, g_jk = ∂y_k/∂s_j, as :class:`~uqthermo.uq.trials.TrialDesign`
    folds it), used instead of the central differences. An affine model has no nonlinear part
    for the completion to place, so then every direction of the gradients' span leads (singular
    value above :data:`SPAN_FLOOR` times the first, not :data:`ROTATION_CUTOFF`) and the
    completion columns are orthogonal to every output's gradient: no output moves with them,
    and the trials need only rank(G) Sobol' coordinates (5 of the demo's 7 for ΔrH over a
    temperature window: two combinations of its inputs move no output). ``values`` (M,): the
    model's values at the estimates; an output whose gradient is below 10⁻¹² of its value (its
    linear part is rounding) does not steer W.
    """
    if gradients is not None:
        floor = 0.0 if values is None else 1e-12 * np.abs(np.asarray(values, dtype=float))
        return _rotation_from(np.asarray(gradients, dtype=float), floor, SPAN_FLOOR)
    unc = np.flatnonzero(np.asarray(inputs.stds) > 0)
    pos = np.arange(len(unc)) if columns is None else np.searchsorted(unc, np.asarray(columns, dtype=np.intp))
    k = len(pos)
    if k == 0:
        return None
    S = np.zeros((2 * k, len(unc)))
    S[np.arange(k), pos] = 1.0
    S[np.arange(k, 2 * k), pos] = -1.0
    try:
        with np.errstate(all="ignore"):
            Y = np.asarray(f(inputs.from_scores(S)), dtype=float).reshape(2 * k, -1)
    except Exception:   # a sampling design must never stop the run; the run itself reports model errors
        return None
    G = 0.5 * (Y[:k] - Y[k:])
    if not np.all(np.isfinite(G)):
        return None
    return _rotation_from(G, 1e-9 * np.abs(Y).max(axis=0), ROTATION_CUTOFF)


def _rotation_from(G: np.ndarray, floor, cutoff: float) -> np.ndarray | None:
    """:func:`score_rotation`'s W from the score gradients G (K, M): outputs with ‖g_k‖ above
    ``floor`` (scalar or (M,)) count; the SVD's directions with a singular value above ``cutoff`` times the
    first lead, the score axes by linear importance complete the basis."""
    k = G.shape[0]
    norm = np.linalg.norm(G, axis=0)
    live = norm > floor   # below that, the difference is rounding of an even function
    if not np.any(live):
        return None
    Gs = G[:, live] / norm[live]
    V, sv, _ = np.linalg.svd(Gs, full_matrices=False)
    # from central differences, directions with a singular value below 10⁻³ of the first carry
    # under 10⁻⁶ of the linear variance and are ill-determined by rounding: leave them to the
    # completion below (exact gradients of an affine model: only rounding is left out)
    cols = [V[:, i] for i in range(int(np.sum(sv > cutoff * sv[0])))]
    # the rest of the basis: the score axes by decreasing linear importance, each made
    # orthogonal to the columns before it (Gram-Schmidt, twice), so that what the leading
    # directions leave of the important inputs (their nonlinear part) sits on the next
    # coordinates. An axis (almost) inside the span so far is skipped; one pass always
    # completes the basis (while columns are missing, some axis keeps ≥ 1/√K of its length).
    importance = (Gs**2).sum(axis=1)
    importance = np.round(importance / importance.max(), 9)   # near-ties (symmetric inputs) go by index
    for j in np.argsort(-importance, kind="stable"):
        if len(cols) == k:
            break
        e = np.zeros(k)
        e[j] = 1.0
        B = np.column_stack(cols)
        for _ in range(2):
            e -= B @ (B.T @ e)
        n = np.linalg.norm(e)
        if n > ROTATION_CUTOFF:
            cols.append(e / n)
    W = np.column_stack(cols)
    mag = np.abs(W)
    big = np.argmax(mag >= (1.0 - 1e-6) * mag.max(axis=0), axis=0)   # first of the (nearly) largest entries
    W *= np.where(W[big, np.arange(k)] < 0, -1.0, 1.0)
    return W


def sobol_rotation(f, inputs: InputSet, method: str, rotate: bool) -> np.ndarray | None:
    """The run's score rotation: :func:`score_rotation` for Sobol' sampling with ``rotate``, else None."""
    return score_rotation(f, inputs) if method == "sobol" and rotate else None


def batch_sampler(inputs: InputSet, method: str, seed: int, batch_size: int,
                  stream: UniformStream | None = None) -> Callable[[int], np.ndarray]:
    """``draw(b) -> U`` (batch_size, D): the uniforms of adaptive batch b (JCGM 101 §7.9).

    Random and Latin-hypercube: consecutive draws of one stream (batches are independent
    by construction; call in batch order). Sobol': batch b is the first ``batch_size``
    points of its own independently scrambled sequence (seed :func:`batch_seed`), so the
    batches are the independent replicates that §7.9's spread of batch results assumes,
    and each batch keeps the low discrepancy of a 2^m-point net.
    """
    d = len(inputs)
    if method != "sobol":
        own = stream if stream is not None else UniformStream(d, method, seed)
        return lambda b: own.draw(batch_size)
    return lambda b: UniformStream(d, method, *batch_origin(method, seed, b, batch_size)).draw(batch_size)


class BatchLedger:
    """The bookkeeping of an adaptive run (JCGM 101 §7.9), shared by the local and the Dask engine:
    the batch size, the batches' summaries, the convergence history and the stopping rule.

    ``record`` is called once per batch, in batch order; the run goes on while ``room()``.
    """

    def __init__(self, p: float, method: str, batch_size: int | None, max_samples: int, ndigits: int,
                 check_shortest: bool, stop_columns: int | None):
        self.size = int(batch_size) if batch_size is not None else adaptive_batch_size(p, method)
        if self.size < 2:
            raise StatisticsError(f"batch size must be at least 2, got {batch_size!r}")
        if max_samples < 2 * self.size:
            raise StatisticsError(f"max_samples = {max_samples} is below two adaptive batches of {self.size} "
                                  "trials (the §7.9 test needs at least two)")
        self.max_samples, self.ndigits = int(max_samples), ndigits
        self.check_shortest, self.stop_columns = check_shortest, stop_columns
        self.summaries: list[np.ndarray] = []
        self.conv_n: list[int] = []
        self.conv_u: list[np.ndarray] = []
        self.stability: dict = {}
        self.converged = False
        self.done = 0
        self.batches = 0

    def room(self) -> bool:
        """Whether another whole batch is run (the cap max_samples is never passed)."""
        return not self.converged and self.done + self.size <= self.max_samples

    def record(self, summary: np.ndarray, u_all: np.ndarray, progress=None) -> bool:
        """Add a batch (its :func:`batch_summary`, the standard uncertainties over all trials so
        far); True when the run stops here (stable, or no room for another batch)."""
        self.done += self.size
        self.batches += 1
        self.summaries.append(summary)
        self.conv_n.append(self.done)
        self.conv_u.append(np.array(u_all, copy=True))
        if progress is not None:
            progress(self.done, None)
        if self.batches < 2:
            return False
        stable, spread = batch_test(self.summaries, u_all, self.ndigits, self.check_shortest, self.stop_columns)
        if stable or self.done + self.size > self.max_samples:
            self.converged, self.stability = stable, spread
            return True
        return False

    def warnings(self) -> list[str]:
        """The cap warning when the run stopped before it was stable."""
        return [] if self.converged else [cap_warning(self.done, self.max_samples, self.size, self.ndigits)]


def batch_origin(method: str, seed: int, batch: int, batch_size: int) -> tuple[int, int]:
    """(stream seed, rows to skip) where adaptive batch ``batch`` starts (see :func:`batch_sampler`).

    Sobol': the start of its own scramble; otherwise batch·batch_size rows into the run's stream.
    """
    if method == "sobol":
        return batch_seed(seed, batch), 0
    return seed, batch * batch_size




def batch_summary(Y: np.ndarray, p: float) -> np.ndarray:
    """(6, M): mean, std, symmetric low/high, shortest low/high of one batch (the quantities
    whose batch-to-batch spread :func:`batch_test` checks)."""
    sym, short = OrderStatistics(Y.T.copy(order="C"), p).intervals(p)
    return np.stack([Y.mean(axis=0), Y.std(axis=0, ddof=1), sym[:, 0], sym[:, 1], short[:, 0], short[:, 1]])


def cap_warning(done: int, max_samples: int, batch_size: int, ndigits: int) -> str:
    """The warning of an adaptive run (JCGM 101 §7.9) that reached its cap before it was stable."""
    return (f"adaptive Monte Carlo stopped at {done} trials (the cap max_samples = {max_samples}, in "
            f"whole batches of {batch_size}) before u(y) and the interval endpoints were stable to "
            f"{ndigits} significant digits")


def batch_test(summaries: list[np.ndarray], u_all: np.ndarray, ndigits: int,
               check_shortest: bool, stop_columns: int | None = None) -> tuple[bool, dict]:
    """JCGM 101 §7.9.4 test after h ≥ 2 batches: (stable for every output, k·s per quantity).

    ``summaries``: the h (6, M) :func:`batch_summary` arrays; s_z = [Σ_r (z⁽ʳ⁾ − z̄)²/(h(h − 1))]^{1/2}
    is the standard deviation of the average of the h batch values, k = :func:`stability_factor`,
    δ from u(y) of all h·M values (§7.9.2). An output with u(y) = 0 is stable. ``stop_columns``:
    only the first columns are output quantities (the rest, e.g. indicators of rare events whose
    batch standard deviation cannot settle to two digits, are carried along but do not stop the run).
    """
    S = np.stack(summaries)  # (h, 6, M)
    if stop_columns is not None:
        S, u_all = S[:, :, :stop_columns], np.asarray(u_all)[:stop_columns]
    h = S.shape[0]
    s = np.sqrt(np.var(S, axis=0, ddof=1) / h)
    delta = numerical_tolerance(u_all, ndigits)
    rows = [0, 1, 2, 3] + ([4, 5] if check_shortest else [])
    k = stability_factor(h)
    exceed = np.any(k * s[rows] > delta[None, :], axis=0) & (u_all > 0)
    return not bool(np.any(exceed)), {STABILITY_KEYS[r]: k * s[r] for r in rows}


STABILITY_KEYS = ("mean", "u", "low", "high", "shortest_low", "shortest_high")


def check_run_arguments(inputs, samples, sampling, seed, coverage, ndigits, chunk_size):
    """Validate and normalise the arguments shared by the local and the distributed engine.

    Returns ``(p, method, seed, d, chunk_size, adaptive, samples)``; a ``seed`` of None is
    replaced by a fresh one (recorded in the result).
    """
    if not isinstance(inputs, InputSet):
        raise StatisticsError("inputs must be an InputSet")
    p = float(coverage)
    if not 0.0 < p < 1.0:
        raise StatisticsError(f"coverage probability must lie in (0, 1), got {coverage!r}")
    if int(ndigits) != ndigits or ndigits < 1:
        raise StatisticsError(f"ndigits must be a positive integer, got {ndigits!r}")
    method = sampling_method(sampling)
    if seed is None:
        seed = int(np.random.SeedSequence().entropy % (2**63))
    d = len(inputs)
    if chunk_size is None:
        chunk_size = 65_536 if d <= 64 else max(1024, 2**22 // d)
    if int(chunk_size) != chunk_size or chunk_size < 1:
        raise StatisticsError(f"chunk size must be a positive integer, got {chunk_size!r}")
    chunk_size = int(chunk_size)
    adaptive = isinstance(samples, str)
    if adaptive:
        if samples.lower() != "adaptive":
            raise StatisticsError(f"samples must be a positive integer or \"adaptive\", got {samples!r}")
    else:
        if isinstance(samples, bool) or int(samples) != samples or samples < 2:
            raise StatisticsError(f"samples must be an integer >= 2 or \"adaptive\", got {samples!r}")
        samples = int(samples)
    return p, method, seed, d, chunk_size, adaptive, samples




def trial_design(f, inputs: InputSet, method: str, seed: int, rotate: bool, affine: bool,
                 depends_on) -> TrialDesign:
    """The run's :class:`~uqthermo.uq.trials.TrialDesign` (with the Sobol' score rotation when asked)."""
    rotation = ((lambda cols, grads=None, values=None: score_rotation(f, inputs, cols, grads, values))
                if method == "sobol" and rotate else None)
    return TrialDesign(f, inputs, method, seed, rotation=rotation, affine=affine, depends_on=depends_on)


def design_batches(design: TrialDesign, batch_size: int) -> Callable[[int], object]:
    """``draw(b)``: the trials of adaptive batch b (JCGM 101 §7.9) as one chunk of ``design``.

    As :func:`batch_sampler`: random and Latin hypercube continue one stream (call in batch
    order); a Sobol' batch is the first ``batch_size`` points of its own scramble.
    """
    if design.method != "sobol":
        own = design.stream()
        return lambda b: own.draw(batch_size)
    return lambda b: design.stream(*batch_origin("sobol", design.seed, b, batch_size)).draw(batch_size)


def evaluate_batch(design: TrialDesign, chunk, row0: int, keep_rows: int,
                   chunk_size: int) -> tuple[np.ndarray, np.ndarray]:
    """(X kept, Y) of one batch, evaluated in pieces of at most ``chunk_size`` rows."""
    n = design.rows_of(chunk)
    parts = [design.evaluate(design.slice(chunk, a, min(n, a + chunk_size)), row0 + a, keep_rows)
             for a in range(0, n, chunk_size)]
    if len(parts) == 1:
        return parts[0]
    return (np.concatenate([x for x, _ in parts], axis=0),
            np.asfortranarray(np.concatenate([y for _, y in parts], axis=0)))


def propagate_monte_carlo(
    f: Callable[[np.ndarray], np.ndarray],
    inputs: InputSet,
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
    depends_on: Sequence[int] | None = None,
    stop_columns: int | None = None,
) -> MonteCarloResult:
    """Propagate the input distributions through f by Monte Carlo (JCGM 101 §7).

    Parameters
    ----------
    f : callable
        Vectorised model ``f(X[N, D]) -> Y[N, M]`` (1-D result = one output). It must act
        row by row (the value for one input row must not depend on the other rows).
    inputs : InputSet
    samples : int or "adaptive"
        Number of trials N, or the adaptive procedure of JCGM 101 §7.9.
    sampling : {"sobol", "random", "latin-hypercube"}
    seed : int, optional
        Seed; ``None`` draws fresh entropy and records it in ``result.seed``.
    coverage : float
        Coverage probability p.
    chunk_size : int, optional
        Rows per model call (default 65536, fewer for many inputs).
    ndigits : int
        Significant digits of u(y) for the numerical tolerance δ (§7.9.2).
    progress : callable(done, total), optional
        Called after each chunk (fixed N: total = N) or batch (adaptive: total = None).
    keep : int
        Model values (and input rows) kept in ``Y_kept``/``X_kept`` (reduced so that
        keep·(D + M) ≤ 4·10⁶).
    max_samples : int
        Cap on trials for the adaptive procedure (``converged = False`` and a warning if hit).
    batch_size : int, optional
        Adaptive batch size (default max(⌈100/(1 − p)⌉, 10⁴), §7.9.4 b).
    check_shortest : bool
        Adaptive stopping also requires stable shortest-interval endpoints.
    max_stored_values, histogram_bins : int
        Memory bound and histogram resolution (see module docstring).
    rotate : bool
        Sobol' sampling: drive the input scores rotated onto the model's linear directions
        (:func:`score_rotation`); False keeps one Sobol' coordinate per input.
    affine : bool
        The caller states that f is exactly affine in X (e.g. reaction enthalpies at exact
        temperatures). The map is then taken from f once, checked on spread-out rows, and
        every trial is one product of its normal scores with it, the input transform folded
        in (see :mod:`uqthermo.uq.trials`); if the check fails f is evaluated as usual.
    depends_on : sequence of int, optional
        Input columns f depends on. Only they are sampled for f; the others are drawn for the
        kept rows (``X_kept``) alone. Default: all (or, with ``affine``, the columns its map uses).
    stop_columns : int, optional
        Adaptive: only the first ``stop_columns`` outputs must be stable (:func:`batch_test`).

    Returns
    -------
    MonteCarloResult
    """
    p, method, seed, d, chunk_size, adaptive, samples = check_run_arguments(
        inputs, samples, sampling, seed, coverage, ndigits, chunk_size)
    design = trial_design(f, inputs, method, seed, rotate, affine, depends_on)
    warnings: list[str] = []
    m = design.n_outputs
    kp = kept_rows(keep, d, m)
    collector = Collector(m, d, kp, int(max_stored_values), int(histogram_bins),
                          expect_rows=None if adaptive else samples, ndigits=ndigits)
    conv_n: list[int] = []
    conv_u: list[np.ndarray] = []
    stability: dict = {}
    converged = True
    batches = 0
    M_b = 0

    if not adaptive:
        n_total = samples
        if n_total < max(math.ceil(100 / (1 - p)), 10_000):
            warnings.append(f"only {n_total} Monte Carlo trials, fewer than one JCGM 101 §7.9 batch "
                            f"({adaptive_batch_size(p)}): coverage-interval endpoints may be unreliable")
        checkpoints = sorted({int(round(n_total * 2 ** (-j / 2))) for j in range(60)} | {n_total})
        checkpoints = [c for c in checkpoints if c >= min(100, n_total)]
        ci = 0
        done = 0
        for chunk in design.stream().chunks(n_total, chunk_size):
            X, Y = design.evaluate(chunk, done, kp)
            pos = 0
            while pos < Y.shape[0]:
                stop = min(Y.shape[0], pos + checkpoints[ci] - done) if ci < len(checkpoints) else Y.shape[0]
                collector.add(X[pos:stop], Y[pos:stop])
                done += stop - pos
                pos = stop
                if ci < len(checkpoints) and done == checkpoints[ci]:
                    conv_n.append(done)
                    conv_u.append(collector.moments.std.copy())
                    ci += 1
            if progress is not None:
                progress(done, n_total)
    else:
        ledger = BatchLedger(p, method, batch_size, max_samples, ndigits, check_shortest, stop_columns)
        M_b = ledger.size
        draw_batch = design_batches(design, M_b)
        while ledger.room():
            b = ledger.batches
            X, Y = evaluate_batch(design, draw_batch(b), b * M_b, kp, chunk_size)
            collector.add(X, Y)
            if ledger.record(batch_summary(Y, p), collector.moments.std, progress):
                break
        warnings += ledger.warnings()
        conv_n, conv_u, batches = ledger.conv_n, ledger.conv_u, ledger.batches
        converged, stability = ledger.converged, ledger.stability

    assert collector is not None
    return collected_result(collector, d, p, ndigits, warnings, conv_n, conv_u, adaptive=adaptive,
                            converged=converged, stability=stability, batch_size=M_b, batches=batches,
                            seed=int(seed), sampling=method, rotated_scores=design.rotation is not None)
