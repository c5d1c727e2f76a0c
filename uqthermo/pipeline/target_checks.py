"""Checks of an output folder's place before any work: parent, name length, mount point, free space,
and whether ``--force`` may replace what is there (only an earlier uqthermo output, unchanged)."""

from __future__ import annotations

import os
import shutil
from pathlib import Path

from ..errors import InputError, Problem
from .manifest import MANIFEST, EarlierOutput, inspect_earlier, listing, read_manifest

__all__ = ["MAX_NAME_BYTES", "MIN_FREE_BYTES", "out_problem", "is_empty_dir", "check_target", "check_place", "check_force"]

#: longest folder name (bytes): the file system's limit (255) less room for ".NAME.<pid>-<token>.partial"
MAX_NAME_BYTES = 200
#: refuse to start when the device of --out has less free space than this (a report needs a few MB)
MIN_FREE_BYTES = 20 * 1024 * 1024


def out_problem(given: str, message: str) -> InputError:
    return InputError([Problem(given, "--out", message)])


def is_empty_dir(p: Path) -> bool:
    try:
        with os.scandir(p) as it:
            return next(it, None) is None
    except OSError:
        return False


def check_target(out: str | Path, *, force: bool, protected: tuple = ()) -> tuple[Path, EarlierOutput | None]:
    """Check that ``out`` may be written (see the module docstring); nothing is changed.

    Returns the absolute target path and, for an earlier output that ``--force`` will
    replace, what it holds. Raises :class:`InputError` (key ``--out``) otherwise.
    """
    given = str(out)
    target = check_place(given)
    earlier = None
    if target.is_dir() and not is_empty_dir(target):
        if not force:
            raise out_problem(given, "folder exists and is not empty; choose another folder or add --force (which "
                                  "replaces only the files an earlier uqthermo run wrote there, after the new run succeeds)")
        earlier = check_force(given, target, protected)
    return target, earlier


def check_place(given: str) -> Path:
    """The path-level checks of :func:`check_target` (not the folder's content); the absolute target."""
    if not given.strip():
        raise out_problem(given, "give a folder name")
    target = Path(os.path.abspath(given))
    if target.exists() or target.is_symlink():
        target = target.resolve()
    parent = target.parent
    anc = parent
    while not os.path.lexists(anc) and anc != anc.parent:
        anc = anc.parent
    if anc.exists() and not anc.is_dir():
        raise out_problem(given, f"{anc} is a file, so no folder can be made under it; choose another place")
    if not parent.exists():
        raise out_problem(given, f"parent folder {parent} does not exist; create it first")
    if len(os.fsencode(target.name)) > MAX_NAME_BYTES:
        raise out_problem(given, f"the folder name is {len(os.fsencode(target.name))} bytes long; at most {MAX_NAME_BYTES} "
                              "(the file system's limit less room for the temporary name used while writing)")
    if target.exists() and not target.is_dir():
        raise out_problem(given, "exists and is not a folder")
    if target.is_dir() and os.path.ismount(target):
        raise out_problem(given, "is a mount point, which cannot be replaced in one step; give a folder inside it "
                              f"(e.g. {os.path.join(given, 'results')})")
    if not os.access(parent, os.W_OK | os.X_OK):
        raise out_problem(given, f"parent folder {parent} is not writable")
    try:
        free = shutil.disk_usage(parent).free
    except OSError:
        free = None
    if free is not None and free < MIN_FREE_BYTES:
        raise out_problem(given, f"only {free / 1e6:.1f} MB free on the device of {parent}; the output needs at least "
                              f"{MIN_FREE_BYTES / 1e6:.0f} MB — free some space or choose another place")
    return target


def check_force(given: str, target: Path, protected: tuple) -> EarlierOutput:
    for p in [*protected, Path.cwd(), Path.home()]:
        p = Path(p).resolve()
        if p == target or target in p.parents:
            what = "the working folder" if p == Path.cwd().resolve() else (
                "your home folder" if p == Path.home().resolve() else p.name)
            raise out_problem(given, f"--force would replace files in the folder that holds {what}; choose a new output "
                                  "folder")
    manifest = read_manifest(target)
    if manifest is None:
        raise out_problem(given, f"--force replaces only an earlier uqthermo output, recognised by its manifest {MANIFEST}; "
                              "this folder has none, so nothing in it was written by uqthermo — choose another folder")
    earlier = inspect_earlier(target, manifest)
    if earlier.changed:
        raise out_problem(given, f"--force: {listing(earlier.changed)} changed since uqthermo wrote "
                              f"{'it' if len(earlier.changed) == 1 else 'them'} (content differs from the manifest); "
                              "move the file(s) away or choose another folder — nothing was replaced")
    return earlier
