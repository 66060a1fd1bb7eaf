"""Faults of the file system and hostile text, turned into one-line messages (edge).

Every operating-system fault (permission denied, read-only or full disk, a parent that is a
file, a folder where a file was expected, a path too long...) becomes a `SurveyError` naming
the path and saying what to do, so that the command line prints one line and exits with
code 2 instead of a traceback. Text that reaches the terminal (names from the survey, paths,
messages) is stripped of control and escape characters and bounded in length.

The `inspect`, `outline` and `init` commands use the same mapping through
`envelope.cli.guarded`.
"""

from __future__ import annotations

import errno
import json
import re
import unicodedata

from .errors import SurveyError

__all__ = [
    "MAX_TERMINAL_CHARS",
    "MAX_MESSAGE_CHARS",
    "os_error_message",
    "os_error_to_survey_error",
    "terminal_text",
    "terminal_json",
]

MAX_TERMINAL_CHARS = 120
"""Longest free-text value (a name, an id, a path) printed on the terminal [characters]."""

MAX_MESSAGE_CHARS = 600
"""Longest error or warning line printed on the terminal [characters]."""

# bidirectional overrides and isolates reorder what the terminal shows (Unicode TR #9);
# zero-width characters hide text: stripped like control characters
_INVISIBLE = set("\u061c\u200b\u200c\u200d\u200e\u200f\u2028\u2029\u202a\u202b\u202c\u202d"
                 "\u202e\u2060\u2066\u2067\u2068\u2069\ufeff")
# characters a JSON encoder with ensure_ascii=False leaves raw but a terminal may act on
_JSON_UNSAFE = re.compile("[\x7f-\x9f\u061c\u200b-\u200f\u2028\u2029\u202a-\u202e\u2060"
                          "\u2066-\u2069\ufeff]")


def terminal_text(value, limit: int | None = MAX_TERMINAL_CHARS) -> str:
    """`value` as text safe to print on a terminal, on one line.

    Control characters (C0, DEL, C1, among them ESC and CSI that start terminal escape
    sequences) and invisible bidirectional/zero-width characters are removed; tabs and line
    breaks become spaces. Text longer than `limit` characters is cut with an ellipsis.

    Parameters
    ----------
    value : object
        Anything; ``None`` prints as an empty string.
    limit : int or None
        Longest result [characters]; None for no bound.

    Examples
    --------
    >>> terminal_text("wall\\x1b[2J\\tnorth")
    'wall[2J north'
    """
    text = "" if value is None else str(value)
    out = []
    for ch in text:
        if ch in "\t\n\r\v\f":
            out.append(" ")
        elif ch in _INVISIBLE or unicodedata.category(ch) in ("Cc", "Cs"):
            continue
        else:
            out.append(ch)
    text = "".join(out)
    if limit is not None and len(text) > limit:
        text = text[: max(limit - 1, 0)] + "…"
    return text


def terminal_json(obj) -> str:
    """JSON text (indented, sorted keys, UTF-8) with every terminal-active character escaped.

    ``json.dumps`` already escapes C0 controls; DEL, C1 controls and bidirectional or
    zero-width characters are escaped here as ``\\uXXXX`` so that the output stays valid JSON
    that decodes to the same strings.
    """
    text = json.dumps(obj, indent=2, sort_keys=True, ensure_ascii=False)
    return _JSON_UNSAFE.sub(lambda m: f"\\u{ord(m.group()):04x}", text)


_WHAT_TO_DO = {
    errno.EACCES: "permission denied; {fix_access}",
    errno.EPERM: "operation not permitted; {fix_access}",
    errno.EROFS: "read-only file system; {fix_disk}",
    errno.ENOSPC: "disk full; free some space or {fix_disk_plain}",
    errno.EDQUOT: "disk quota exceeded; free some space or {fix_disk_plain}",
    errno.ENOTDIR: "a part of this path is a file, not a folder; choose another path",
    errno.EISDIR: "this is a folder where a file was expected; move it away or choose another path",
    errno.ENAMETOOLONG: "path or file name too long for the file system; choose a shorter path",
    errno.ELOOP: "too many levels of symbolic links; check the links in this path",
    errno.ENOENT: "{not_found}",
    errno.EEXIST: "already exists; choose another path",
    errno.ENOTEMPTY: "folder is not empty; choose another path",
    errno.EXDEV: "cannot be moved across file systems; choose an --out on the same disk",
    errno.EMFILE: "too many open files; close other programs and run again",
    errno.ENFILE: "too many open files on this system; close other programs and run again",
    errno.EIO: "input/output error of the disk; check the disk and run again",
    errno.EBUSY: "busy (used by another program); close it and run again",
    errno.ETXTBSY: "busy (used by another program); close it and run again",
    errno.EFBIG: "file too large for the file system; choose an --out on another disk",
    errno.ENODEV: "no such device; check the path",
    errno.ENXIO: "no such device; check the path",
}


def os_error_message(exc: OSError, action: str = "write") -> str:
    """What went wrong and what to do, for an `OSError` met while reading or writing.

    Parameters
    ----------
    exc : OSError
        The fault.
    action : {"write", "read", "rewrite"}
        Whether the path was being written (a new output folder), read (inputs) or
        rewritten (files of an existing output folder).

    Returns
    -------
    str
        One line in plain words; the raw system text only when the errno is unknown.
    """
    if action == "read":
        words = {"fix_access": "make it readable or copy it somewhere you can read",
                 "fix_disk": "copy the survey to a writable disk",
                 "fix_disk_plain": "copy the survey to another disk",
                 "not_found": "does not exist (was it moved or removed?); check the path"}
    elif action == "rewrite":  # files of an existing output folder (rerender)
        words = {"fix_access": "get write access to the output folder and its parent",
                 "fix_disk": "copy the output folder to a writable disk",
                 "fix_disk_plain": "move the output folder to another disk",
                 "not_found": "was removed during the run; check the path"}
    else:
        words = {"fix_access": "choose an --out in a folder you can write to, or get write access",
                 "fix_disk": "choose an --out on a writable disk",
                 "fix_disk_plain": "choose an --out on another disk",
                 "not_found": "cannot be created here (a folder on the way is missing or was "
                              "removed during the run); choose another --out"}
    template = _WHAT_TO_DO.get(exc.errno)
    if template is not None:
        return template.format(**words)
    reason = terminal_text(exc.strerror or type(exc).__name__, 80)
    verb = "write" if action == "rewrite" else action
    return f"cannot {verb} ({reason}); check the path and the disk"


def os_error_to_survey_error(exc: OSError, action: str = "write", path=None,
                             field: str | None = None, rename: tuple | None = None) -> SurveyError:
    """A `SurveyError` naming the path of `exc` (or `path`) with `os_error_message`.

    Parameters
    ----------
    exc : OSError
        The fault.
    action : {"write", "read", "rewrite"}
        See `os_error_message`.
    path : path-like, optional
        Path to name when the fault carries none (a write that found the disk full).
    field : str, optional
        The option or key concerned, e.g. ``--out``.
    rename : (str, str), optional
        ``(staging_prefix, final_prefix)``: paths inside the hidden staging folder are named
        by where they would have landed, which is what the user knows.
    """
    name = exc.filename if exc.filename not in (None, "") else path
    if name is not None:
        name = str(name if not isinstance(name, bytes) else name.decode("utf-8", "replace"))
        if rename is not None and name.startswith(rename[0]):
            name = rename[1] + name[len(rename[0]):]
        name = terminal_text(name, 300)
    return SurveyError(os_error_message(exc, action), name, field)
