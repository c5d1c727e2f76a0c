"""Signals during a publish and the test hook: a replacement of files is never cut in half.

SIGINT, SIGTERM and SIGHUP arriving inside :func:`critical_section` are held back (:func:`defer_signal`,
called by the command line's handler) and raised as :class:`~uqthermo.errors.Interrupted` when it ends.
:func:`checkpoint` is the test suite's pause point (``UQTHERMO_TEST_PAUSE``, see :mod:`.publish`).
"""

from __future__ import annotations

import contextlib
import os
import sys
import time
from pathlib import Path
from typing import Any

from ..errors import Interrupted

__all__ = ["defer_signal", "critical_section", "checkpoint"]

_DEFER: dict[str, Any] = {"depth": 0, "pending": None}


def defer_signal(signum: int) -> bool:
    """Called by the command line's signal handler: inside a commit, remember ``signum`` and
    return True (the signal acts when the commit ends); otherwise return False."""
    if _DEFER["depth"] > 0:
        if _DEFER["pending"] is None:
            _DEFER["pending"] = signum
        return True
    return False


@contextlib.contextmanager
def critical_section():
    _DEFER["depth"] += 1
    try:
        yield
    finally:
        _DEFER["depth"] -= 1
        if _DEFER["depth"] == 0 and _DEFER["pending"] is not None:
            signum, _DEFER["pending"] = _DEFER["pending"], None
            raise Interrupted(signum)


def checkpoint(point: str) -> None:
    """Test hook (see the module docstring); does nothing unless ``UQTHERMO_TEST_PAUSE`` names ``point``."""
    spec = os.environ.get("UQTHERMO_TEST_PAUSE")
    if not spec:
        return
    name, _, go = spec.partition(":")
    if name != point:
        return
    sys.stderr.write(f"uqthermo-test: paused at {point}\n")
    sys.stderr.flush()
    if go:
        with contextlib.suppress(OSError):
            Path(go + ".paused").write_text(point)
    deadline = time.monotonic() + 120
    while go and not os.path.exists(go) and time.monotonic() < deadline:
        time.sleep(0.02)
