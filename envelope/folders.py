"""Output folders that cannot hurt inputs (edge: file system).

Rules (SPEC §6, issue 12):

- ``--out`` that is, contains or lies inside an input folder (the survey folder) is refused,
  after resolving symbolic links, with or without ``--replace``.
- Outputs are written into a hidden staging folder beside the target,
  ``.NAME.partial-PID-XXXX``, holding a marker file with the process id, and moved into place
  by one ``rename`` at the end. An absent or empty target is taken atomically; a file that
  appears in it during the run makes the rename fail and is kept, with the new outputs moved
  to a visible folder beside it.
- An existing non-empty target is never touched without ``--replace``; with it, only a folder
  this tool wrote is replaced: it carries ``manifest.json``, the list of every file written
  with its SHA-256, and holds nothing else. The old folder is swapped out by ``rename`` and
  only the files of its manifest that are unchanged are deleted; anything else (a file put
  there during the run) stays, in a visible folder named in a note.
- A lock ``.NAME.lock`` beside the target refuses a second run to the same target; it names
  the process id. A lock whose process is gone (killed, crashed) is taken over.
- SIGINT, SIGTERM and SIGHUP (when `Interrupts` is installed) unwind like an error, so the
  staging folder is removed; leftovers of a killed run (``kill -9``, power loss) are
  recognised by their marker and removed by the next run to the same target once their
  process is gone.
- Folders are created with ``mkdir`` and files with ``open``: both follow the user's umask.
"""

from __future__ import annotations

import contextlib
import errno
import json
import os
import secrets
import shutil
import socket
from pathlib import Path, PurePosixPath

from .errors import SurveyError
from .faults import os_error_to_survey_error
from .interrupts import Interrupted, Interrupts, no_hold
from .manifest import (
    MANIFEST,
    MANIFEST_FORMAT,
    MANIFEST_VERSION,
    PARTIAL_MARKER,
    plain_inside,
    read_manifest,
    safe_rel,
    sha256,
    strangers,
    write_manifest,
)

try:  # POSIX advisory locks; elsewhere the process id alone tells a live lock
    import fcntl
except ImportError:  # pragma: no cover - not POSIX
    fcntl = None

__all__ = [
    "MANIFEST",
    "Interrupted",
    "Interrupts",
    "check_apart",
    "read_manifest",
    "refreshed_folder",
    "staged_folder",
]

# --------------------------------------------------------------------------------------
# paths
# --------------------------------------------------------------------------------------


def _real(path, given, field: str = "--out") -> Path:
    try:
        return Path(os.path.abspath(Path(path).expanduser())).resolve()
    except RuntimeError:  # symlink loop (Python < 3.13)
        raise SurveyError("symbolic link loop in this path; check the links", str(given), field) from None
    except ValueError:  # NUL character
        raise SurveyError("path contains a NUL character; choose another path", None, field) from None
    except OSError as exc:
        raise os_error_to_survey_error(exc, "write", given, field) from None


def _same(a: Path, b: Path) -> bool:
    try:
        return os.path.samefile(a, b)
    except OSError:
        return False


def check_apart(out: Path, inputs, given=None) -> None:
    """Refuse an output folder that is, contains or lies inside one of the `inputs` folders.

    Parameters
    ----------
    out : path
        The output folder, resolved (`Path.resolve`).
    inputs : iterable of path
        Input folders (the survey folder); resolved here.
    given : path, optional
        The output folder as the user wrote it (for the message).

    Notes
    -----
    Paths are compared after resolving symbolic links and ``..``, then by file identity
    (device and inode) of the existing ancestors, which also catches case-insensitive file
    systems and bind mounts.
    """
    given = out if given is None else given
    for inp in inputs:
        inp = _real(inp, inp, "survey")
        how = None
        if out == inp:
            how = "is"
        elif inp.is_relative_to(out):
            how = "contains"
        elif out.is_relative_to(inp):
            how = "lies inside"
        else:
            for anc in (out, *out.parents):
                if os.path.exists(anc) and _same(anc, inp):
                    how = "is" if anc == out else "lies inside"
                    break
            if how is None and os.path.exists(out):
                if any(_same(anc, out) for anc in inp.parents if os.path.exists(anc)):
                    how = "contains"
        if how:
            raise SurveyError(
                f"the output folder {how} the input folder {inp}; inputs are never written to: "
                "choose an --out outside the survey folder (with or without --replace)",
                str(given), "--out")


# --------------------------------------------------------------------------------------
# lock and leftovers
# --------------------------------------------------------------------------------------


def _owner_text() -> str:
    return json.dumps({"tool": "envelope", "pid": os.getpid(), "host": socket.gethostname()})


def _read_owner(path: Path) -> dict | None:
    try:
        with open(path, "rb") as f:
            doc = json.loads(f.read(4096).decode("utf-8"))
    except (OSError, ValueError):
        return None
    if isinstance(doc, dict) and isinstance(doc.get("pid"), int) and doc.get("tool") == "envelope":
        return doc
    return None


def _alive(owner: dict) -> bool:
    """Whether the process of a lock or marker may still run (unknown counts as alive)."""
    if owner.get("host") != socket.gethostname():
        return True
    pid = owner["pid"]
    if pid == os.getpid():
        return True
    if pid <= 0:
        return False
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except OSError:
        return True
    return True


class _Lock:
    """``.NAME.lock`` beside the output folder, held for the whole run."""

    def __init__(self, out: Path, given, field: str | None = "--out"):
        self.path = out.parent / f".{out.name}.lock"
        self.given = given
        self.field = field
        self.fd = None

    def _refuse(self, owner):
        who = f"pid {owner['pid']}" if owner else "a process whose lock cannot be read"
        raise SurveyError(
            f"another envelope run ({who}) is writing this output folder (lock {self.path}); "
            "wait for it to finish, or remove the lock if no such run exists",
            str(self.given), self.field)

    def __enter__(self):
        for _ in range(20):
            fd = os.open(self.path, os.O_RDWR | os.O_CREAT | getattr(os, "O_NOFOLLOW", 0), 0o666)
            try:
                if fcntl is not None:
                    try:
                        fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
                    except BlockingIOError:
                        self._refuse(_read_owner(self.path))
                    # the file may have been unlinked by its previous holder meanwhile
                    try:
                        same = os.fstat(fd).st_ino == os.stat(self.path).st_ino
                    except FileNotFoundError:
                        same = False
                    if not same:
                        os.close(fd)
                        continue
                else:  # pragma: no cover - not POSIX
                    owner = _read_owner(self.path)
                    if owner is not None and _alive(owner):
                        self._refuse(owner)
                if os.fstat(fd).st_size and _read_owner(self.path) is None:
                    raise SurveyError(f"{self.path.name} beside it was not written by envelope; "
                                      "move it away and run again", str(self.path), self.field)
                os.ftruncate(fd, 0)
                os.write(fd, _owner_text().encode("utf-8"))
            except BaseException:
                with contextlib.suppress(OSError):
                    os.close(fd)
                raise
            self.fd = fd
            return self
        self._refuse(_read_owner(self.path))

    def __exit__(self, *exc):
        if self.fd is not None:
            owner = _read_owner(self.path)
            if owner is not None and owner.get("pid") == os.getpid():
                with contextlib.suppress(OSError):
                    os.unlink(self.path)
            with contextlib.suppress(OSError):
                os.close(self.fd)
            self.fd = None


def _clean_leftovers(out: Path, notes: list) -> None:
    """Remove staging folders of earlier runs to `out` whose process is gone.

    Only folders named ``.NAME.partial-*`` holding a readable marker of this tool qualify;
    old output folders left by a run killed mid-swap (``.NAME.old-PID``) lose only the
    unchanged files of their manifest (see `_discard_old`).
    """
    prefix = f".{out.name}."
    try:
        entries = list(os.scandir(out.parent))
    except OSError:
        return
    for e in entries:
        if not e.name.startswith(prefix) or not e.is_dir(follow_symlinks=False):
            continue
        kind = e.name[len(prefix):]
        p = Path(e.path)
        if kind.startswith("partial-"):
            owner = _read_owner(p / PARTIAL_MARKER)
            if owner is not None and not _alive(owner):
                _remove_partial(p)
        elif kind.startswith("old-"):
            pid = kind[len("old-"):]
            if pid.isdigit() and not _alive({"pid": int(pid), "host": socket.gethostname()}):
                _discard_old(p, out, notes)


def _new_partial(out: Path) -> Path:
    for _ in range(100):
        p = out.parent / f".{out.name}.partial-{os.getpid()}-{secrets.token_hex(4)}"
        try:
            os.mkdir(p, 0o777)  # the umask applies (mkdtemp would make 0700)
        except FileExistsError:
            continue
        (p / PARTIAL_MARKER).write_text(_owner_text(), encoding="utf-8")
        return p
    raise FileExistsError(errno.EEXIST, "no free staging name", str(out.parent))


def _remove_partial(tmp: Path) -> None:
    """Delete a staging folder, its marker last, so that a cut-short cleanup still leaves a
    folder the next run recognises."""
    with contextlib.suppress(OSError), os.scandir(tmp) as it:
        for e in list(it):
            if e.name == PARTIAL_MARKER:
                continue
            if e.is_dir(follow_symlinks=False):
                shutil.rmtree(e.path, ignore_errors=True)
            else:
                with contextlib.suppress(OSError):
                    os.unlink(e.path)
    with contextlib.suppress(OSError):
        os.unlink(tmp / PARTIAL_MARKER)
    with contextlib.suppress(OSError):
        os.rmdir(tmp)


def _visible_name(out: Path, what: str) -> Path:
    for i in range(1000):
        p = out.with_name(f"{out.name}.{what}-{os.getpid()}" + (f"-{i}" if i else ""))
        if not os.path.lexists(p):
            return p
    raise FileExistsError(errno.EEXIST, "no free name", str(out))


def _discard_old(old: Path, out: Path, notes: list) -> None:
    """Delete the unchanged files of `old`'s manifest; keep anything else in a visible folder."""
    try:
        manifest = read_manifest(old)
        if manifest is not None:
            for rel, digest in manifest["files"].items():
                p = plain_inside(old, safe_rel(rel))
                if p is not None and p.is_file() and sha256(p) == digest:
                    p.unlink()
            for d in sorted(manifest["folders"], key=lambda r: -len(PurePosixPath(r).parts)):
                p = plain_inside(old, safe_rel(d))
                if p is not None:
                    with contextlib.suppress(OSError):
                        os.rmdir(p)
            (old / MANIFEST).unlink()
        marker = old / PARTIAL_MARKER
        if os.path.isfile(marker) and not os.path.islink(marker):
            marker.unlink()
        os.rmdir(old)
        return
    except OSError:
        pass
    try:
        keep = _visible_name(out, "old")
        os.rename(old, keep)
    except OSError:
        keep = old
    notes.append(f"the previous output folder held files envelope did not write (or that "
                 f"changed since); they were kept in {keep}")


def _make_parents(folder: Path) -> list[Path]:
    missing = []
    p = folder
    while not os.path.lexists(p) and p != p.parent:
        missing.append(p)
        p = p.parent
    created = []
    try:
        for d in reversed(missing):
            os.mkdir(d, 0o777)
            created.append(d)
    except BaseException:
        _remove_created(created)
        raise
    return created


def _remove_created(created: list[Path]) -> None:
    for d in reversed(created):
        with contextlib.suppress(OSError):
            os.rmdir(d)


def _target_state(out: Path, given, replace: bool) -> str:
    if not os.path.lexists(out):
        return "absent"
    if not out.is_dir():
        raise SurveyError("exists and is not a folder; choose another --out", str(given), "--out")
    with os.scandir(out) as it:
        if next(it, None) is None:
            return "empty"
    if not replace:
        raise SurveyError("output folder exists and is not empty; choose a new one, or pass "
                          "--replace to replace an earlier output of envelope", str(given), "--out")
    manifest = read_manifest(out)
    if manifest is None:
        raise SurveyError(f"not replaced: this folder was not written by envelope (no valid "
                          f"{MANIFEST}); choose another --out or empty it yourself",
                          str(given), "--out")
    foreign = strangers(out, manifest)
    if foreign:
        raise SurveyError("not replaced: it holds files envelope did not write or that changed "
                          f"since: {', '.join(foreign)}; move them away or choose another --out",
                          str(given), "--out")
    return "ours"


def _fault(exc: OSError, out: Path, given, tmp: Path | None,
           field: str | None = "--out") -> SurveyError:
    """Name the path of a fault by what the user knows: staging paths become ``--out``."""
    action = "write" if field else "rewrite"
    name = exc.filename if isinstance(exc.filename, str) else None
    hidden = str(out.parent / f".{out.name}.")
    if name is None or name.startswith(hidden):
        rename = None
        if tmp is not None and name is not None and name.startswith(str(tmp)):
            rename = (str(tmp), str(given))
        elif name is not None:
            name = None
        if rename is None and name is None:
            exc = OSError(exc.errno, exc.strerror)
        return os_error_to_survey_error(exc, action, given, field, rename)
    inside_out = name.startswith(str(out) + os.sep) or name == str(out)
    if inside_out or not os.path.exists(name) or tmp is None:
        return os_error_to_survey_error(exc, action, None, field)
    return os_error_to_survey_error(exc, "read")  # an input read while writing


# --------------------------------------------------------------------------------------
# the two ways of writing
# --------------------------------------------------------------------------------------


@contextlib.contextmanager
def staged_folder(out_dir: str | Path, replace: bool = False, inputs=(), command: str = "assess",
                  hold=None, notes: list | None = None):
    """Yield a staging folder; on success move it to `out_dir`, on any failure delete it.

    Parameters
    ----------
    out_dir : path
        The output folder to create (or replace).
    replace : bool
        Replace an existing output folder written by this tool (see the module notes).
    inputs : iterable of path
        Input folders `out_dir` must stay apart from (the survey folder).
    command : str
        Recorded in the manifest.
    hold : callable, optional
        ``Interrupts.hold``: defers signals over the final renames.
    notes : list, optional
        Receives lines for the user (where an old output folder was kept).

    Raises
    ------
    SurveyError
        On a refused target, a live lock or a file-system fault (naming the path).

    Examples
    --------
    >>> with staged_folder("out", inputs=["survey"]) as tmp:          # doctest: +SKIP
    ...     (tmp / "results.json").write_text("{}")
    """
    given = Path(out_dir)
    out = _real(given, given)
    hold = hold or no_hold
    notes = [] if notes is None else notes
    check_apart(out, inputs, given)
    if os.path.lexists(out) and not out.is_dir():
        raise SurveyError("exists and is not a folder; choose another --out", str(given), "--out")
    created, tmp, done = [], None, False
    try:
        created = _make_parents(out.parent)
        with _Lock(out, given):
            _clean_leftovers(out, notes)
            _target_state(out, given, replace)
            tmp = _new_partial(out)
            try:
                yield tmp
                write_manifest(tmp, command)
                _commit(tmp, out, given, replace, hold, notes)
            finally:
                if os.path.lexists(tmp):
                    _remove_partial(tmp)
            done = True
    except OSError as exc:
        raise _fault(exc, out, given, tmp) from None
    finally:
        if not done:
            _remove_created(created)


def _commit(tmp: Path, out: Path, given, replace: bool, hold, notes: list) -> None:
    with hold(committed=given):
        try:
            os.rename(tmp, out)  # absent or empty target: atomic; a non-empty one refuses
        except OSError as exc:
            if exc.errno not in (errno.EEXIST, errno.ENOTEMPTY) or not out.is_dir():
                raise
            if not replace or read_manifest(out) is None:
                # someone else's folder appeared during the run: left as it is
                keep = _visible_name(out, "new")
                os.rename(tmp, keep)
                with contextlib.suppress(OSError):
                    (keep / PARTIAL_MARKER).unlink()
                raise SurveyError(f"a folder appeared here during the run and is not empty; it "
                                  f"was left untouched and the new outputs are in {keep}",
                                  str(given), "--out") from None
            old = out.parent / f".{out.name}.old-{os.getpid()}"
            os.rename(out, old)
            try:
                os.rename(tmp, out)
            except BaseException:
                os.rename(old, out)
                raise
            _discard_old(old, out, notes)
        with contextlib.suppress(OSError):
            (out / PARTIAL_MARKER).unlink()


@contextlib.contextmanager
def refreshed_folder(out_dir: str | Path, hold=None, command: str = "rerender",
                     expected=()):
    """Yield a staging folder whose new or changed files then replace those of `out_dir`.

    For rewriting the reports of an output folder in place (``envelope rerender``). A file is
    replaced only when the folder's manifest lists it and it is unchanged since; the
    manifest is updated last. Each file is replaced atomically (``os.replace``). The files
    of `expected` (relative paths) are checked before anything is written, so that a refusal
    comes before the work.

    Raises
    ------
    SurveyError
        When `out_dir` was not written by this tool, a file to replace is foreign or was
        changed, the folder is locked, or on a file-system fault.
    """
    given = Path(out_dir)
    out = _real(given, given, "output folder")
    hold = hold or no_hold
    if not out.is_dir():
        raise SurveyError("not a folder; expected an output folder written by `envelope assess`",
                          str(given))
    if read_manifest(out) is None:
        raise SurveyError(f"no valid {MANIFEST}: not an output folder written by this version "
                          "of envelope; run `envelope assess` again", str(given), MANIFEST)
    tmp = None
    try:
        with _Lock(out, given, None):
            _clean_leftovers(out, [])
            manifest = read_manifest(out)
            if manifest is None:
                raise SurveyError(f"no valid {MANIFEST}", str(given), MANIFEST)
            for rel in expected:
                _check_replaceable(out, given, manifest, rel)
            tmp = _new_partial(out)
            try:
                yield tmp
                _commit_changed(tmp, out, given, manifest, command, hold)
            finally:
                if os.path.lexists(tmp):
                    _remove_partial(tmp)
    except OSError as exc:
        raise _fault(exc, out, given, tmp, None) from None


def _check_replaceable(out: Path, given, manifest: dict, rel: str) -> Path:
    """``out/rel`` if absent, or present and written by this tool unchanged; else refuse."""
    dst = plain_inside(out, PurePosixPath(rel))
    if dst is None:
        raise SurveyError("a symbolic link is in the way; move it away", str(Path(given) / rel))
    if os.path.lexists(dst):
        digest = manifest["files"].get(rel)
        if not dst.is_file() or digest is None or sha256(dst) != digest:
            raise SurveyError("not overwritten: envelope did not write this file (or it changed "
                              "since); move it away and run again", str(Path(given) / rel))
    return dst


def _commit_changed(tmp: Path, out: Path, given, manifest: dict, command: str, hold) -> None:
    files, folders = dict(manifest["files"]), set(manifest["folders"])
    changed = []
    for dirpath, _, filenames in os.walk(tmp):
        for f in filenames:
            src = Path(dirpath) / f
            rel = src.relative_to(tmp).as_posix()
            if rel in (PARTIAL_MARKER, MANIFEST):
                continue
            digest = sha256(src)
            dst = _check_replaceable(out, given, manifest, rel)
            if os.path.lexists(dst) and files[rel] == digest:
                continue
            changed.append((src, dst, rel, digest))
    with hold(committed=given):
        for src, dst, rel, digest in changed:
            parent = PurePosixPath(rel).parent
            for i in range(1, len(parent.parts) + 1):
                sub = PurePosixPath(*parent.parts[:i])
                if not os.path.isdir(out / sub):
                    os.mkdir(out / sub, 0o777)
                folders.add(sub.as_posix())
            os.replace(src, dst)
            files[rel] = digest
        doc = {"format": MANIFEST_FORMAT, "version": MANIFEST_VERSION, "command": command,
               "files": dict(sorted(files.items())), "folders": sorted(folders)}
        (tmp / MANIFEST).write_text(json.dumps(doc, indent=1, sort_keys=True) + "\n",
                                    encoding="utf-8")
        os.replace(tmp / MANIFEST, out / MANIFEST)
