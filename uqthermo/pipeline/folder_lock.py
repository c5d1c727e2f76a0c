"""The exclusive lock ``.NAME.uqthermo-lock`` beside an output folder: one writer at a time.

Created under a temporary name and hard-linked into place (``O_EXCL`` where links are not supported),
held with ``flock`` for the whole command; a lock whose owner died is taken over (see :mod:`.publish`).
"""

from __future__ import annotations

import contextlib
import datetime as _dt
import json
import os
import re
import secrets
import socket
from pathlib import Path
from typing import Any

from .target_checks import out_problem

__all__ = ["LOCK_FORMAT", "LOCK_SUFFIX", "FolderLock", "pid_alive", "clean_lock_names"]

LOCK_FORMAT = "uqthermo.lock/1"
LOCK_SUFFIX = ".uqthermo-lock"


def _now_iso() -> str:
    return _dt.datetime.now(_dt.timezone.utc).replace(microsecond=0).isoformat()


def pid_alive(pid: Any) -> bool:
    if not isinstance(pid, int) or pid <= 0:
        return False
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except (PermissionError, OSError):
        return True
    return True


def _read_json(path: Path) -> dict:
    try:
        doc = json.loads(Path(path).read_text(encoding="utf-8"))
        return doc if isinstance(doc, dict) else {}
    except (OSError, ValueError, UnicodeDecodeError):
        return {}


class FolderLock:
    """The exclusive lock ``.NAME.uqthermo-lock`` beside a target (see the module docstring)."""

    def __init__(self, target: Path, command: str):
        self.target = target
        self.path = target.parent / f".{target.name}{LOCK_SUFFIX}"
        self.fd: int | None = None
        self.info = {"format": LOCK_FORMAT, "pid": os.getpid(), "host": socket.gethostname(), "started": _now_iso(),
                     "command": command, "target": target.name, "partial": None, "commit": None}
        self.stale: dict | None = None          # the content of a dead owner's lock we took over

    # -- acquire / release
    def acquire(self, given: str) -> None:
        for _ in range(20):
            if self._try_create():
                return
            state = self._probe()
            if state == "gone":
                continue
            if isinstance(state, dict):        # live owner
                raise out_problem(given, self._owner_text(state))
            # "stale": removed; try again
        raise out_problem(given, f"could not take the lock {self.path.name}; if no uqthermo run writes this folder, "
                              "delete that file")

    def _try_create(self) -> bool:
        """Create the lock file: written and ``flock``-ed under a temporary name, then hard-linked
        to the lock name (fails if it exists); ``O_EXCL`` on the name where links are not supported."""
        fcntl = _fcntl()
        tmp = self.path.with_name(f"{self.path.name}.{os.getpid()}-{secrets.token_hex(4)}")
        fd = os.open(tmp, os.O_CREAT | os.O_EXCL | os.O_RDWR, 0o666)
        try:
            if fcntl is not None:
                fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
            self._write(fd)
            try:
                os.link(tmp, self.path)
            except FileExistsError:
                os.close(fd)
                return False
            except OSError:                      # no hard links on this file system
                os.close(fd)
                return self._create_direct(fcntl)
            self.fd = fd
            return True
        finally:
            with contextlib.suppress(OSError):
                os.unlink(tmp)

    def _create_direct(self, fcntl) -> bool:
        try:
            fd = os.open(self.path, os.O_CREAT | os.O_EXCL | os.O_RDWR, 0o666)
        except FileExistsError:
            return False
        if fcntl is not None:
            fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
        self._write(fd)
        self.fd = fd
        return True

    def _probe(self):
        """'gone' (the name vanished), 'stale' (dead owner; the name was removed) or the live owner's info."""
        fcntl = _fcntl()
        try:
            fd = os.open(self.path, os.O_RDWR)
        except FileNotFoundError:
            return "gone"
        except OSError:
            return _read_json(self.path) or {"pid": None}
        try:
            info = _read_json(self.path)
            if fcntl is not None:
                try:
                    fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
                except OSError:
                    return info or {"pid": None}
            elif info.get("host") != socket.gethostname() or pid_alive(info.get("pid")):
                return info or {"pid": None}
            try:
                same = os.path.samestat(os.fstat(fd), os.stat(self.path))
            except FileNotFoundError:
                return "gone"
            if not same:
                return "gone"
            info = _read_json(self.path)
            os.unlink(self.path)                 # dead owner: its lock is stale
            self.stale = info
            return "stale"
        finally:
            os.close(fd)

    @staticmethod
    def _owner_text(info: dict) -> str:
        who = f"process {info.get('pid')}" if info.get("pid") else "another process"
        host = f" on {info.get('host')}" if info.get("host") else ""
        since = f", started {info.get('started')}" if info.get("started") else ""
        from ..text_safety import terminal_text

        return terminal_text(f"another uqthermo command ({who}{host}{since}) is writing this folder; wait for it to "
                             f"finish or choose another folder (nothing was written)", limit=400)

    def _write(self, fd: int) -> None:
        data = (json.dumps(self.info, indent=1) + "\n").encode("utf-8")
        os.ftruncate(fd, 0)
        os.pwrite(fd, data, 0)

    def update(self, **kw) -> None:
        self.info.update(kw)
        if self.fd is not None:
            self._write(self.fd)

    def release(self) -> None:
        if self.fd is None:
            return
        try:
            if os.path.samestat(os.fstat(self.fd), os.stat(self.path)):
                os.unlink(self.path)
        except OSError:
            pass
        finally:
            os.close(self.fd)
            self.fd = None


def _fcntl():
    try:
        import fcntl
    except ImportError:  # pragma: no cover - not on Windows
        return None
    return fcntl


def clean_lock_names(lock: FolderLock) -> None:
    """Remove temporary lock names (``.NAME.uqthermo-lock.<pid>-<token>``) of dead processes on this host:
    a run killed in the instant between creating its lock and linking it leaves one."""
    pattern = re.compile(r"^%s\.(\d+)-[0-9a-f]{8}$" % re.escape(lock.path.name))
    try:
        names = os.listdir(lock.path.parent)
    except OSError:
        return
    for name in names:
        m = pattern.match(name)
        if m and not pid_alive(int(m.group(1))):
            with contextlib.suppress(OSError):
                os.unlink(lock.path.parent / name)
