"""Borgonovo's moment-independent δ index, per datum, from the rows of a Sobol' design.

The δ index of a factor X_i (Borgonovo 2007, Reliab. Eng. Syst. Saf. 92, 771–784, eq. (7)) is

    δ_i = ½ E_{X_i}[ ∫ |f_Y(y) − f_{Y|X_i}(y)| dy ]          (dimensionless, 0 ≤ δ_i ≤ 1)

the expected L¹ distance between the output density and the output density given X_i, halved.
It looks at the whole output distribution, not only its variance, and so cross-checks a
variance-based ranking when the inputs are non-normal or the model is nonlinear. It is
estimated from given data (one joint sample of inputs and outputs) as in Plischke, Borgonovo &
Smith (2013), Eur. J. Oper. Res. 226, 536–550 (:func:`delta_index`; SALib's ``delta``
analyser implements the same estimator).

**Which rows.** The given-data estimator needs rows that are a sample of the joint input
distribution. The Saltelli design of the Sobol' indices holds, per base point i, the rows
A_i, AB_{1,i} … AB_{G,i}, B_i; the A rows and the B rows are each a scrambled Sobol' sequence
(the first and the last D coordinates of one 2D-dimensional sequence). A contiguous prefix of
n = 2^k points of such a sequence keeps its balance (it is a (t, k, s)-net: every elementary
interval of volume 2^(t−k) holds exactly 2^t points — Owen 1995, Dick & Pillichshammer 2010,
*Digital Nets and Sequences*, §4.4), so :func:`design_rows` takes the first n A rows and the
first n B rows. Striding through the sorted rows instead (what an earlier version did) keeps
a subsequence on which the leading coordinates cover only part of [0, 1] and biases δ as soon
as the design is longer than the row budget.

This module is model-agnostic: it never imports the physics, the case layer or the report.
"""

from __future__ import annotations

import contextlib
import io
import math
import warnings
from typing import Sequence

import numpy as np

from ...errors import StatisticsError

__all__ = ["delta_index", "design_rows", "grouped_delta"]

def _gauss(grid: np.ndarray, Ys: np.ndarray, h: np.ndarray) -> np.ndarray:
    """Gaussian kernel values φ((g − y)/h)/h, shape (B, N, G), computed in place."""
    t = np.subtract(grid[None, None, :], Ys[:, :, None])
    hb = np.broadcast_to(h, Ys.shape)[:, :, None]
    t /= hb
    np.square(t, out=t)
    t *= -0.5
    np.exp(t, out=t)
    t /= hb * math.sqrt(2.0 * math.pi)
    return t


def delta_index(
    X: np.ndarray,
    Y: np.ndarray,
    num_resamples: int = 10,
    conf_level: float = 0.95,
    seed: int | None = None,
    grid_points: int = 100,
) -> tuple[np.ndarray, np.ndarray]:
    """Borgonovo's moment-independent delta index from given data, vectorised.

    ``δ_i = ½ E_{X_i}[ ∫ |f_Y(y) − f_{Y|X_i}(y)| dy ]`` (Borgonovo 2007, Reliab. Eng. Syst.
    Saf. 92, 771–784), estimated as in Plischke, Borgonovo & Smith (2013), Eur. J. Oper.
    Res. 226, 536–550, eqs. (26) and (30), with the choices of SALib 1.6's ``delta``:
    equal-frequency classes of X_i by rank, ``M = min(⌈N^e⌉, 48)`` classes with
    ``e = 2 / (7 + tanh((1500 − N)/500))``; Gaussian kernel densities with Silverman's
    bandwidth ``h = s (3n/4)^(−1/5)`` (s: sample standard deviation) on 100 points spanning
    the range of Y; class estimate ``δ̂ = Σ_c n_c/(2N) ∫ |f̂_Y − f̂_{Y|c}| dy`` (trapezoid
    rule; classes with constant Y skipped); bias reduction ``δ = 2 δ̂ − mean(δ̂*_b)`` over
    bootstrap resamples b and confidence half-width ``z · sd(δ̂*_b)``. Unlike SALib, δ̂ is
    taken on the full sample (SALib takes it on one more bootstrap resample), and numpy's
    global generator is not touched.

    Parameters
    ----------
    X : (N, k)
        Inputs (one column per factor; a constant column gives δ = 0).
    Y : (N,)
    num_resamples : int
    conf_level : float
    seed : int, optional
    grid_points : int

    Returns
    -------
    delta, conf : ndarray (k,)
    """
    from scipy.stats import norm

    X = np.asarray(X, dtype=float)
    if X.ndim == 1:
        X = X[:, None]
    Y = np.asarray(Y, dtype=float)
    N, k = X.shape
    if Y.shape != (N,):
        raise StatisticsError(f"delta index: Y has shape {Y.shape}, expected ({N},)")
    if N < 20 or np.ptp(Y) == 0:
        return np.zeros(k), np.zeros(k)
    e = 2.0 / (7.0 + math.tanh((1500.0 - N) / 500.0))
    M = int(np.round(min(int(np.ceil(N**e)), 48)))
    thresholds = np.linspace(0, N, M + 1)
    grid = np.linspace(Y.min(), Y.max(), grid_points)
    rng = np.random.default_rng(seed)
    R = max(2, int(num_resamples))
    idx_sets = np.vstack([np.arange(N)[None, :], rng.integers(N, size=(R, N))])  # (R+1, N)
    z = norm.ppf(0.5 + conf_level / 2)

    def kde_rows(Ys: np.ndarray) -> np.ndarray:
        """Unconditional density on the grid for each resample row (B, G)."""
        n = Ys.shape[1]
        h = Ys.std(axis=1, ddof=1) * (3.0 * n / 4.0) ** (-0.2)
        h = np.where(h > 0, h, 1.0)
        return _gauss(grid, Ys, h[:, None]).sum(axis=1) / n

    Yr = Y[idx_sets]  # (B, N)
    fy = kde_rows(Yr)  # (B, G)
    ranks = np.arange(1, N + 1)
    cls_of_rank = np.searchsorted(thresholds, ranks, side="left") - 1  # class of rank r: m_j < r <= m_j+1
    cls_of_rank = np.clip(cls_of_rank, 0, M - 1)
    onehot = np.zeros((M, N))
    onehot[cls_of_rank, np.arange(N)] = 1.0
    present = np.flatnonzero(np.bincount(cls_of_rank, minlength=M) > 0)
    onehot = onehot[present]
    n_c = onehot.sum(axis=1)  # (M',) non-empty classes
    starts = np.searchsorted(cls_of_rank, present)  # first sorted position of each class
    out = np.zeros(k)
    conf = np.zeros(k)
    for i in range(k):
        xi = X[:, i]
        if np.ptp(xi) == 0:
            continue
        Xr = xi[idx_sets]  # (B, N)
        order = np.argsort(Xr, axis=1, kind="stable")  # ordinal ranks
        Ys = np.take_along_axis(Yr, order, axis=1)  # Y sorted by X within each resample
        # per-class sample std (ddof=1) via sums
        s1 = Ys @ onehot.T  # (B, M)
        s2 = (Ys * Ys) @ onehot.T
        nn = n_c[None, :]
        var = np.where(nn > 1, (s2 - s1 * s1 / nn) / np.maximum(nn - 1, 1), 0.0)
        sd = np.sqrt(np.maximum(var, 0.0))
        h = sd * (3.0 * nn / 4.0) ** (-0.2)  # (B, M)
        ok = h > 0
        hh = np.where(ok, h, 1.0)
        h_pt = hh[:, np.searchsorted(present, cls_of_rank)]  # (B, N) bandwidth of each point's class
        kern = _gauss(grid, Ys, h_pt)  # (B, N, G)
        # classes are contiguous runs of the X-sorted order: sum each run
        fyc = np.add.reduceat(kern, starts, axis=1) / nn[:, :, None]  # (B, M, G)
        diff = np.abs(fy[:, None, :] - fyc)
        integ = np.trapezoid(diff, grid, axis=2) if hasattr(np, "trapezoid") else np.trapz(diff, grid, axis=2)
        d = np.sum(np.where(ok, nn / (2.0 * N) * integ, 0.0), axis=1)  # (B,)
        d_hat, boot = d[0], d[1:]
        out[i] = 2.0 * d_hat - boot.mean()
        conf[i] = z * boot.std(ddof=1)
    return out, conf


def design_rows(n_rows: int, step: int, max_rows: int) -> np.ndarray:
    """Row numbers of the balanced sub-sample of a Saltelli design that enters δ.

    The design has ``N = n_rows / step`` base points, laid out per point as rows
    ``i·step`` (A_i), ``i·step + 1 … i·step + step − 2`` (AB_{g,i}) and ``i·step + step − 1``
    (B_i). The result is the first ``n`` A rows followed by the first ``n`` B rows, with
    ``n`` the largest power of two such that ``n ≤ N`` and ``2n ≤ max_rows`` (at least one
    point): a contiguous power-of-two prefix of each of the two scrambled Sobol' sequences,
    which keeps the sequences' balance (module docstring).

    Parameters
    ----------
    n_rows : int
        Rows of the design, ``N · step``.
    step : int
        ``G + 2`` for G factor groups.
    max_rows : int
        Upper bound on the rows returned.

    Returns
    -------
    ndarray of int, shape (2n,)
    """
    step = int(step)
    N = int(n_rows) // max(step, 1)
    if N < 1:
        return np.zeros(0, dtype=int)
    cap = max(1, min(N, int(max_rows) // 2))
    n = 1 << int(math.floor(math.log2(cap)))
    i = np.arange(n)
    return np.concatenate([i * step, i * step + step - 1])


def grouped_delta(
    Y: np.ndarray,
    X: np.ndarray,
    active: Sequence[str],
    groups: dict[str, np.ndarray],
    *,
    sensitivity: np.ndarray | None,
    estimates: np.ndarray,
    which: Sequence[int],
    flat: Sequence[int] = (),
    num_resamples: int = 10,
    conf_level: float = 0.95,
    seed: int | None = None,
    use_salib: bool = False,
) -> tuple[np.ndarray, np.ndarray, str, list[str]]:
    """δ per datum (factor group) and output column from a joint sample (X, Y).

    A datum with one parameter enters as itself. A multi-parameter datum g enters through
    its linear projection ``z_g = Σ_{i∈g} c_i (x_i − x̂_i)`` per output (``c`` = linear
    sensitivity coefficients): exact when the output depends on the datum only through that
    combination (e.g. the coefficients of a Cp curve at a fixed temperature, Cp being linear
    in its coefficients), an approximation otherwise. Without ``sensitivity`` the largest
    single-parameter δ of the group is reported — a lower bound, since δ of a set of inputs
    is never smaller than δ of one of them (Borgonovo 2007, property 3).

    Parameters
    ----------
    Y : (n, M)
        Model values of the rows (use :func:`design_rows` on a Saltelli design).
    X : (n, D)
        Input values of the same rows.
    active : sequence of str
        The data (groups) with a non-zero uncertainty, in result column order.
    groups : mapping datum -> column indices
    sensitivity : (M, D) or None
    estimates : (D,)
        Best estimates x̂ (centre of the projection).
    which : sequence of int
        Output columns that get δ (the others are NaN).
    flat : sequence of int
        Output columns that do not vary (δ = 0).
    num_resamples, conf_level, seed :
        Bootstrap settings of :func:`delta_index`.
    use_salib : bool
        Use ``SALib.analyze.delta.analyze`` (its ``delta_raw``, the same estimator; slow)
        instead of :func:`delta_index`.

    Returns
    -------
    delta, conf : ndarray (M, G)
    method : str
        How multi-parameter data entered.
    notes : list of str
    """
    X = np.asarray(X, dtype=float)
    Y = np.atleast_2d(np.asarray(Y, dtype=float))
    M = Y.shape[1]
    G = len(active)
    est = np.asarray(estimates, dtype=float)
    notes: list[str] = []
    multi = [name for name in active if np.asarray(groups[name]).size > 1]
    C = None if sensitivity is None else np.atleast_2d(np.asarray(sensitivity, dtype=float))
    if not multi:
        method = "per datum (single-parameter data)"
    elif C is not None:
        method = "multi-parameter data by their linear projection c_gᵀ(x_g − x̂_g)"
    else:
        method = "multi-parameter data: largest single-parameter delta (a lower bound)"
    dl = np.full((M, G), np.nan)
    dlc = np.full((M, G), np.nan)
    n = Y.shape[0]
    for m in which:
        dl[m] = 0.0
        dlc[m] = 0.0
        if m in flat:
            continue
        cols_x = []  # (group index j, column vector)
        for j, name in enumerate(active):
            idx = np.asarray(groups[name], dtype=int)
            if idx.size == 1:
                cols_x.append((j, X[:, idx[0]]))
            elif C is not None:
                cols_x.append((j, (X[:, idx] - est[idx]) @ C[m, idx]))
            else:
                for i in idx:
                    cols_x.append((j, X[:, i]))
        keep = [(j, x) for j, x in cols_x if np.ptp(x) > 0]
        if not keep:
            continue
        Xd = np.column_stack([x for _, x in keep])
        if use_salib:
            try:
                dv, dc = salib_delta(Xd, Y[:, m], num_resamples=num_resamples, conf_level=conf_level,
                                     seed=None if seed is None else int(seed) + 1)
            except Exception as exc:  # SALib's KDE can fail on degenerate samples
                notes.append(f"delta index failed for output column {m}: {type(exc).__name__}")
                dl[m] = np.nan
                dlc[m] = np.nan
                continue
        else:
            dv, dc = delta_index(Xd, Y[:, m], num_resamples=num_resamples, conf_level=conf_level,
                                 seed=None if seed is None else int(seed) + 1)
        for k, (j, _) in enumerate(keep):
            if dv[k] >= dl[m, j]:
                dl[m, j] = dv[k]
                dlc[m, j] = dc[k]
    if n < 500:
        notes.append(f"delta index from only {n} rows; treat it as a rough cross-check")
    return dl, dlc, method, notes


def salib_delta(X: np.ndarray, Y: np.ndarray, num_resamples: int = 10, conf_level: float = 0.95,
                seed: int | None = None) -> tuple[np.ndarray, np.ndarray]:
    """SALib's ``delta.analyze`` on given data, isolated from the caller's state.

    SALib seeds numpy's *global* generator (for a truthy seed), switches the warning filter
    and replaces ``warnings.formatwarning``; all three are restored. Returns SALib's classical
    estimate (``delta_raw`` in SALib ≥ 1.5, ``delta`` before) and its bootstrap half-width.
    """
    from SALib.analyze import delta as _salib

    X = np.asarray(X, dtype=float)
    if X.ndim == 1:
        X = X[:, None]
    prob = {"num_vars": X.shape[1], "names": [f"z{k}" for k in range(X.shape[1])],
            "bounds": [[float(x.min()), float(x.max())] for x in X.T]}
    state = np.random.get_state()
    fmt = warnings.formatwarning
    try:
        with warnings.catch_warnings(record=True), contextlib.redirect_stdout(io.StringIO()), \
                contextlib.redirect_stderr(io.StringIO()):
            warnings.simplefilter("ignore")
            res = _salib.analyze(prob, X, np.asarray(Y, dtype=float), num_resamples=num_resamples,
                                 conf_level=conf_level, print_to_console=False, seed=seed, method="delta")
    finally:
        np.random.set_state(state)
        warnings.formatwarning = fmt
    key = "delta_raw" if "delta_raw" in res else "delta"
    return (np.nan_to_num(np.asarray(res[key], dtype=float)),
            np.nan_to_num(np.asarray(res[key + "_conf"], dtype=float)))
