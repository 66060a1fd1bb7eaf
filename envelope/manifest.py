"""The manifest of an output folder: what this tool wrote there, file by file (edge).

``manifest.json`` lists every file of an output folder with its SHA-256, and every
sub-folder. It is written last into the staging folder and is what makes a folder "ours":
``--replace`` and ``rerender`` touch only files it lists, unchanged since. Paths in it are
checked (relative, no ``..``, no symbolic link on the way) before anything acts on them, so a
forged manifest cannot reach outside the folder.
"""

from __future__ import annotations

import hashlib
import json
import os
from pathlib import Path, PurePosixPath

__all__ = [
    "MANIFEST",
    "MANIFEST_FORMAT",
    "MANIFEST_VERSION",
    "PARTIAL_MARKER",
    "plain_inside",
    "read_manifest",
    "safe_rel",
    "sha256",
    "strangers",
    "write_manifest",
]

MANIFEST = "manifest.json"
"""File listing every file an output folder holds, with its SHA-256 (written last)."""
MANIFEST_FORMAT = "envelope-output"
MANIFEST_VERSION = 1
PARTIAL_MARKER = ".envelope-partial"
"""Marker inside a staging folder: JSON with the writing process id and host."""
MAX_MANIFEST_BYTES = 16 * 1024 * 1024


def safe_rel(rel) -> PurePosixPath | None:
    """A manifest path: relative, POSIX, no ``..``, not empty; else None."""
    if not isinstance(rel, str) or not rel or "\\" in rel or "\x00" in rel:
        return None
    p = PurePosixPath(rel)
    if p.is_absolute() or any(part in ("", ".", "..") for part in p.parts):
        return None
    return p


def plain_inside(root: Path, rel: PurePosixPath) -> Path | None:
    """``root/rel`` when no component of it is a symbolic link, else None."""
    cur = root
    for part in rel.parts:
        cur = cur / part
        if os.path.islink(cur):
            return None
    return cur


def sha256(path: Path) -> str:
    """SHA-256 of a file, hex."""
    h = hashlib.sha256()
    with open(path, "rb") as f:
        for block in iter(lambda: f.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()



def write_manifest(folder: Path, command: str) -> None:
    """Write `MANIFEST` into `folder`: every file (but the marker) with its SHA-256."""
    files, folders = {}, []
    for dirpath, dirnames, filenames in os.walk(folder):
        base = Path(dirpath)
        for d in dirnames:
            folders.append((base / d).relative_to(folder).as_posix())
        for f in filenames:
            rel = (base / f).relative_to(folder).as_posix()
            if rel in (PARTIAL_MARKER, MANIFEST):
                continue
            files[rel] = sha256(base / f)
    doc = {"format": MANIFEST_FORMAT, "version": MANIFEST_VERSION, "command": command,
           "files": dict(sorted(files.items())), "folders": sorted(folders)}
    (folder / MANIFEST).write_text(json.dumps(doc, indent=1, sort_keys=True) + "\n",
                                   encoding="utf-8")


def read_manifest(folder: str | Path) -> dict | None:
    """The manifest of an output folder this tool wrote, or None (absent, foreign, broken).

    Only entries with safe relative paths (no ``..``, not absolute) are returned.
    """
    p = Path(folder) / MANIFEST
    try:
        if os.path.islink(p) or not p.is_file() or p.stat().st_size > MAX_MANIFEST_BYTES:
            return None
        doc = json.loads(p.read_text(encoding="utf-8"))
    except (OSError, ValueError, RecursionError):
        return None
    if not isinstance(doc, dict) or doc.get("format") != MANIFEST_FORMAT \
            or doc.get("version") != MANIFEST_VERSION:
        return None
    files, folders = doc.get("files"), doc.get("folders", [])
    if not isinstance(files, dict) or not isinstance(folders, list):
        return None
    if any(safe_rel(k) is None or not isinstance(v, str) for k, v in files.items()):
        return None
    if any(safe_rel(d) is None for d in folders):
        return None
    return {"command": doc.get("command"), "files": files, "folders": folders}


def strangers(folder: Path, manifest: dict, limit: int = 3) -> list[str]:
    """Entries of `folder` the manifest does not vouch for (foreign, changed, links)."""
    out = []
    files, folders = manifest["files"], set(manifest["folders"])
    for dirpath, dirnames, filenames in os.walk(folder):
        base = Path(dirpath)
        for d in dirnames:
            rel = (base / d).relative_to(folder).as_posix()
            if os.path.islink(base / d) or rel not in folders:
                out.append(rel + "/")
        for f in filenames:
            rel = (base / f).relative_to(folder).as_posix()
            if rel in (MANIFEST, PARTIAL_MARKER):
                continue
            p = base / f
            if os.path.islink(p) or not p.is_file() or rel not in files:
                out.append(rel)
            elif sha256(p) != files[rel]:
                out.append(rel + " (changed)")
        if len(out) >= limit:
            break
    return out[:limit]
