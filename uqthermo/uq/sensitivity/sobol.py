"""Sobol' first-order and total indices grouped by datum, with the δ index as a cross-check.

Sobol' indices (Sobol' 1993/2001; estimators of Saltelli et al. 2010, Comput. Phys. Commun.
181, 259–270, as implemented by SALib) **grouped by datum**, with bootstrap confidence
intervals; plus the moment-independent delta index (Borgonovo 2007, Reliab. Eng. Syst. Saf.
92, 771–784; SALib ``delta``; :mod:`.delta`) as a cross-check.

Sobol' indices assume the factors (here: the data) are mutually independent. The base
sample therefore keeps each datum's own marginals and its *within-datum* correlation
(Gaussian copula of :meth:`InputSet.from_uniform`) but drops correlations *between* data;
when the case has such cross-datum correlations the result says so and the linear,
correlation-aware ranking is the one to trust for those data.
"""

from __future__ import annotations

import contextlib
import io
import math
import warnings
from dataclasses import dataclass, field
from typing import Any, Mapping, Sequence

import numpy as np

from ...errors import StatisticsError
from .delta import design_rows, grouped_delta
from .driver import Driver
from .evaluation import U_HIGH, U_LOW, Model, datum_groups, evaluate_in_chunks

__all__ = ["SobolResult", "sobol_indices"]


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
    :func:`uqthermo.uq.sensitivity.delta.grouped_delta` on a balanced part of the design — the first n
    A rows and the first n B rows, n a power of two with 2n ≤ ``delta_rows``
    (:func:`uqthermo.uq.sensitivity.delta.design_rows`), so the sample is a contiguous prefix of two
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
        vectorised :func:`~uqthermo.uq.sensitivity.delta.delta_index` (same estimator, ~100× faster).
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
    groups = datum_groups(inputs.groups, D)
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
        Xd = block_inputs.from_uniform(np.clip(U[rows], U_LOW, U_HIGH))
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
