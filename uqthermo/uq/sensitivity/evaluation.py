"""What the ranking methods share: the model type, datum groups of columns and chunked evaluation.

A model is a vectorised callable ``f(X[N, D]) -> Y[N, M]``; a datum's columns are listed in
``InputSet.groups``. :func:`evaluate_in_chunks` evaluates a design of input rows (or of
uniforms, mapped through the inputs chunk by chunk) with bounded memory and refuses wrong
shapes and non-finite model values.
"""

from __future__ import annotations

from typing import Any, Callable, Mapping, Sequence

import numpy as np

from ...errors import StatisticsError

__all__ = ["Model", "U_LOW", "U_HIGH", "datum_groups", "evaluate_in_chunks"]

Model = Callable[[np.ndarray], np.ndarray]

#: uniforms of a design are clipped to [U_LOW, U_HIGH] before they are mapped to inputs
U_LOW = 2.0**-54
U_HIGH = 1.0 - 2.0**-53


def datum_groups(groups: Mapping[str, Sequence[int]], d: int) -> dict[str, np.ndarray]:
    """``{datum: column indices as an int array}``, refusing a column outside ``0..d-1``."""
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
        xb = block if X is not None else inputs.from_uniform(np.clip(block, U_LOW, U_HIGH))
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
