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
import errno
import json
import os
import re
import shutil
import secrets
from dataclasses import dataclass, field
from pathlib import Path, PurePosixPath
from typing import Any, Callable

from ..errors import InputError
from .folder_lock import FolderLock, clean_lock_names
from .interrupts import checkpoint, critical_section
from .manifest import MANIFEST, EarlierOutput, files_below, listing, make_manifest, read_manifest, safe_relative
from .target_checks import check_force, check_place, check_target, is_empty_dir, out_problem

__all__ = ["OutputFolder", "Published", "file_mode", "dir_mode", "published_paths"]

#: folders published by this process (the interrupt message says whether output was written)
published_paths: list[Path] = []


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


def apply_modes(root: Path) -> None:
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
            lines.append(f"kept {len(self.kept)} item(s) in {self.path} that uqthermo did not write: {listing(self.kept)}")
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
        self._lock: FolderLock | None = None
        self._partial: Path | None = None
        self._replacing = False             # an earlier output was there when the command started

    # -- context
    def __enter__(self) -> "OutputFolder":
        return self.open()

    def __exit__(self, *exc) -> None:
        self.close()

    def open(self) -> "OutputFolder":
        """Check the target and take its lock (before any computation)."""
        target = check_place(self.given)
        lock = FolderLock(target, self.command)
        try:
            lock.acquire(self.given)
        except FileNotFoundError:
            raise out_problem(self.given, f"parent folder {target.parent} does not exist") from None
        except OSError as e:
            raise self._os_problem(e) from None
        self._lock = lock
        self.path = target
        try:
            if lock.stale is not None:            # a dead run's leftovers first: they may hold the earlier output
                _clean_after(target, lock.stale)
            clean_lock_names(lock)
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
            manifest = make_manifest(partial, self.command, token)
            _write_json(partial / MANIFEST, manifest)
            apply_modes(partial)
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

            return out_problem(self.given, terminal_text(messages[e.errno], limit=600))
        return e

    def _commit(self, partial: Path, manifest: dict, token: str) -> Published:
        target = self.path
        assert target is not None and self._lock is not None
        written = [f["path"] for f in manifest["files"]]
        for _ in range(5):
            if not os.path.lexists(target) or (target.is_dir() and not target.is_symlink() and is_empty_dir(target)):
                try:
                    with critical_section():
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
            raise out_problem(self.given, "a file appeared at this path while the command ran; it was left untouched and "
                                       "nothing was written — choose another folder")
        appeared = ("a folder appeared at this path while the command ran (or got files); it was left untouched and "
                    "nothing was written — ")
        if not self.force:
            raise out_problem(self.given, appeared + "choose another folder, or add --force if it is an earlier uqthermo "
                                                  "output")
        try:
            earlier = check_force(self.given, target, self.protected)
        except InputError as e:
            if self._replacing:
                raise
            raise out_problem(self.given, appeared + e.problems[0].message) from None
        return self._replace(partial, manifest, token, earlier)

    def _replace(self, partial: Path, manifest: dict, token: str, earlier: EarlierOutput) -> Published:
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
            raise out_problem(self.given, f"--force: {listing(sorted(set(clashes)))} would be overwritten but "
                                       f"{'was' if len(clashes) == 1 else 'were'} not written by uqthermo; move "
                                       "it away or choose another folder — nothing was replaced")
        backup = target.parent / f".{target.name}.{token}.old"
        journal = {"backup": backup.name, "partial": partial.name, "build": token}
        moved_out: list[str] = []
        moved_in: list[str] = []
        with critical_section():
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
        if p.is_dir() and not p.is_symlink() and is_empty_dir(p):
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
            new = [f["path"] for f in (incoming or {}).get("files", []) if safe_relative(f.get("path"))]
            in_target = []
            for rel in new:
                p = target / rel
                if p.is_file() and not p.is_symlink() and partial is not None and not (partial / rel).exists():
                    in_target.append(rel)
            out = [rel for rel in files_below(backup)]
            _roll_back(target, backup, in_target, out, partial)
        elif backup is not None:
            shutil.rmtree(backup, ignore_errors=True)
    p = ours(stale.get("partial"))
    if p is not None:
        shutil.rmtree(p, ignore_errors=True)
