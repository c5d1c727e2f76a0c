"""The manifest of an output folder (:data:`MANIFEST`): every file uqthermo wrote, with its size and
SHA-256, so that ``--force`` later replaces exactly those files and nothing of the user's."""

from __future__ import annotations

import hashlib
import json
import os
from dataclasses import dataclass, field
from pathlib import Path, PurePosixPath
from typing import Any

__all__ = ["MANIFEST", "MANIFEST_FORMAT", "sha256_of", "files_below", "make_manifest", "safe_relative", "read_manifest",
           "EarlierOutput", "inspect_earlier", "all_entries", "listing"]

MANIFEST = ".uqthermo-manifest.json"
MANIFEST_FORMAT = "uqthermo.manifest/1"
#: largest earlier manifest read (bytes)
_MAX_MANIFEST_BYTES = 16 * 1024 * 1024


def sha256_of(path: Path) -> str:
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()


def files_below(root: Path) -> list[str]:
    """Relative POSIX paths of every regular file below ``root`` (links are not followed)."""
    out = []
    for dirpath, dirnames, filenames in os.walk(root):
        dirnames.sort()
        for f in filenames:
            p = Path(dirpath) / f
            if p.is_file() and not p.is_symlink():
                out.append(p.relative_to(root).as_posix())
    return sorted(out)


def make_manifest(root: Path, command: str, build: str) -> dict:
    from .. import __version__

    files = [{"path": rel, "bytes": (root / rel).stat().st_size, "sha256": sha256_of(root / rel)}
             for rel in files_below(root) if rel != MANIFEST]
    return {"format": MANIFEST_FORMAT, "tool": "uqthermo", "version": __version__, "command": command,
            "build": build, "files": files}


def safe_relative(rel: Any) -> bool:
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
        if not isinstance(f, dict) or not safe_relative(f.get("path")) or not isinstance(f.get("sha256"), str):
            return None
    return doc


@dataclass
class EarlierOutput:
    """What an earlier output folder holds, checked against its manifest."""

    manifest: dict
    listed: list[str]                                    # listed files present and unchanged
    changed: list[str] = field(default_factory=list)     # listed, but content differs or not a regular file
    foreign: list[str] = field(default_factory=list)     # present, not listed (the user's)


def inspect_earlier(folder: Path, manifest: dict) -> EarlierOutput:
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
            same = sha256_of(p) == f["sha256"]
        except OSError:
            same = False
        (listed if same else changed).append(rel)
    foreign = [rel for rel in all_entries(folder) if rel not in names and rel != MANIFEST]
    return EarlierOutput(manifest=manifest, listed=listed, changed=changed, foreign=foreign)


def all_entries(root: Path) -> list[str]:
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


def listing(paths: list[str], limit: int = 5) -> str:
    from ..text_safety import terminal_text

    shown = ", ".join(terminal_text(p, limit=120) for p in paths[:limit])
    return shown + (f" and {len(paths) - limit} more" if len(paths) > limit else "")
