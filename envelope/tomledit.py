"""Conservative edits of survey.toml text (edge: used by `envelope init` and the editor).

The surveyor's file is edited as text, never re-serialised: comments, order and layout stay
as typed. Only two edits exist: appending whole blocks at the end, and replacing (or adding)
one sub-table of one ``[[thermograms]]`` entry. After every edit the new text is parsed and
compared with the old one: everything but the edited part must be unchanged, otherwise the
edit is refused and the file left alone. The new file is written beside the old one and
moved over it only once it is complete (``os.replace``), so an interrupted write never
leaves half a survey.
"""

from __future__ import annotations

import copy
import os
import re
import tempfile
import tomllib
from pathlib import Path

from .errors import SurveyError

__all__ = ["toml_value", "append_blocks", "set_thermogram_table", "write_atomic"]

_HEADER = re.compile(r"^\s*(\[\[?)\s*([^\]\s]+)\s*\]\]?\s*(?:#.*)?$")


def toml_value(v) -> str:
    """A Python value as TOML text (numbers, text, booleans, lists of those)."""
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int):
        return str(v)
    if isinstance(v, float):
        return repr(round(v, 6))
    if isinstance(v, str):
        return '"' + v.replace("\\", "\\\\").replace('"', '\\"') + '"'
    if isinstance(v, list | tuple):
        return "[" + ", ".join(toml_value(x) for x in v) + "]"
    raise TypeError(f"no TOML form for {type(v).__name__}")


def write_atomic(path: Path, text: str) -> None:
    """Write `text` to `path` through a temporary file in the same folder and a rename."""
    path = Path(path)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".part", dir=path.parent)
    try:
        with os.fdopen(fd, "w", encoding="utf-8", newline="") as fh:
            fh.write(text)
            fh.flush()
            os.fsync(fh.fileno())
        if path.exists():
            os.chmod(tmp, path.stat().st_mode & 0o7777)
        else:
            umask = os.umask(0)
            os.umask(umask)
            os.chmod(tmp, 0o666 & ~umask)
        os.replace(tmp, path)
    except BaseException:
        try:
            os.unlink(tmp)
        except FileNotFoundError:
            pass
        raise


def _parse(text: str, label: str) -> dict:
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise SurveyError(f"not valid TOML ({exc}); fix it before the tool edits it", label) from None


def append_blocks(path: Path, blocks: list[str]) -> None:
    """Append TOML blocks at the end of the file; what was there stays byte for byte."""
    path = Path(path)
    old = path.read_text(encoding="utf-8") if path.exists() else ""
    if not blocks:
        return
    sep = "" if not old or old.endswith("\n\n") else ("\n" if old.endswith("\n") else "\n\n")
    new = old + sep + "\n\n".join(b.strip("\n") for b in blocks) + "\n"
    before = _parse(old, str(path)) if old else {}
    after = _parse(new, str(path))
    if not _extends(before, after):
        raise SurveyError("appending would change what is already there; nothing written", str(path))
    write_atomic(path, new)


def _extends(before, after) -> bool:
    """True when `after` holds everything of `before` unchanged (lists may grow)."""
    if isinstance(before, dict):
        return isinstance(after, dict) and all(k in after and _extends(v, after[k])
                                               for k, v in before.items())
    if isinstance(before, list) and before and isinstance(before[0], dict):
        return isinstance(after, list) and len(after) >= len(before) and all(
            _extends(a, b) for a, b in zip(before, after, strict=False))
    return before == after


def set_thermogram_table(path: Path, thermogram_id: str, table: str, values: dict,
                         replaces: tuple[str, ...] = ()) -> None:
    """Set ``[thermograms.<table>]`` of the thermogram with id `thermogram_id`.

    An existing sub-table of that name is replaced; otherwise the new one is added at the end
    of the thermogram's block. Sub-tables named in `replaces` are commented out (kept in the
    file, marked as replaced). The result must parse and differ from the old file only in
    those sub-tables; otherwise nothing is written.
    """
    path = Path(path)
    old = path.read_text(encoding="utf-8")
    lines = old.splitlines(keepends=True)
    data = _parse(old, str(path))
    thermos = data.get("thermograms", [])
    index = next((i for i, t in enumerate(thermos) if isinstance(t, dict)
                  and t.get("id") == thermogram_id), None)
    if index is None:
        raise SurveyError(f"no thermogram with id '{thermogram_id}'", str(path), "thermograms")
    # locate the thermogram's block: its [[thermograms]] header up to the next header that
    # is not one of its sub-tables
    heads = [(i, m.group(1), m.group(2)) for i, ln in enumerate(lines)
             if (m := _HEADER.match(ln.rstrip("\r\n")))]
    entries = [i for i, b, name in heads if b == "[[" and name == "thermograms"]
    if len(entries) != len(thermos):
        raise SurveyError("thermograms are written in a form this tool does not edit (inline "
                          "tables?); add the lines by hand", str(path))
    start = entries[index]
    end = next((i for i, b, name in heads if i > start and not name.startswith("thermograms.")),
               len(lines))
    subs = {name.split(".", 1)[1]: i for i, b, name in heads
            if start < i < end and b == "[" and name.startswith("thermograms.")}
    new_lines = list(lines)
    block = [f"[thermograms.{table}]\n"] + [f"{k} = {toml_value(v)}\n" for k, v in values.items()]

    def span(i):
        return i, next((j for j, _b, _n in heads if j > i), len(lines))

    edits = []
    if table in subs:
        edits.append((*span(subs[table]), block))
    else:
        at = end
        while at > start + 1 and not lines[at - 1].strip():
            at -= 1
        edits.append((at, at, (["\n"] if lines[at - 1].strip() else []) + block
                      + (["\n"] if at < len(lines) else [])))
    for name in replaces:
        if name in subs and name != table:
            a, b = span(subs[name])
            edits.append((a, b, [f"# (replaced by the outline editor) {ln}" if ln.strip() else ln
                                 for ln in lines[a:b]]))
    for a, b, repl in sorted(edits, reverse=True):
        new_lines[a:b] = repl
    new = "".join(new_lines)
    after = _parse(new, str(path))
    expect = copy.deepcopy(data)
    entry = expect["thermograms"][index]
    for name in replaces:
        entry.pop(name, None)
    entry[table] = dict(values)
    if after != _normalise(expect):
        raise SurveyError("the edit would change more than the thermogram's "
                          f"[thermograms.{table}]; nothing written", str(path))
    write_atomic(path, new)


def _normalise(d):
    """Round-trip through TOML text so that numbers compare as tomllib reads them."""
    return tomllib.loads(tomllib.dumps(d)) if hasattr(tomllib, "dumps") else _floats(d)


def _floats(d):
    if isinstance(d, dict):
        return {k: _floats(v) for k, v in d.items()}
    if isinstance(d, list):
        return [_floats(v) for v in d]
    if isinstance(d, tuple):
        return [_floats(v) for v in d]
    if isinstance(d, float):
        return float(toml_value(d))
    return d
