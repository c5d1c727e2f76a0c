"""Per-thread reusable arrays for temporaries that never leave a call.

A fresh multi-megabyte array per chunk costs more on this kind of machine than the arithmetic
on it (the first touch of new memory pages), so the hot paths of the Monte Carlo engine take
their temporaries from here. Each thread keeps, per name, the largest buffer it has needed
(up to ``keep`` elements when given); a buffer is valid until the same thread asks for the same
name again, so nothing taken from here may be returned to a caller or kept.
"""

from __future__ import annotations

import threading

import numpy as np

__all__ = ["scratch"]

_LOCAL = threading.local()


def scratch(name: str, shape: int | tuple[int, ...], dtype=np.float64, *, keep: int | None = None) -> np.ndarray:
    """A C-contiguous array of ``shape`` and ``dtype`` from this thread's buffer ``name`` (contents
    undefined). ``keep``: a buffer larger than this many elements is made for the call and not kept."""
    shape = (shape,) if isinstance(shape, int) else tuple(shape)
    n = int(np.prod(shape))
    if keep is not None and n > keep:
        return np.empty(shape, dtype=dtype)
    buf = getattr(_LOCAL, name, None)
    if buf is None or buf.size < n or buf.dtype != dtype:
        buf = np.empty(max(n, 1), dtype=dtype)
        setattr(_LOCAL, name, buf)
    return buf[:n].reshape(shape)
