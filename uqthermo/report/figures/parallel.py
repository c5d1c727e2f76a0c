"""Draw the report's figures in parallel worker processes where that pays.

Each figure is independent (its own matplotlib Figure, drawn from the results dict), so
they can be drawn in separate processes. Workers are *forked* from the report process:
they inherit the imported libraries and the figure specifications (closures that cannot
be pickled), so starting one costs a few milliseconds, and only the finished PNG and SVG
bytes travel back. Where fork is not available (Windows, macOS' default), with one CPU,
few figures, or when ``UQTHERMO_REPORT_PROCESSES=1``, the figures are drawn one after the
other in this process. Any failure of the pool falls back to that serial path, so a
problem with processes never costs the report.

The order of the result is the order of the specifications; the work is handed out
largest figure first (more panels, more time) to balance the workers.
"""

from __future__ import annotations

import multiprocessing as mp
import os
from collections.abc import Callable, Sequence
from typing import Any

#: below this many figures the pool's start-up is not worth it
MIN_FIGURES = 4
#: seconds to wait for the pool before falling back to drawing in this process
TIMEOUT_S = 300

_JOB: tuple[Sequence[Any], Callable[[Any], Any]] | None = None


def _available_cpus() -> int:
    try:
        return len(os.sched_getaffinity(0))
    except (AttributeError, OSError):
        return os.cpu_count() or 1


def workers(n_items: int, processes: int | None = None) -> int:
    """Number of worker processes to use for ``n_items`` figures (1 = draw in this process)."""
    if processes is None:
        env = os.environ.get("UQTHERMO_REPORT_PROCESSES", "").strip()
        processes = int(env) if env.isdigit() else None
    if processes is None:
        processes = min(_available_cpus(), 4)
    if processes <= 1 or n_items < MIN_FIGURES or "fork" not in mp.get_all_start_methods():
        return 1
    return max(1, min(processes, n_items))


def _worker_init() -> None:
    """Workers leave signals to the parent: Ctrl-C is the parent's to handle, SIGTERM ends them quietly."""
    import signal

    signal.signal(signal.SIGINT, signal.SIG_IGN)
    signal.signal(signal.SIGTERM, signal.SIG_DFL)


def _run(i: int):
    specs, fn = _JOB
    return i, fn(specs[i])


def _weight(spec: Any) -> int:
    name = str(getattr(spec, "name", ""))
    return 3 if name.startswith(("cp-data", "convergence")) else (2 if name.startswith("curve-") else 1)


def render_all(specs: Sequence[Any], fn: Callable[[Any], Any], processes: int | None = None) -> list[Any]:
    """``[fn(s) for s in specs]``, computed by forked workers when :func:`workers` says it pays."""
    global _JOB
    n = workers(len(specs), processes)
    if n > 1:
        order = sorted(range(len(specs)), key=lambda i: -_weight(specs[i]))
        _JOB = (specs, fn)
        try:
            ctx = mp.get_context("fork")
            pool = ctx.Pool(n, initializer=_worker_init)
            try:
                done = dict(pool.map_async(_run, order, chunksize=1).get(timeout=TIMEOUT_S))
                pool.close()            # orderly exit: the workers finish and leave
            finally:
                pool.terminate()
                pool.join()
            return [done[i] for i in range(len(specs))]
        except (OSError, mp.TimeoutError, RuntimeError, ValueError, EOFError):
            pass        # fall back to drawing here
        finally:
            _JOB = None
    return [fn(s) for s in specs]


__all__ = ["render_all", "workers"]
