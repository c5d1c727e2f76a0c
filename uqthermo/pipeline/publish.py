"""Publishing an output folder: nothing lost, nothing half-written, one writer at a time.

Every command that writes a folder (``run``, ``report``, ``plan --out``, ``fit --out``)
goes through :class:`OutputFolder`::

    with OutputFolder(out, force=force, protected=(case_file,), command="run") as folder:
        ...                                   # the computation
        folder.publish(build)                 # build(tmp) writes the files into tmp

What it guarantees
------------------
* **Checked before any work** (:meth:`OutputFolder.open`): the folder's parent exists, is a
  folder (not a file) and is writable; the name leaves room for the temporary sibling
  names (:data:`MAX_NAME_BYTES`); the target is not a mount point; the device has at least
  :data:`MIN_FREE_BYTES` free; an existing non-empty folder is used only with ``--force``
  and only when it is an earlier uqthermo output (below). Each refusal is an
  :class:`~uqthermo.errors.InputError` keyed ``--out`` (exit 2).
* **One writer per folder**: a lock file ``.NAME.uqthermo-lock`` beside the target is
  created exclusively (written under a temporary name, then hard-linked into place, which
  fails when the name exists — or ``O_EXCL`` where hard links are not supported) and
  held with ``flock`` for the whole command. A second run for the same folder exits 2 at
  once naming the owner (process, host, start time) and writes nothing. A lock whose
  owner died (SIGKILL, power loss) is not held by anyone (the kernel drops ``flock`` with
  the process) and is taken over; the temporary folder that run left behind, which the
  lock file records, is removed (or, if it died while replacing files, the earlier
  output is restored first: see below).
* **Built aside, published in one step**: the files are written into a temporary sibling
  ``.NAME.<pid>-<token>.partial``; then a manifest :data:`MANIFEST` (format
  :data:`MANIFEST_FORMAT`: every file's path, size and SHA-256, computed from what the
  build wrote — nobody registers files) is added, permissions are set from the umask
  (files ``0666 & ~umask``, folders ``0777 & ~umask``, as other tools create them), and the
  folder is renamed to the target. A rename never replaces a non-empty folder, so a
  folder (or file) that appeared at the target while the command computed is left
  untouched: the command exits 2 and publishes nothing.
* **--force deletes only what uqthermo wrote**: an existing folder is replaced only if it
  holds a valid manifest, and then only the files the manifest lists (and folders left
  empty by that) are replaced; every other file stays where it is and the command says
  so (:attr:`Published.kept`). A listed file whose content changed since it was written
  (SHA-256 differs), a listed path that is a link, or a new file that would overwrite a
  file uqthermo did not write, refuses the command before anything is touched. The
  replacement moves the earlier files into ``.NAME.<pid>-<token>.old``, moves the new
  files in and writes the new manifest last; a failure on the way puts everything back.
* **Signals**: SIGINT, SIGTERM and SIGHUP arriving during that short replacement are
  held back (:func:`defer_signal`) and act right after it, so an interrupted command
  leaves either the old or the new output, never a mix.

Testing hook
------------
``UQTHERMO_TEST_PAUSE="POINT:GOFILE"`` (test suite only; unset in normal use, where
:func:`checkpoint` does nothing) makes the command print ``uqthermo-test: paused at POINT``
on stderr (and write ``GOFILE.paused``) at a named point (``locked``: lock taken, before
the computation; ``built``: files built, before publishing; ``commit``: during a
``--force`` replacement, earlier files moved aside) and wait until GOFILE exists (at
most 120 s). The tests use it to
race two processes, to create a folder during a run and to kill a run at a known point.
"""

from __future__ import annotations

import contextlib
import datetime as _dt
import errno
import hashlib
import json
import os
import re
import secrets
import shutil
import socket
import sys
import time
from dataclasses import dataclass, field
from pathlib import Path, PurePosixPath
from typing import Any, Callable

from ..errors import InputError, Interrupted, Problem

__all__ = ["OutputFolder", "Published", "MANIFEST", "MANIFEST_FORMAT", "LOCK_SUFFIX", "MAX_NAME_BYTES",
           "MIN_FREE_BYTES", "read_manifest", "check_target", "defer_signal", "checkpoint", "file_mode", "dir_mode",
           "published_paths"]

MANIFEST = ".uqthermo-manifest.json"
MANIFEST_FORMAT = "uqthermo.manifest/1"
LOCK_FORMAT = "uqthermo.lock/1"
LOCK_SUFFIX = ".uqthermo-lock"
#: longest folder name (bytes): the file system's limit (255) less room for ".NAME.<pid>-<token>.partial"
MAX_NAME_BYTES = 200
#: refuse to start when the device of --out has less free space than this (a report needs a few MB)
MIN_FREE_BYTES = 20 * 1024 * 1024
#: largest earlier manifest read (bytes)
_MAX_MANIFEST_BYTES = 16 * 1024 * 1024

#: folders published by this process (the interrupt message says whether output was written)
published_paths: list[Path] = []

_DEFER: dict[str, Any] = {"depth": 0, "pending": None}


# ----------------------------------------------------------------------------- signals and test hook

def defer_signal(signum: int) -> bool:
    """Called by the command line's signal handler: inside a commit, remember ``signum`` and
    return True (the signal acts when the commit ends); otherwise return False."""
    if _DEFER["depth"] > 0:
        if _DEFER["pending"] is None:
            _DEFER["pending"] = signum
        return True
    return False


@contextlib.contextmanager
def _critical():
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


# ----------------------------------------------------------------------------- permissions

def _umask() -> int:
    try:
        with open("/proc/self/status", encoding="ascii") as fh:
            for line in fh:
                if line.startswith("Umask:"):
                    return int(line.split()[1], 8)
    except (OSError, ValueError, IndexError):
        pass
    mask = os.umask(0o022)      # no way to read it without setting it elsewhere
    os.umask(mask)
    return mask


def file_mode() -> int:
    """Mode of a published file: ``0666 & ~umask`` (what ``open()`` would give)."""
    return 0o666 & ~_umask()


def dir_mode() -> int:
    """Mode of a published folder: ``0777 & ~umask`` (what ``mkdir`` would give)."""
    return 0o777 & ~_umask()


def _apply_modes(root: Path) -> None:
    fm, dm = file_mode(), dir_mode()
    for dirpath, dirnames, filenames in os.walk(root):
        for f in filenames:
            p = os.path.join(dirpath, f)
            if not os.path.islink(p):
                os.chmod(p, fm)
        for d in dirnames:
            p = os.path.join(dirpath, d)
            if not os.path.islink(p):
                os.chmod(p, dm)
    os.chmod(root, dm)


# ----------------------------------------------------------------------------- manifest

def _sha256(path: Path) -> str:
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()


def _files_below(root: Path) -> list[str]:
    """Relative POSIX paths of every regular file below ``root`` (links are not followed)."""
    out = []
    for dirpath, dirnames, filenames in os.walk(root):
        dirnames.sort()
        for f in filenames:
            p = Path(dirpath) / f
            if p.is_file() and not p.is_symlink():
                out.append(p.relative_to(root).as_posix())
    return sorted(out)


def _make_manifest(root: Path, command: str, build: str) -> dict:
    from .. import __version__

    files = [{"path": rel, "bytes": (root / rel).stat().st_size, "sha256": _sha256(root / rel)}
             for rel in _files_below(root) if rel != MANIFEST]
    return {"format": MANIFEST_FORMAT, "tool": "uqthermo", "version": __version__, "command": command,
            "build": build, "files": files}


def _safe_relative(rel: Any) -> bool:
    if not isinstance(rel, str) or not rel or "\\" in rel or "\x00" in rel:
        return False
    p = PurePosixPath(rel)
    return not p.is_absolute() and all(part not in ("", ".", "..") for part in p.parts) and rel != MANIFEST


def read_manifest(folder: Path) -> dict | None:
    """The manifest of an earlier uqthermo output in ``folder``, or None when there is no valid one.

    Valid: a regular file :data:`MANIFEST` (not a link) holding JSON with ``format`` =
    :data:`MANIFEST_FORMAT` and a ``files`` list of ``{path, sha256}`` with relative paths
    inside the folder (no ``..``, not absolute).
    """
    p = Path(folder) / MANIFEST
    try:
        if p.is_symlink() or not p.is_file() or p.stat().st_size > _MAX_MANIFEST_BYTES:
            return None
        doc = json.loads(p.read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError, ValueError, RecursionError):
        return None
    if not isinstance(doc, dict) or doc.get("format") != MANIFEST_FORMAT or not isinstance(doc.get("files"), list):
        return None
    for f in doc["files"]:
        if not isinstance(f, dict) or not _safe_relative(f.get("path")) or not isinstance(f.get("sha256"), str):
            return None
    return doc


@dataclass
class _Earlier:
    """What an earlier output folder holds, checked against its manifest."""

    manifest: dict
    listed: list[str]                                    # listed files present and unchanged
    changed: list[str] = field(default_factory=list)     # listed, but content differs or not a regular file
    foreign: list[str] = field(default_factory=list)     # present, not listed (the user's)


def _inspect_earlier(folder: Path, manifest: dict) -> _Earlier:
    listed, changed = [], []
    names = set()
    for f in manifest["files"]:
        rel = f["path"]
        names.add(rel)
        p = folder / rel
        # every parent must be a real folder inside the target (no link leads elsewhere)
        if any((folder / PurePosixPath(*PurePosixPath(rel).parts[:k])).is_symlink()
               for k in range(1, len(PurePosixPath(rel).parts))):
            changed.append(rel)
            continue
        if not os.path.lexists(p):
            continue                                      # deleted by the user: nothing to do
        if p.is_symlink() or not p.is_file():
            changed.append(rel)
            continue
        try:
            same = _sha256(p) == f["sha256"]
        except OSError:
            same = False
        (listed if same else changed).append(rel)
    foreign = [rel for rel in _all_entries(folder) if rel not in names and rel != MANIFEST]
    return _Earlier(manifest=manifest, listed=listed, changed=changed, foreign=foreign)


def _all_entries(root: Path) -> list[str]:
    """Relative paths of every file, link and empty folder below ``root``."""
    out = []
    for dirpath, dirnames, filenames in os.walk(root):
        for d in list(dirnames):
            p = Path(dirpath) / d
            if p.is_symlink():
                out.append(p.relative_to(root).as_posix())
                dirnames.remove(d)
        for f in filenames:
            out.append((Path(dirpath) / f).relative_to(root).as_posix())
        if dirpath != str(root) and not dirnames and not filenames:
            out.append(Path(dirpath).relative_to(root).as_posix() + "/")
    return sorted(out)


def _listing(paths: list[str], limit: int = 5) -> str:
    from ..text_safety import terminal_text

    shown = ", ".join(terminal_text(p, limit=120) for p in paths[:limit])
    return shown + (f" and {len(paths) - limit} more" if len(paths) > limit else "")


# ----------------------------------------------------------------------------- target checks

def _problem(given: str, message: str) -> InputError:
    return InputError([Problem(given, "--out", message)])


def _is_empty_dir(p: Path) -> bool:
    try:
        with os.scandir(p) as it:
            return next(it, None) is None
    except OSError:
        return False


def check_target(out: str | Path, *, force: bool, protected: tuple = ()) -> tuple[Path, _Earlier | None]:
    """Check that ``out`` may be written (see the module docstring); nothing is changed.

    Returns the absolute target path and, for an earlier output that ``--force`` will
    replace, what it holds. Raises :class:`InputError` (key ``--out``) otherwise.
    """
    given = str(out)
    target = _check_place(given)
    earlier = None
    if target.is_dir() and not _is_empty_dir(target):
        if not force:
            raise _problem(given, "folder exists and is not empty; choose another folder or add --force (which "
                                  "replaces only the files an earlier uqthermo run wrote there, after the new run succeeds)")
        earlier = _check_force(given, target, protected)
    return target, earlier


def _check_place(given: str) -> Path:
    """The path-level checks of :func:`check_target` (not the folder's content); the absolute target."""
    if not given.strip():
        raise _problem(given, "give a folder name")
    target = Path(os.path.abspath(given))
    if target.exists() or target.is_symlink():
        target = target.resolve()
    parent = target.parent
    anc = parent
    while not os.path.lexists(anc) and anc != anc.parent:
        anc = anc.parent
    if anc.exists() and not anc.is_dir():
        raise _problem(given, f"{anc} is a file, so no folder can be made under it; choose another place")
    if not parent.exists():
        raise _problem(given, f"parent folder {parent} does not exist; create it first")
    if len(os.fsencode(target.name)) > MAX_NAME_BYTES:
        raise _problem(given, f"the folder name is {len(os.fsencode(target.name))} bytes long; at most {MAX_NAME_BYTES} "
                              "(the file system's limit less room for the temporary name used while writing)")
    if target.exists() and not target.is_dir():
        raise _problem(given, "exists and is not a folder")
    if target.is_dir() and os.path.ismount(target):
        raise _problem(given, "is a mount point, which cannot be replaced in one step; give a folder inside it "
                              f"(e.g. {os.path.join(given, 'results')})")
    if not os.access(parent, os.W_OK | os.X_OK):
        raise _problem(given, f"parent folder {parent} is not writable")
    try:
        free = shutil.disk_usage(parent).free
    except OSError:
        free = None
    if free is not None and free < MIN_FREE_BYTES:
        raise _problem(given, f"only {free / 1e6:.1f} MB free on the device of {parent}; the output needs at least "
                              f"{MIN_FREE_BYTES / 1e6:.0f} MB — free some space or choose another place")
    return target


def _check_force(given: str, target: Path, protected: tuple) -> _Earlier:
    for p in [*protected, Path.cwd(), Path.home()]:
        p = Path(p).resolve()
        if p == target or target in p.parents:
            what = "the working folder" if p == Path.cwd().resolve() else (
                "your home folder" if p == Path.home().resolve() else p.name)
            raise _problem(given, f"--force would replace files in the folder that holds {what}; choose a new output "
                                  "folder")
    manifest = read_manifest(target)
    if manifest is None:
        raise _problem(given, f"--force replaces only an earlier uqthermo output, recognised by its manifest {MANIFEST}; "
                              "this folder has none, so nothing in it was written by uqthermo — choose another folder")
    earlier = _inspect_earlier(target, manifest)
    if earlier.changed:
        raise _problem(given, f"--force: {_listing(earlier.changed)} changed since uqthermo wrote "
                              f"{'it' if len(earlier.changed) == 1 else 'them'} (content differs from the manifest); "
                              "move the file(s) away or choose another folder — nothing was replaced")
    return earlier


# ----------------------------------------------------------------------------- lock

def _now_iso() -> str:
    return _dt.datetime.now(_dt.timezone.utc).replace(microsecond=0).isoformat()


def _pid_alive(pid: Any) -> bool:
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


class _Lock:
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
                raise _problem(given, self._owner_text(state))
            # "stale": removed; try again
        raise _problem(given, f"could not take the lock {self.path.name}; if no uqthermo run writes this folder, "
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
            elif info.get("host") != socket.gethostname() or _pid_alive(info.get("pid")):
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


# ----------------------------------------------------------------------------- publishing

@dataclass
class Published:
    """What :meth:`OutputFolder.publish` did."""

    path: Path
    written: list[str]                  # files of the new output (relative paths, manifest excluded)
    replaced: list[str] = field(default_factory=list)     # earlier uqthermo files replaced or removed
    kept: list[str] = field(default_factory=list)         # files in the folder that uqthermo did not write

    def notes(self) -> list[str]:
        """Lines for the terminal about what --force did and did not touch."""
        lines = []
        if self.replaced:
            lines.append(f"replaced the earlier uqthermo output in {self.path} ({len(self.replaced)} files it had written)")
        if self.kept:
            lines.append(f"kept {len(self.kept)} item(s) in {self.path} that uqthermo did not write: {_listing(self.kept)}")
        return lines


class OutputFolder:
    """One output folder, checked and locked for the duration of a command (module docstring)."""

    def __init__(self, out: str | Path, *, force: bool = False, protected: tuple = (), command: str = "run"):
        self.given = str(out)
        self.force = force
        self.protected = tuple(protected)
        self.command = command
        self.path: Path | None = None
        self.outcome: Published | None = None
        self._lock: _Lock | None = None
        self._partial: Path | None = None
        self._replacing = False             # an earlier output was there when the command started

    # -- context
    def __enter__(self) -> "OutputFolder":
        return self.open()

    def __exit__(self, *exc) -> None:
        self.close()

    def open(self) -> "OutputFolder":
        """Check the target and take its lock (before any computation)."""
        target = _check_place(self.given)
        lock = _Lock(target, self.command)
        try:
            lock.acquire(self.given)
        except FileNotFoundError:
            raise _problem(self.given, f"parent folder {target.parent} does not exist") from None
        except OSError as e:
            raise self._os_problem(e) from None
        self._lock = lock
        self.path = target
        try:
            if lock.stale is not None:            # a dead run's leftovers first: they may hold the earlier output
                _clean_after(target, lock.stale)
            _clean_lock_names(lock)
            _, earlier = check_target(self.given, force=self.force, protected=self.protected)
            self._replacing = earlier is not None
            checkpoint("locked")
        except BaseException:
            self.close()
            raise
        return self

    def close(self) -> None:
        """Remove the temporary folder (if any) and release the lock."""
        if self._partial is not None:
            shutil.rmtree(self._partial, ignore_errors=True)
            self._partial = None
        if self._lock is not None:
            self._lock.release()
            self._lock = None

    # -- publishing
    def publish(self, build: Callable[[Path], Any]) -> Any:
        """Build the folder's content with ``build(tmp)`` in a temporary sibling, then publish it.

        Returns what ``build`` returns; :attr:`outcome` tells what was replaced and kept.
        """
        if self._lock is None:
            self.open()
        assert self.path is not None and self._lock is not None
        target = self.path
        token = f"{os.getpid()}-{secrets.token_hex(4)}"
        partial = target.parent / f".{target.name}.{token}.partial"
        try:
            self._lock.update(partial=partial.name)
            os.mkdir(partial, 0o700)
            self._partial = partial
            value = build(partial)
            manifest = _make_manifest(partial, self.command, token)
            _write_json(partial / MANIFEST, manifest)
            _apply_modes(partial)
            checkpoint("built")
            self.outcome = self._commit(partial, manifest, token)
        except OSError as e:
            raise self._os_problem(e) from None
        finally:
            if self._partial is not None:
                shutil.rmtree(self._partial, ignore_errors=True)
                self._partial = None
            with contextlib.suppress(OSError):
                self._lock.update(partial=None, commit=None)
        return value

    def _os_problem(self, e: OSError) -> BaseException:
        """A write failure that is the environment's, not the tool's: a keyed input error."""
        where = f" ({e.filename})" if getattr(e, "filename", None) else ""
        messages = {
            errno.ENOSPC: "no space left on the device while writing the output; free some space or choose another "
                          "place — nothing was written",
            errno.EROFS: "the file system is read-only; choose another place — nothing was written",
            errno.EACCES: f"permission denied while writing{where}; choose another place — nothing was written",
            errno.EPERM: f"operation not permitted while writing{where}; choose another place — nothing was written",
            errno.ENAMETOOLONG: f"a file name is too long for this file system{where}; choose a shorter folder name",
            errno.EBUSY: "the folder is busy (a mount point or in use by another program); give a folder inside it",
            errno.EXDEV: "the folder is on another device than its parent (a mount point); give a folder inside it",
            errno.ENOTDIR: f"a part of the path is not a folder{where}",
        }
        if hasattr(errno, "EDQUOT"):
            messages[errno.EDQUOT] = "disk quota exceeded while writing the output; free some space — nothing was written"
        if e.errno in messages:
            from ..text_safety import terminal_text

            return _problem(self.given, terminal_text(messages[e.errno], limit=600))
        return e

    def _commit(self, partial: Path, manifest: dict, token: str) -> Published:
        target = self.path
        assert target is not None and self._lock is not None
        written = [f["path"] for f in manifest["files"]]
        for _ in range(5):
            if not os.path.lexists(target) or (target.is_dir() and not target.is_symlink() and _is_empty_dir(target)):
                try:
                    with _critical():
                        os.rename(partial, target)
                        self._partial = None
                        published_paths.append(target)
                    return Published(target, written)
                except OSError as e:
                    if e.errno in (errno.ENOTEMPTY, errno.EEXIST, errno.ENOTDIR, errno.EISDIR):
                        continue            # something appeared in between: look again
                    raise
            break
        if not target.is_dir() or target.is_symlink():
            raise _problem(self.given, "a file appeared at this path while the command ran; it was left untouched and "
                                       "nothing was written — choose another folder")
        appeared = ("a folder appeared at this path while the command ran (or got files); it was left untouched and "
                    "nothing was written — ")
        if not self.force:
            raise _problem(self.given, appeared + "choose another folder, or add --force if it is an earlier uqthermo "
                                                  "output")
        try:
            earlier = _check_force(self.given, target, self.protected)
        except InputError as e:
            if self._replacing:
                raise
            raise _problem(self.given, appeared + e.problems[0].message) from None
        return self._replace(partial, manifest, token, earlier)

    def _replace(self, partial: Path, manifest: dict, token: str, earlier: _Earlier) -> Published:
        """--force into an earlier output: swap the listed files, keep everything else."""
        target = self.path
        assert target is not None and self._lock is not None
        new = [f["path"] for f in manifest["files"]]
        old = set(earlier.listed)
        clashes = []
        for rel in new + [MANIFEST]:
            parts = PurePosixPath(rel).parts
            for k in range(1, len(parts)):
                q = target.joinpath(*parts[:k])
                if os.path.lexists(q) and (q.is_symlink() or not q.is_dir()):
                    clashes.append(PurePosixPath(*parts[:k]).as_posix())
            q = target / rel
            if os.path.lexists(q) and rel not in old and rel != MANIFEST:
                clashes.append(rel)
        if clashes:
            raise _problem(self.given, f"--force: {_listing(sorted(set(clashes)))} would be overwritten but "
                                       f"{'was' if len(clashes) == 1 else 'were'} not written by uqthermo; move "
                                       "it away or choose another folder — nothing was replaced")
        backup = target.parent / f".{target.name}.{token}.old"
        journal = {"backup": backup.name, "partial": partial.name, "build": token}
        moved_out: list[str] = []
        moved_in: list[str] = []
        with _critical():
            self._lock.update(commit=journal)
            os.mkdir(backup, 0o700)
            try:
                for rel in sorted(old) + [MANIFEST]:
                    src = target / rel
                    if not os.path.lexists(src):
                        continue
                    (backup / rel).parent.mkdir(parents=True, exist_ok=True)
                    os.rename(src, backup / rel)
                    moved_out.append(rel)
                checkpoint("commit")
                for rel in new:
                    dst = target / rel
                    dst.parent.mkdir(parents=True, exist_ok=True)
                    os.rename(partial / rel, dst)
                    moved_in.append(rel)
                os.rename(partial / MANIFEST, target / MANIFEST)
            except BaseException:
                _roll_back(target, backup, moved_in, moved_out, partial)
                raise
            _prune_empty_dirs(target, [r for r in moved_out if r not in new])
            shutil.rmtree(backup, ignore_errors=True)
            published_paths.append(target)
        kept = [rel for rel in earlier.foreign if rel not in new]
        return Published(target, new, replaced=sorted(set(moved_out) - {MANIFEST}), kept=kept)


def _write_json(path: Path, doc: dict) -> None:
    with open(path, "w", encoding="utf-8") as fh:
        json.dump(doc, fh, indent=1, ensure_ascii=False)
        fh.write("\n")


def _prune_empty_dirs(root: Path, removed: list[str]) -> list[str]:
    """Remove folders below ``root`` that held removed files and are now empty (deepest first)."""
    dirs = set()
    for rel in removed:
        parts = PurePosixPath(rel).parts
        for k in range(1, len(parts)):
            dirs.add(PurePosixPath(*parts[:k]).as_posix())
    gone = []
    for d in sorted(dirs, key=lambda s: -s.count("/")):
        p = root / d
        if p.is_dir() and not p.is_symlink() and _is_empty_dir(p):
            with contextlib.suppress(OSError):
                os.rmdir(p)
                gone.append(d)
    return gone


def _roll_back(target: Path, backup: Path, moved_in: list[str], moved_out: list[str], partial: Path | None) -> None:
    """Undo a partial --force replacement: new files back out, earlier files back in."""
    for rel in reversed(moved_in):
        src = target / rel
        if partial is not None and partial.is_dir():
            with contextlib.suppress(OSError):
                (partial / rel).parent.mkdir(parents=True, exist_ok=True)
                os.rename(src, partial / rel)
                continue
        with contextlib.suppress(OSError):
            os.unlink(src)
    for rel in moved_out:
        with contextlib.suppress(OSError):
            dst = target / rel
            if not os.path.lexists(dst):
                dst.parent.mkdir(parents=True, exist_ok=True)
                os.rename(backup / rel, dst)
    shutil.rmtree(backup, ignore_errors=True)


def _clean_lock_names(lock: _Lock) -> None:
    """Remove temporary lock names (``.NAME.uqthermo-lock.<pid>-<token>``) of dead processes on this host:
    a run killed in the instant between creating its lock and linking it leaves one."""
    pattern = re.compile(r"^%s\.(\d+)-[0-9a-f]{8}$" % re.escape(lock.path.name))
    try:
        names = os.listdir(lock.path.parent)
    except OSError:
        return
    for name in names:
        m = pattern.match(name)
        if m and not _pid_alive(int(m.group(1))):
            with contextlib.suppress(OSError):
                os.unlink(lock.path.parent / name)


def _clean_after(target: Path, stale: dict) -> None:
    """Remove what a dead run left for ``target`` (its lock file recorded it): the temporary
    folder, and — if it died while replacing an earlier output — put the earlier files back."""
    parent = target.parent
    pattern = re.compile(r"^\.%s\.\d+-[0-9a-f]{8}\.(partial|old)$" % re.escape(target.name))

    def ours(name: Any) -> Path | None:
        if isinstance(name, str) and pattern.match(name):
            p = parent / name
            if p.is_dir() and not p.is_symlink():
                return p
        return None

    commit = stale.get("commit") if isinstance(stale.get("commit"), dict) else None
    if commit:
        backup, partial = ours(commit.get("backup")), ours(commit.get("partial"))
        current = read_manifest(target) if target.is_dir() else None
        done = current is not None and current.get("build") == commit.get("build")
        if backup is not None and not done:
            # the new manifest never arrived: the replacement was cut short — undo it
            incoming = read_manifest(partial) if partial is not None else None
            new = [f["path"] for f in (incoming or {}).get("files", []) if _safe_relative(f.get("path"))]
            in_target = []
            for rel in new:
                p = target / rel
                if p.is_file() and not p.is_symlink() and partial is not None and not (partial / rel).exists():
                    in_target.append(rel)
            out = [rel for rel in _files_below(backup)]
            _roll_back(target, backup, in_target, out, partial)
        elif backup is not None:
            shutil.rmtree(backup, ignore_errors=True)
    p = ours(stale.get("partial"))
    if p is not None:
        shutil.rmtree(p, ignore_errors=True)
