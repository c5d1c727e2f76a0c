"""Which datum drives the spread: linear variance shares and grouped global indices.

Everything here is ranked **by datum** (one sourced property, e.g. all coefficients of one
heat-capacity curve), never by raw coefficient.

Two rankings are offered:

* **Linear contribution shares** (GUM law of propagation of uncertainty, JCGM 100:2008
  §5.2, eq. (13)). With sensitivity matrix ``C`` (M, D) and input covariance ``Σ`` (D, D)
  the output variance is ``u²(y_m) = c_mᵀ Σ c_m``. Splitting ``Σ`` into the within-datum
  blocks ``Σ_gg`` and the cross-datum blocks ``Σ_gh`` (g ≠ h) gives

      share_g(m)        = c_{m,g}ᵀ Σ_gg c_{m,g} / u²(y_m)
      correlation_part  = Σ_{g≠h} c_{m,g}ᵀ Σ_gh c_{m,h} / u²(y_m)

  so that ``Σ_g share_g + correlation_part = 1`` exactly. The correlation part (which can be
  negative) is reported separately instead of being hidden inside the shares.

* **Sobol' indices** (Sobol' 1993/2001; estimators of Saltelli et al. 2010, Comput. Phys.
  Commun. 181, 259–270, as implemented by SALib) **grouped by datum**, with bootstrap
  confidence intervals; plus the moment-independent delta index (Borgonovo 2007, Reliab.
  Eng. Syst. Saf. 92, 771–784; SALib ``delta``) as a cross-check.

  Sobol' indices assume the factors (here: the data) are mutually independent. The base
  sample therefore keeps each datum's own marginals and its *within-datum* correlation
  (Gaussian copula of :meth:`InputSet.from_uniform`) but drops correlations *between* data;
  when the case has such cross-datum correlations the result says so and the linear,
  correlation-aware ranking is the one to trust for those data.

This module is model-agnostic: it never imports the physics, the case layer or the report.
"""

from __future__ import annotations

import contextlib
import io
import math
import warnings
from dataclasses import dataclass, field
from typing import Any, Callable, Mapping, Sequence

import numpy as np

from ..errors import StatisticsError
from .delta import delta_index, design_rows, grouped_delta

__all__ = [
    "Driver",
    "LinearShares",
    "SobolResult",
    "Ranking",
    "linear_shares",
    "sobol_indices",
    "rank_drivers",
    "linearity_check",
    "delta_index",
    "evaluate_in_chunks",
]

Model = Callable[[np.ndarray], np.ndarray]

#: Distribution class names treated as normal by the automatic method choice.
_NORMAL_KINDS = {"Normal", "Exact"}

#: Default tolerance on the nonlinear residual variance fraction (our choice, see
#: :func:`linearity_check`).
LINEARITY_TOLERANCE = 0.01

_U_LO = 2.0**-54
_U_HI = 1.0 - 2.0**-53


# ---------------------------------------------------------------------------------------
# small helpers
# ---------------------------------------------------------------------------------------
def _as_groups(groups: Mapping[str, Sequence[int]], d: int) -> dict[str, np.ndarray]:
    out: dict[str, np.ndarray] = {}
    for name, idx in groups.items():
        arr = np.asarray(list(idx), dtype=int)
        if arr.size and (arr.min() < 0 or arr.max() >= d):
            raise StatisticsError(f"group {name!r} refers to a column outside 0..{d - 1}", key=str(name))
        out[str(name)] = arr
    return out


def evaluate_in_chunks(
    f: Model,
    X: np.ndarray | None = None,
    *,
    U: np.ndarray | None = None,
    inputs: Any = None,
    chunk_size: int = 16384,
) -> np.ndarray:
    """Evaluate a vectorised model ``f(X[N, D]) -> Y[N, M]`` in bounded chunks.

    Either give ``X`` directly, or ``U`` (uniforms, (N, D)) together with an ``inputs``
    object providing ``from_uniform(U) -> X``; the mapping is then done chunk by chunk too.

    Returns
    -------
    ndarray, shape (N, M)
        Model values (a 1-D model result is treated as M = 1).

    Raises
    ------
    StatisticsError
        If the model returns the wrong number of rows or non-finite values.
    """
    src = X if X is not None else U
    if src is None:
        raise StatisticsError("evaluate_in_chunks needs X or U")
    n = src.shape[0]
    chunk_size = max(1, int(chunk_size))
    parts = []
    for s in range(0, n, chunk_size):
        block = src[s : s + chunk_size]
        xb = block if X is not None else inputs.from_uniform(np.clip(block, _U_LO, _U_HI))
        y = np.asarray(f(xb), dtype=float)
        if y.ndim == 1:
            y = y[:, None]
        if y.ndim != 2 or y.shape[0] != xb.shape[0]:
            raise StatisticsError(
                f"model returned shape {y.shape} for {xb.shape[0]} input rows; expected (N, M)"
            )
        bad = ~np.isfinite(y)
        if bad.any():
            cols = sorted(set(np.nonzero(bad)[1].tolist()))
            raise StatisticsError(f"model returned non-finite values for output column(s) {cols}")
        parts.append(y)
    if not parts:
        return np.zeros((0, 0))
    return np.concatenate(parts, axis=0)


def _is_normal(dist: Any) -> bool:
    if getattr(dist, "std", 1.0) == 0.0:
        return True
    return type(dist).__name__ in _NORMAL_KINDS


def _block_diagonal_correlation(R: np.ndarray, groups: Mapping[str, np.ndarray]) -> tuple[np.ndarray, bool]:
    """Keep only the within-datum blocks of a correlation matrix.

    The block-diagonal part of a positive semidefinite matrix is positive semidefinite
    (its blocks are principal submatrices), so the result is always a valid correlation
    matrix. Returns (matrix, whether any cross-datum entry was non-zero).
    """
    d = R.shape[0]
    mask = np.zeros((d, d), dtype=bool)
    for idx in groups.values():
        mask[np.ix_(idx, idx)] = True
    np.fill_diagonal(mask, True)
    cross = bool(np.any(np.abs(R[~mask]) > 0.0))
    return np.where(mask, R, 0.0), cross


# ---------------------------------------------------------------------------------------
# linear shares
# ---------------------------------------------------------------------------------------
@dataclass
class LinearShares:
    """Linear (GUM) variance shares by datum.

    Attributes
    ----------
    data : list of str
        Datum ids, in the order of the columns of ``shares``.
    shares : ndarray, shape (M, G)
        ``c_gᵀ Σ_gg c_g / u²(y)`` per output and datum (0 for an exact output).
    correlation_part : ndarray, shape (M,)
        ``Σ_{g≠h} c_gᵀ Σ_gh c_h / u²(y)``; ``shares.sum(1) + correlation_part == 1``.
    variance : ndarray, shape (M,)
        ``u²(y) = cᵀ Σ c`` in output units squared.
    contributions : ndarray, shape (M, G)
        The within-datum variance terms ``c_gᵀ Σ_gg c_g`` (output units squared).
    """

    data: list[str]
    shares: np.ndarray
    correlation_part: np.ndarray
    variance: np.ndarray
    contributions: np.ndarray

    def drivers(self, m: int) -> list["Driver"]:
        """Drivers of output ``m``, largest share first (``method = "linear"``)."""
        order = np.argsort(-self.shares[m], kind="stable")
        return [Driver(self.data[j], float(self.shares[m, j]), None, "linear") for j in order]


def linear_shares(
    sensitivity: np.ndarray,
    covariance: np.ndarray,
    groups: Mapping[str, Sequence[int]],
    data: Sequence[str] | None = None,
) -> LinearShares:
    """Linear variance shares by datum plus the cross-datum correlation part.

    ``u²(y_m) = Σ_{i,j} C_mi Σ_ij C_mj`` (GUM, JCGM 100:2008, eq. (13));
    ``share_g = Σ_{i,j∈g} C_mi Σ_ij C_mj / u²(y_m)``; the rest (terms with i and j in
    different data) is the correlation part. Vectorised over the M outputs.

    Parameters
    ----------
    sensitivity : array_like, shape (M, D) or (D,)
        Sensitivity coefficients ``∂y_m/∂x_i`` (output units per input unit).
    covariance : array_like, shape (D, D)
        Input covariance matrix (input units squared).
    groups : mapping datum -> column indices
        Columns belonging to each datum (e.g. ``InputSet.groups``).
    data : sequence of str, optional
        Datum order of the result (default: the mapping's order).

    Returns
    -------
    LinearShares
    """
    C = np.atleast_2d(np.asarray(sensitivity, dtype=float))
    S = np.asarray(covariance, dtype=float)
    d = C.shape[1]
    if S.shape != (d, d):
        raise StatisticsError(f"covariance has shape {S.shape}, expected ({d}, {d})")
    g = _as_groups(groups, d)
    names = list(data) if data is not None else list(g)
    total = np.einsum("mi,ij,mj->m", C, S, C)
    contrib = np.zeros((C.shape[0], len(names)))
    for j, name in enumerate(names):
        idx = g[name]
        if idx.size:
            Cg = C[:, idx]
            contrib[:, j] = np.einsum("mi,ij,mj->m", Cg, S[np.ix_(idx, idx)], Cg)
    # exact outputs (u = 0): shares 0, correlation part 0
    scale = np.abs(total) + np.abs(contrib).sum(axis=1)
    zero = scale <= 1e-300
    safe = np.where(zero | (total <= 0), 1.0, total)
    shares = np.where(zero[:, None], 0.0, contrib / safe[:, None])
    corr = np.where(zero, 0.0, (total - contrib.sum(axis=1)) / safe)
    return LinearShares(names, shares, corr, np.maximum(total, 0.0), contrib)


# ---------------------------------------------------------------------------------------
# Sobol' and delta indices, grouped by datum
# ---------------------------------------------------------------------------------------
@dataclass
class SobolResult:
    """Grouped Sobol' (and delta) indices for every output column.

    Attributes
    ----------
    data : list of str
        The factor groups (data with a non-zero uncertainty), column order of the arrays.
    S1, S1_conf, ST, ST_conf : ndarray, shape (M, G)
        First-order and total indices and the half-widths of their bootstrap confidence
        intervals at ``conf_level``.
    delta, delta_conf : ndarray, shape (M, G) or None
        Moment-independent delta index and its bootstrap half-width (None if not computed).
    delta_method : str
        How multi-parameter data entered the delta index (see :func:`sobol_indices`).
    n_base : int
        Base sample size N (power of two); the model was evaluated N (G + 2) times.
    n_evaluations : int
    seed : int or None
    conf_level : float
    cross_datum_correlation : bool
        True when the inputs correlate different data; those correlations were dropped
        from the Sobol' sample (indices assume independent factors).
    notes : list of str
    """

    data: list[str]
    S1: np.ndarray
    S1_conf: np.ndarray
    ST: np.ndarray
    ST_conf: np.ndarray
    delta: np.ndarray | None
    delta_conf: np.ndarray | None
    delta_method: str
    n_base: int
    n_evaluations: int
    seed: int | None
    conf_level: float
    cross_datum_correlation: bool
    notes: list[str] = field(default_factory=list)

    def drivers(self, m: int) -> list["Driver"]:
        """Drivers of output ``m`` ranked by the first-order index (``method = "sobol"``).

        The share is S1 clipped to [0, 1] — the expected fraction of the output variance
        removed if the datum were known exactly ("factor prioritisation", Saltelli et al.
        2008, *Global Sensitivity Analysis: The Primer*, §1.2.15); ties are broken by ST.
        ``share_ci`` is the bootstrap interval ``S1 ± S1_conf`` clipped to [0, 1].
        """
        s1 = np.clip(self.S1[m], 0.0, 1.0)
        order = np.lexsort((-self.ST[m], -s1))
        out = []
        for j in order:
            lo = float(np.clip(self.S1[m, j] - self.S1_conf[m, j], 0.0, 1.0))
            hi = float(np.clip(self.S1[m, j] + self.S1_conf[m, j], 0.0, 1.0))
            out.append(Driver(self.data[j], float(s1[j]), (lo, hi), "sobol"))
        return out

    def indices(self, m: int) -> dict:
        """``{"method": "sobol", "S1": {datum: [value, half_width]}, "ST": ..., "delta": ...}``."""
        d: dict[str, Any] = {"method": "sobol", "n_base": self.n_base, "conf_level": self.conf_level}
        d["S1"] = {n: [float(self.S1[m, j]), float(self.S1_conf[m, j])] for j, n in enumerate(self.data)}
        d["ST"] = {n: [float(self.ST[m, j]), float(self.ST_conf[m, j])] for j, n in enumerate(self.data)}
        if self.delta is not None and self.delta_conf is not None and np.all(np.isfinite(self.delta[m])):
            d["delta"] = {n: [float(self.delta[m, j]), float(self.delta_conf[m, j])] for j, n in enumerate(self.data)}
        else:
            d["delta"] = None
        d["delta_method"] = self.delta_method
        d["independent_data"] = not self.cross_datum_correlation
        d["notes"] = list(self.notes)
        return d


def _next_pow2(n: int) -> int:
    return 1 << max(1, int(math.ceil(math.log2(max(2, int(n))))))


def sobol_indices(
    f: Model,
    inputs: Any,
    n_base: int = 2048,
    seed: int | None = None,
    *,
    delta: bool = True,
    sensitivity: np.ndarray | None = None,
    num_resamples: int = 100,
    conf_level: float = 0.95,
    chunk_size: int = 16384,
    engine: str = "auto",
    delta_outputs: Sequence[int] | None = None,
    delta_rows: int = 2048,
    delta_resamples: int = 10,
) -> SobolResult:
    """Sobol' first-order and total indices grouped by datum, plus the delta index.

    Sampling: SALib's scrambled Sobol' sequence (Saltelli scheme without second-order
    terms) over the uniform base ``[0, 1]^D'`` of the uncertain columns; each row is mapped
    through ``InputSet.from_uniform`` of a copy of ``inputs`` whose correlation matrix keeps
    only the within-datum blocks (so a Cp curve's coefficients stay correlated as stated and
    the data are independent factors, as the indices require). A whole datum is one SALib
    group. The model is evaluated ``N (G + 2)`` times in chunks.

    Estimators (SALib ``sobol.analyze``): first order ``S_g = V[E(Y|X_g)]/V(Y)`` and total
    ``ST_g = E[V(Y|X_~g)]/V(Y)`` by Saltelli et al. (2010), Comput. Phys. Commun. 181,
    259–270, eqs. (b) and (f) of their Table 2 (Jansen's total-effect estimator), with
    bootstrap confidence intervals.

    Delta index (Borgonovo 2007; estimator of Plischke, Borgonovo & Smith 2013): computed by
    :func:`uqthermo.uq.delta.grouped_delta` on a balanced part of the design — the first n
    A rows and the first n B rows, n a power of two with 2n ≤ ``delta_rows``
    (:func:`uqthermo.uq.delta.design_rows`), so the sample is a contiguous prefix of two
    scrambled Sobol' sequences whatever N is. Multi-parameter data enter through their linear
    projection on ``sensitivity`` (see that function).

    Parameters
    ----------
    f : callable
        Vectorised model ``f(X[N, D]) -> Y[N, M]``.
    inputs : InputSet
        Uses ``variables``, ``correlation``, ``data``, ``groups``, ``stds``, ``estimates``,
        ``from_uniform`` and the constructor ``type(inputs)(variables, correlation)``.
    n_base : int
        Base sample size N, rounded up to a power of two (Sobol' balance properties).
    seed : int, optional
        Seed of the scrambled sequence and of the bootstrap.
    delta : bool
        Also compute the delta index.
    sensitivity : ndarray (M, D), optional
        Linear sensitivity coefficients for the delta projection of multi-parameter data.
    num_resamples, conf_level : int, float
        Bootstrap settings.
    chunk_size : int
        Rows per model call.
    engine : {"auto", "salib", "numpy"}
        ``"salib"`` calls ``SALib.analyze.sobol.analyze`` once per output column;
        ``"numpy"`` evaluates the very same estimators (SALib 1.4–1.6: output standardised,
        ``S_g = mean(B (AB_g − A)) / var([A; B])``, ``ST_g = ½ mean((A − AB_g)²) / var([A; B])``,
        bootstrap half-width ``z · sd`` over ``num_resamples`` resamples drawn exactly as SALib
        draws them for a non-zero seed) vectorised over all outputs — identical numbers,
        much faster for a curve of many temperatures, and reproducible for seed 0 too (SALib
        leaves its bootstrap unseeded for a seed of 0 or None). ``"auto"`` = ``"numpy"``.
        The delta index uses SALib's ``delta.analyze`` only with ``"salib"``; otherwise the
        vectorised :func:`delta_index` (same estimator, ~100× faster).
    delta_outputs : sequence of int, optional
        Output columns that get the (costly) delta index; default: all when M ≤ 4, else 4
        evenly spaced columns including the first and last (others report NaN, and
        :meth:`SobolResult.indices` gives ``"delta": None`` for them).
    delta_rows, delta_resamples : int
        At most ``delta_rows`` rows (a power-of-two prefix of the A and of the B rows) and
        ``delta_resamples`` bootstrap resamples enter the delta estimate.

    Returns
    -------
    SobolResult
    """
    try:
        from SALib.analyze import sobol as salib_sobol
        from SALib.sample import sobol as salib_sample
    except ImportError as exc:  # pragma: no cover - SALib is a hard dependency
        raise StatisticsError(f"SALib is needed for Sobol' indices ({exc})") from None

    if not (0.0 < conf_level < 1.0):
        raise StatisticsError(f"conf_level must lie in (0, 1), got {conf_level}")
    stds = np.asarray(inputs.stds, dtype=float)
    D = stds.size
    groups = _as_groups(inputs.groups, D)
    active = [name for name in inputs.data if np.any(stds[groups[name]] > 0)]
    notes: list[str] = []
    R = np.asarray(inputs.correlation, dtype=float)
    R_block, cross = _block_diagonal_correlation(R, groups)
    if cross:
        notes.append(
            "the case correlates different data; Sobol' indices assume independent factors, so "
            "cross-datum correlations were left out of this sample — rank correlated data with "
            "the linear (correlation-aware) shares"
        )
    n_base = _next_pow2(n_base)

    # probe the number of outputs cheaply (one nominal row)
    y0 = evaluate_in_chunks(f, np.asarray(inputs.estimates, dtype=float)[None, :])
    M = y0.shape[1]
    G = len(active)
    empty = np.zeros((M, G))
    if G == 0:
        notes.append("no datum carries uncertainty; every output is exact")
        return SobolResult([], empty, empty, empty, empty, None, None, "none", n_base, 0, seed, conf_level, cross, notes)

    cols = np.concatenate([groups[name] for name in active])
    cols_groups = [name for name in active for _ in groups[name]]
    # only uncertain columns enter the problem; exact columns of an active datum stay in
    # the group (their uniforms are ignored by the mapping)
    problem = {
        "num_vars": int(cols.size),
        "names": [f"x{i}" for i in cols],
        "bounds": [[0.0, 1.0]] * int(cols.size),
        "groups": cols_groups,
    }
    block_inputs = inputs if not cross else type(inputs)(list(inputs.variables), R_block)
    with warnings.catch_warnings(record=True):
        warnings.simplefilter("ignore")
        Ua = salib_sample.sample(problem, n_base, calc_second_order=False, scramble=True, seed=seed)
    n_rows = Ua.shape[0]
    U = np.full((n_rows, D), 0.5)
    U[:, cols] = Ua
    Y = evaluate_in_chunks(f, U=U, inputs=block_inputs, chunk_size=chunk_size)

    if engine not in ("auto", "salib", "numpy"):
        raise StatisticsError(f"unknown Sobol' engine {engine!r}; use auto, salib or numpy")
    use_salib = engine == "salib"
    flat = [m for m in range(M) if np.ptp(Y[:, m]) <= 1e-12 * max(1.0, float(np.max(np.abs(Y[:, m]))))]
    if use_salib:
        S1 = np.zeros((M, G)); S1c = np.zeros((M, G)); ST = np.zeros((M, G)); STc = np.zeros((M, G))
        for m in range(M):
            if m in flat:
                continue
            with warnings.catch_warnings(record=True), contextlib.redirect_stdout(io.StringIO()):
                warnings.simplefilter("ignore")
                res = salib_sobol.analyze(
                    problem, Y[:, m], calc_second_order=False, num_resamples=num_resamples,
                    conf_level=conf_level, print_to_console=False, seed=seed,
                )
            S1[m] = np.nan_to_num(res["S1"]); S1c[m] = np.nan_to_num(res["S1_conf"])
            ST[m] = np.nan_to_num(res["ST"]); STc[m] = np.nan_to_num(res["ST_conf"])
    else:
        S1, S1c, ST, STc = _sobol_estimates(Y, G, num_resamples, conf_level, seed)
        S1[flat] = 0.0; S1c[flat] = 0.0; ST[flat] = 0.0; STc[flat] = 0.0
    if flat:
        notes.append(f"output column(s) {flat} do not vary with the inputs; indices set to 0")

    dl = dlc = None
    delta_method = "none"
    if delta:
        if delta_outputs is None:
            delta_outputs = range(M) if M <= 4 else np.unique(np.linspace(0, M - 1, 4).round().astype(int))
        which = sorted({int(m) for m in delta_outputs if 0 <= int(m) < M})
        rows = design_rows(Y.shape[0], G + 2, delta_rows)
        Xd = block_inputs.from_uniform(np.clip(U[rows], _U_LO, _U_HI))
        dl, dlc, delta_method, dnotes = grouped_delta(
            Y[rows], Xd, active, groups, sensitivity=sensitivity,
            estimates=np.asarray(inputs.estimates, dtype=float), which=which, flat=flat,
            num_resamples=delta_resamples, conf_level=conf_level, seed=seed, use_salib=engine == "salib",
        )
        notes.extend(dnotes)
    return SobolResult(active, S1, S1c, ST, STc, dl, dlc, delta_method, n_base, n_rows, seed, conf_level, cross, notes)


def _sobol_estimates(Y, G, num_resamples, conf_level, seed):
    """SALib's first-order/total estimators and bootstrap, vectorised over output columns."""
    from scipy.stats import norm

    n_rows, M = Y.shape
    step = G + 2
    N = n_rows // step
    per = max(1, int(4_000_000 // max(1, N * num_resamples)))  # bound the (N, R, M) bootstrap arrays
    if M > per:
        parts = [_sobol_estimates(Y[:, s:s + per], G, num_resamples, conf_level, seed) for s in range(0, M, per)]
        return tuple(np.concatenate([p[k] for p in parts], axis=0) for k in range(4))
    sd = Y.std(axis=0)
    Yn = (Y - Y.mean(axis=0)) / np.where(sd > 0, sd, 1.0)
    A = Yn[0::step]
    B = Yn[step - 1 :: step]
    # the same resampling indices SALib draws for a non-zero seed (SALib falls back to the
    # unseeded legacy generator for seed None/0; we stay reproducible for seed 0 too)
    r = np.random.default_rng(seed).integers(N, size=(N, num_resamples))
    z = norm.ppf(0.5 + conf_level / 2)
    eps = np.finfo(float).eps
    S1 = np.zeros((M, G)); S1c = np.zeros((M, G)); ST = np.zeros((M, G)); STc = np.zeros((M, G))
    var = np.var(np.r_[A, B], axis=0)
    ok = var > eps
    safe = np.where(ok, var, 1.0)
    Ar, Br = A[r], B[r]  # (N, R, M)
    var_r = np.var(np.concatenate([Ar, Br], axis=0), axis=0)  # (R, M)
    ok_r = var_r > eps
    safe_r = np.where(ok_r, var_r, 1.0)
    for j in range(G):
        AB = Yn[j + 1 :: step]
        S1[:, j] = np.where(ok, np.mean(B * (AB - A), axis=0) / safe, 0.0)
        ST[:, j] = np.where(ok, 0.5 * np.mean((A - AB) ** 2, axis=0) / safe, 0.0)
        ABr = AB[r]
        s1r = np.where(ok_r, np.mean(Br * (ABr - Ar), axis=0) / safe_r, 0.0)
        str_ = np.where(ok_r, 0.5 * np.mean((Ar - ABr) ** 2, axis=0) / safe_r, 0.0)
        S1c[:, j] = z * s1r.std(axis=0, ddof=1)
        STc[:, j] = z * str_.std(axis=0, ddof=1)
    return S1, S1c, ST, STc


# ---------------------------------------------------------------------------------------
# linearity check and automatic ranking
# ---------------------------------------------------------------------------------------
def linearity_check(
    f: Model,
    inputs: Any,
    estimate: np.ndarray,
    sensitivity: np.ndarray,
    n: int = 512,
    seed: int | None = None,
    chunk_size: int = 16384,
) -> dict:
    """Quick test whether the model is linear over the input spread.

    On ``n`` scrambled-Sobol' rows ``X = inputs.from_uniform(U)`` it compares the model with
    its first-order Taylor expansion ``y_lin = f(x̂) + C (X − x̂)`` (the GUM linearisation,
    JCGM 100:2008 §5.1.2) on the same rows (common random numbers):

        residual_fraction_m = Var(y_m − y_lin,m) / Var(y_m)
        u_ratio_m           = u_lin(y_m) / s(y_m),   u_lin² = c_mᵀ Σ c_m

    The model is judged linear when ``max_m residual_fraction_m ≤ 0.01`` (our choice; it is
    a much sharper test than comparing u_lin with a small Monte Carlo u, whose own relative
    standard error is about 1/√(2n)).

    Returns
    -------
    dict
        ``{"n", "residual_fraction": list (M), "u_ratio": list (M), "max_residual_fraction"}``.
    """
    from scipy.stats import qmc

    D = len(inputs.stds)
    C = np.atleast_2d(np.asarray(sensitivity, dtype=float))
    est = np.asarray(inputs.estimates, dtype=float)
    y0 = np.atleast_1d(np.asarray(estimate, dtype=float))
    m_pow = max(1, int(math.ceil(math.log2(max(2, n)))))
    U = qmc.Sobol(d=D, scramble=True, seed=seed).random_base2(m_pow)
    X = inputs.from_uniform(np.clip(U, _U_LO, _U_HI))
    Y = evaluate_in_chunks(f, X, chunk_size=chunk_size)
    Ylin = y0[None, :] + (X - est) @ C.T
    vy = Y.var(axis=0)
    vr = (Y - Ylin).var(axis=0)
    tiny = vy <= 1e-300
    frac = np.where(tiny, 0.0, vr / np.where(tiny, 1.0, vy))
    ulin = np.sqrt(np.maximum(np.einsum("mi,ij,mj->m", C, inputs.covariance(), C), 0.0))
    ratio = np.where(tiny, 1.0, ulin / np.sqrt(np.where(tiny, 1.0, vy)))
    return {"n": int(U.shape[0]), "residual_fraction": frac.tolist(), "u_ratio": ratio.tolist(),
            "max_residual_fraction": float(frac.max()) if frac.size else 0.0}


@dataclass(frozen=True)
class Driver:
    """One datum's share of an output's variance.

    Attributes
    ----------
    datum : str
    share : float
        Linear: ``c_gᵀ Σ_gg c_g / u²(y)``; Sobol': first-order index S1 clipped to [0, 1].
    share_ci : (float, float) or None
        Bootstrap confidence interval (Sobol' only).
    method : str
        ``"linear"`` or ``"sobol"``.
    """

    datum: str
    share: float
    share_ci: tuple[float, float] | None
    method: str

    def to_dict(self) -> dict:
        """``{"datum", "share", "share_ci"}`` (the contract's driver entry)."""
        return {"datum": self.datum, "share": self.share,
                "share_ci": None if self.share_ci is None else [self.share_ci[0], self.share_ci[1]]}


@dataclass
class Ranking:
    """Result of :func:`rank_drivers`.

    Attributes
    ----------
    drivers : list (M) of list of Driver
        Per output column, largest share first.
    method : str
        ``"linear"`` or ``"sobol"``.
    reason : str
        Why that method was used.
    correlation_part : ndarray (M,) or None
        Linear cross-datum correlation part (reported whatever the ranking method).
    linear : LinearShares or None
    sobol : SobolResult or None
    linearity : dict or None
        Result of :func:`linearity_check` when it was run.
    warnings : list of str
    """

    drivers: list[list[Driver]]
    method: str
    reason: str
    correlation_part: np.ndarray | None
    linear: LinearShares | None
    sobol: SobolResult | None
    linearity: dict | None
    warnings: list[str] = field(default_factory=list)

    def point(self, m: int) -> dict:
        """The keys of a results.json point for output column ``m``.

        ``{"drivers": [{"datum", "share", "share_ci"}], "drivers_method", "drivers_reason",
        "correlation_share", "sensitivity": {"method", "S1", "ST", "delta", "linear", ...} | None}``
        """
        sens: dict[str, Any] | None = None
        if self.sobol is not None:
            sens = self.sobol.indices(m)
        if self.linear is not None:
            sens = sens or {"method": "linear", "S1": None, "ST": None, "delta": None}
            sens["linear"] = {n: float(self.linear.shares[m, j]) for j, n in enumerate(self.linear.data)}
        return {
            "drivers": [d.to_dict() for d in self.drivers[m]],
            "drivers_method": self.method,
            "drivers_reason": self.reason,
            "correlation_share": None if self.correlation_part is None else float(self.correlation_part[m]),
            "sensitivity": sens,
        }

    def to_dict(self) -> dict:
        """``{"method", "reason", "linearity", "warnings", "points": [point(m) ...]}``."""
        return {"method": self.method, "reason": self.reason, "linearity": self.linearity,
                "warnings": list(self.warnings), "points": [self.point(m) for m in range(len(self.drivers))]}


def rank_drivers(
    f: Model,
    inputs: Any,
    linear: Any = None,
    method: str = "auto",
    n_base: int = 2048,
    seed: int | None = None,
    nonlinear_hint: bool | None = None,
    *,
    global_indices: bool | None = None,
    delta: bool = True,
    n_check: int = 512,
    tolerance: float = LINEARITY_TOLERANCE,
    num_resamples: int = 100,
    conf_level: float = 0.95,
    chunk_size: int = 16384,
) -> Ranking:
    """Rank the data that drive each output's spread.

    ``method="auto"`` uses the linear shares when every uncertain input is normal and the
    model is linear — taken from ``nonlinear_hint`` when the caller knows (``False`` =
    linear), otherwise judged by :func:`linearity_check` (nonlinear residual variance ≤
    ``tolerance`` of u²(y) on ``n_check`` rows) — and grouped Sobol' indices otherwise.
    Under exactly those conditions the output is normal and the first-order Sobol' index of a
    datum equals its linear share (additive model, independent data: S_g = ST_g = share_g),
    so the cheap method loses nothing.

    Parameters
    ----------
    f : callable
        ``f(X[N, D]) -> Y[N, M]``.
    inputs : InputSet
    linear : LinearResult, optional
        Gives ``estimate`` (M,) and ``sensitivity`` (M, D); computed with
        :func:`uqthermo.uq.linear.propagate_linear` when omitted.
    method : {"auto", "linear", "sobol"}
    n_base, seed : int
        Sobol' base sample size and seed.
    nonlinear_hint : bool, optional
        The caller's knowledge of the model (True = nonlinear); skips the linearity check.
    global_indices : bool, optional
        Compute Sobol'/delta indices even when the ranking is linear (default: only when
        the ranking uses them).

    Returns
    -------
    Ranking
    """
    if method not in ("auto", "linear", "sobol"):
        raise StatisticsError(f"unknown ranking method {method!r}; use auto, linear or sobol")
    if linear is None:
        from .linear import propagate_linear  # helper B's module

        linear = propagate_linear(f, inputs)
    C = np.atleast_2d(np.asarray(linear.sensitivity, dtype=float))
    est = np.atleast_1d(np.asarray(linear.estimate, dtype=float))
    ls = linear_shares(C, inputs.covariance(), inputs.groups, inputs.data)
    warn: list[str] = []

    linearity = None
    if method == "auto":
        stds = np.asarray(inputs.stds, dtype=float)
        # only inputs the outputs actually depend on decide (a rectangular input of another output does not)
        active = np.any(np.abs(C) * stds[None, :] > 0, axis=0) if C.size else np.zeros(len(stds), bool)
        odd = sorted({v.datum for v, s, a in zip(inputs.variables, stds, active)
                      if s > 0 and a and not _is_normal(v.distribution)})
        if nonlinear_hint is None and not odd:
            linearity = linearity_check(f, inputs, est, C, n=n_check, seed=seed, chunk_size=chunk_size)
            is_linear = linearity["max_residual_fraction"] <= tolerance
            how = (f"nonlinear residual variance {linearity['max_residual_fraction']:.2g} of u²(y) "
                   f"on a {linearity['n']}-row check (tolerance {tolerance:g})")
        else:
            is_linear = not bool(nonlinear_hint)
            how = "as stated by the caller"
        # correlations between data the output depends on: Sobol' indices need independent factors
        R = np.asarray(inputs.correlation, dtype=float)
        act = np.flatnonzero(active & (stds > 0))
        names = [inputs.variables[i].datum for i in act]
        linked = sorted({tuple(sorted((names[a], names[b]))) for a in range(len(act)) for b in range(a + 1, len(act))
                         if names[a] != names[b] and R[act[a], act[b]] != 0.0})
        if linked:
            chosen = "linear"
            pairs = ", ".join(f"{x} ~ {y}" for x, y in linked[:3]) + (f" and {len(linked) - 3} more" if len(linked) > 3 else "")
            caveat = ""
            if odd or not is_linear:
                caveat = (" (the model is nonlinear or has non-normal inputs, so these first-order shares are a guide; "
                          "the Monte Carlo interval remains the result)")
            reason = (f"the data it depends on are correlated with each other ({pairs}); Sobol' indices need "
                      f"independent factors, so the ranking uses the linear variance shares with the correlation "
                      f"part shown separately{caveat}")
        elif odd:
            chosen = "sobol"
            kinds = sorted({type(v.distribution).__name__ for v in inputs.variables
                            if v.datum in odd and not _is_normal(v.distribution)})
            listed = ", ".join(odd[:4]) + (f" and {len(odd) - 4} more" if len(odd) > 4 else "")
            reason = f"non-normal inputs ({', '.join(kinds).lower()}: {listed}); grouped Sobol' indices"
        elif not is_linear:
            chosen = "sobol"
            reason = f"the model is nonlinear ({how}); grouped Sobol' indices"
        else:
            chosen = "linear"
            reason = f"every input is normal and the model is linear ({how}); linear variance shares"
    else:
        chosen = method
        reason = f"{method} ranking requested"

    sob = None
    if chosen == "sobol" or global_indices:
        sob = sobol_indices(f, inputs, n_base=n_base, seed=seed, delta=delta, sensitivity=C,
                            num_resamples=num_resamples, conf_level=conf_level, chunk_size=chunk_size)
        warn.extend(sob.notes)
    if chosen == "sobol" and sob is not None:
        drivers = [sob.drivers(m) for m in range(C.shape[0])]
        if sob.cross_datum_correlation:
            reason += " (cross-datum correlations were left out of the Sobol' sample; see the linear shares and correlation_share)"
    else:
        active = [j for j, name in enumerate(ls.data) if np.any(np.asarray(inputs.stds)[np.asarray(inputs.groups[name], dtype=int)] > 0)]
        drivers = []
        for m in range(C.shape[0]):
            order = sorted(active, key=lambda j: -ls.shares[m, j])
            drivers.append([Driver(ls.data[j], float(ls.shares[m, j]), None, "linear") for j in order])
    return Ranking(drivers, chosen, reason, ls.correlation_part, ls, sob, linearity, warn)
