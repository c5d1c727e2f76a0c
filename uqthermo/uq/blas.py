"""Limit OpenBLAS to one thread around tall-and-skinny matrix products.

The products of the model and of the Monte Carlo engine are small in all but the row
dimension (a dozen inputs times a few dozen outputs, 4096-65536 rows). Multi-threaded
OpenBLAS handles such shapes badly when the cores are busy: on the 2-core development
machine under load, one model call of the methanation demo took 3.9 µs per sample with two
BLAS threads and 0.17 µs with one, and the affine Monte Carlo product of nine outputs was
about six times slower. :func:`one_blas_thread` sets the thread count of every OpenBLAS
library loaded in the process to one inside a ``with`` block and restores it afterwards
(a no-op where the library cannot be found). Parallelism comes from processes instead
(``--engine dask``; distributed's workers default to one BLAS thread).
"""

from __future__ import annotations

import contextlib
import ctypes

__all__ = ["one_blas_thread"]

_BLAS_THREAD_SYMBOLS = (
    ("scipy_openblas_get_num_threads64_", "scipy_openblas_set_num_threads64_"),
    ("scipy_openblas_get_num_threads", "scipy_openblas_set_num_threads"),
    ("openblas_get_num_threads", "openblas_set_num_threads"),
)
_blas_controls: list | None = None


def _openblas_controls() -> list:
    """(get, set) thread-count functions of the OpenBLAS libraries loaded in this process."""
    global _blas_controls
    if _blas_controls is None:
        _blas_controls = []
        try:
            with open("/proc/self/maps", encoding="utf-8", errors="replace") as fh:
                paths = sorted({ln.split()[-1] for ln in fh if "openblas" in ln.lower() and "/" in ln})
        except OSError:
            paths = []
        for path in paths:
            try:
                lib = ctypes.CDLL(path)
            except OSError:
                continue
            for get, put in _BLAS_THREAD_SYMBOLS:
                if hasattr(lib, get) and hasattr(lib, put):
                    _blas_controls.append((getattr(lib, get), getattr(lib, put)))
                    break
    return _blas_controls


@contextlib.contextmanager
def one_blas_thread():
    """Limit OpenBLAS to one thread inside the block, restoring the previous count after.

    See the module docstring. The setting is per process, so do not
    rely on BLAS threads in other Python threads meanwhile.
    """
    controls = _openblas_controls()
    saved = []
    for get, put in controls:
        n = int(get())
        saved.append((put, n))
        if n != 1:
            put(1)
    try:
        yield
    finally:
        for put, n in saved:
            if n != 1:
                put(n)
