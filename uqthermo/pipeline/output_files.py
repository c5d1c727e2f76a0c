"""The files a run leaves: results.json and run-log.json written atomically, the report or the
CSV tables beside them, all published in one step through :class:`~uqthermo.pipeline.publish.OutputFolder`.

The run log holds what differs from one run of the same case to the next (date, duration, host,
versions), so that results.json of a given case and seed is reproducible byte for byte.
"""

from __future__ import annotations

import datetime as _dt
import json
import math
import os
import platform
import tempfile
from pathlib import Path
from typing import Any, Callable

import numpy as np

from .publish import OutputFolder
from .target_checks import check_target

def jsonable(x):
    """``x`` with numpy scalars and arrays as plain Python values and non-finite floats as None (JSON has no NaN)."""
    if isinstance(x, dict):
        return {str(k): jsonable(v) for k, v in x.items()}
    if isinstance(x, (list, tuple)):
        return [jsonable(v) for v in x]
    if isinstance(x, np.ndarray):
        return jsonable(x.tolist())
    if isinstance(x, (np.floating, float)):
        v = float(x)
        return v if math.isfinite(v) else None
    if isinstance(x, (np.integer,)):
        return int(x)
    if isinstance(x, np.bool_):
        return bool(x)
    return x


#: the run log written beside results.json: what differs from one run of the same case to the next
RUN_LOG = "run-log.json"
RUN_LOG_FORMAT = "uqthermo.run-log/1"


def prepare_out_dir(out: str | Path, force: bool, protected: tuple = ()) -> Path:
    """Check that ``out`` may be written, before any work is done (no lock is taken; the
    commands use :class:`~uqthermo.pipeline.publish.OutputFolder`, which also locks)."""
    check_target(out, force=force, protected=protected)
    return Path(out)


def write_json_atomic(path: Path, doc: dict) -> None:
    """Write JSON to a temporary file in the same folder, then rename it into place."""
    path = Path(path)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=path.parent)
    try:
        with os.fdopen(fd, "w", encoding="utf-8") as fh:
            json.dump(jsonable(doc), fh, indent=2, ensure_ascii=False, allow_nan=False)
            fh.write("\n")
        os.replace(tmp, path)
    except BaseException:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise


def publish_dir(build: Callable[[Path], Any], out: "str | Path | OutputFolder", force: bool = False,
                command: str = "run") -> Any:
    """Build a folder's content in a temporary sibling and publish it (see
    :class:`~uqthermo.pipeline.publish.OutputFolder`); ``out`` may be an open OutputFolder."""
    if isinstance(out, OutputFolder):
        return out.publish(build)
    with OutputFolder(out, force=force, command=command) as folder:
        return folder.publish(build)


def with_run_log(results: dict, run_log: dict | None) -> dict:
    """``results`` with the run log's fields (date, duration, versions) merged into ``run``,
    for the report, which shows them; results.json itself stays free of them."""
    if not run_log:
        return results
    extra = {k: v for k, v in run_log.items() if k != "format" and k not in (results.get("run") or {})}
    return {**results, "run": {**(results.get("run") or {}), **extra}}


def write_outputs(result, out: "str | Path | OutputFolder", *, force: bool = False,
                  report: bool = True) -> list[Path]:
    """Write results.json, run-log.json, the report (or, with ``report=False``, the CSV
    tables only), figures and tables into ``out``, published in one step.

    ``result`` is a :class:`~uqthermo.pipeline.job.RunResult` (its ``results`` and ``run_log``)."""

    def build(tmp: Path):
        write_json_atomic(tmp / "results.json", result.results)
        if result.run_log:
            write_json_atomic(tmp / RUN_LOG, result.run_log)
        view = with_run_log(result.results, result.run_log)
        if report:
            from ..report import write_report

            write_report(view, tmp)
        else:
            from ..report.render import write_tables

            write_tables(view, tmp)

    publish_dir(build, out, force)
    folder = out.path if isinstance(out, OutputFolder) else Path(out)
    return sorted(p for p in Path(folder).rglob("*") if p.is_file())


def environment() -> dict[str, str]:
    import scipy

    return {"python": platform.python_version(), "numpy": np.__version__, "scipy": scipy.__version__,
            "platform": platform.platform()}


def run_log(duration_s: float) -> dict:
    """The run log (format :data:`RUN_LOG_FORMAT`): date, duration, host and software versions —
    what varies between two runs of the same case with the same seed, kept out of results.json."""
    import socket

    return {"format": RUN_LOG_FORMAT, "date": now_iso(), "duration_s": round(duration_s, 3),
            "host": socket.gethostname(), **environment()}


def now_iso() -> str:
    return _dt.datetime.now(_dt.timezone.utc).replace(microsecond=0).isoformat()


def read_run_log(path: Path) -> dict | None:
    """The run log beside a results.json (date, duration, versions for the report), if there is a valid one."""
    try:
        if not path.is_file() or path.stat().st_size > 1_000_000:
            return None
        log = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError, UnicodeDecodeError, RecursionError):
        return None
    if not isinstance(log, dict) or log.get("format") != RUN_LOG_FORMAT:
        return None
    return {k: v for k, v in log.items() if isinstance(v, (str, int, float)) and not isinstance(v, bool)}


__all__ = ["jsonable", "RUN_LOG", "RUN_LOG_FORMAT", "prepare_out_dir", "write_json_atomic", "publish_dir", "with_run_log",
           "write_outputs", "environment", "run_log", "now_iso", "read_run_log"]
