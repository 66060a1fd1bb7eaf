"""Text grids of temperatures exported by thermal cameras: dialect detection and parsing.

A text export is a rectangular grid of numbers, one image row per line, possibly under some
header lines. `read_grid` finds, from the bytes alone:

- the encoding: UTF-8 with or without BOM, UTF-16 with BOM, else Latin-1/cp1252 (only the
  header may hold non-ASCII text; the grid itself must be ASCII);
- the line endings (LF, CRLF, CR) and the header lines above the grid;
- the delimiter (tab, ``;``, ``,`` or spaces), the decimal mark (``.`` or ``,``), quoted
  cells, a delimiter at the end of every line, and row/column numbers around the grid.

Nothing is guessed: where two readings of the bytes are possible (every cell a whole number
in a comma-separated file, so that ``13,70`` may be one value or two; both ``.`` and ``,``
inside cells; rows of different lengths), the file is refused with a message that names the
line and the fix. Parsing is vectorised (pandas' C parser, numpy for the row checks); the only
Python loops run over the header lines and over chunks of the grid, never over cells. Error
messages never quote the file's bytes: they give line and column numbers.

Header lines of the form ``key: value``, ``key = value`` or ``key;value`` are returned as a
dict; `envelope.exportmeta` turns the ones that carry export settings into survey values.
"""

from __future__ import annotations

import codecs
import io
import re
import warnings
from dataclasses import dataclass, field

import numpy as np

from .errors import SurveyError

__all__ = ["Grid", "read_grid", "MAX_HEADER_LINES"]

MAX_HEADER_LINES = 400
"""Lines above the grid that are read as header at most."""
_CHUNK_BYTES = 1 << 22
_NA = ["", "nan", "NaN", "NAN", "-nan", "+nan", "-NaN", "+NaN"]
_CELL = re.compile(rb'"?[-+]?(?:(?:\d+(?:[.,]\d*)?|[.,]\d+)(?:[eE][-+]?\d+)?|nan|NaN|NAN)?"?\Z')
_DATA_CHARS = b"0123456789+-.,;\t eE\"nNaA\r"
_HEADER_KV = re.compile(r"\s*([^:=;\t,]*?[^\W\d_][^:=;\t,]*?)\s*(?::|=|;|\t|,)\s*(.*?)[\s;,\t]*\Z")


@dataclass
class Grid:
    """A parsed text grid.

    Attributes
    ----------
    values : ndarray of float64, shape (rows, columns)
        The numbers as written (NaN for empty or ``nan`` cells), no unit applied.
    whole_numbers : bool
        True when no cell has a decimal mark or exponent (raw counts, or a misread).
    header : dict of str to str
        ``key → value`` from the header lines (keys as written, stripped).
    header_lines : list of str
        Every header line, decoded.
    dialect : str
        What was found, for messages and `envelope inspect`.
    """

    values: np.ndarray
    whole_numbers: bool
    header: dict = field(default_factory=dict)
    header_lines: list = field(default_factory=list)
    dialect: str = ""


def read_grid(raw: bytes, name: str) -> Grid:
    """Parse the bytes of a text export into a grid of numbers.

    Parameters
    ----------
    raw : bytes
        The whole file.
    name : str
        File name used in error messages.

    Returns
    -------
    Grid

    Raises
    ------
    SurveyError
        For a file that is not text, has no grid, or can be read in more than one way.
    """
    raw, encoding = _unicode(raw, name)
    lines_end = b"\n" if b"\n" in raw else b"\r"
    head, start, start_line = _split_header(raw, lines_end, name)
    header_text = _decode_header(head, encoding)
    grid = raw[start:] if start else raw
    del raw
    if not grid.strip():
        raise SurveyError("no grid of numbers found below the header; expected one line of "
                          "numbers per image row", name)
    if not grid.isascii():
        line = start_line + grid[: _first_non_ascii(grid)].count(lines_end)
        raise SurveyError(f"line {line + 1}: a non-ASCII character inside the grid of numbers",
                          name)
    grid, quoted = _unquote(grid, name)
    if not re.search(rb"\d", grid):
        raise SurveyError("the grid holds no number: every cell is empty or 'nan' (an export "
                          "of invalid pixels only?); export the thermogram again", name)
    delim, decimal = _dialect(grid, name)
    whole = not _has_decimals(grid, decimal)
    if whole and delim == ",":
        raise SurveyError(
            "every cell is a whole number and ',' separates them: if the camera wrote decimal "
            "commas ('13,70' as 13.70) the values cannot be told apart; re-export with ';' or "
            "tab between values. If the values really are whole numbers (raw counts), export "
            "with another delimiter or set `scale` in [thermograms.export]", name)
    nfields, trailing, first_bad, nrows = _fields(grid, lines_end, delim)
    if first_bad is not None:
        i, n_bad, n_ok = first_bad
        raise SurveyError(f"line {start_line + i + 1}: {n_bad} values, but the first line of "
                          f"the grid has {n_ok}; every image row must have the same number of "
                          "values", name)
    values = _parse(grid, delim, decimal, start_line, lines_end, name, nrows, nfields)
    if trailing:
        if not np.isnan(values[:, -1]).all():  # pragma: no cover - counts make this impossible
            raise SurveyError("a delimiter ends every line but the last column is not empty", name)
        values = values[:, :-1]
    values, labels = _strip_labels(values)
    notes = [f"encoding {encoding}", {b"\n": "LF", b"\r": "CR"}[lines_end] if b"\r\n" not in grid[:4096] else "CRLF",
             {"\t": "tab", " ": "spaces", ";": "';'", ",": "','"}[delim] + " between values",
             f"decimal mark '{decimal}'"]
    if header_text:
        notes.append(f"{len(header_text)} header line{'s' if len(header_text) > 1 else ''}")
    if trailing:
        notes.append("delimiter at line ends")
    if quoted:
        notes.append("quoted cells")
    if labels:
        notes.append("row and column numbers dropped")
    return Grid(values, whole, _header_dict(header_text), header_text, "text grid: " + ", ".join(notes))


# --------------------------------------------------------------------------- steps
def _unicode(raw: bytes, name: str) -> tuple[bytes, str]:
    """Bytes with any BOM removed (UTF-16 re-encoded as UTF-8) and the encoding's name."""
    if raw.startswith(codecs.BOM_UTF8):
        return raw[3:], "UTF-8 with BOM"
    for bom, enc in ((codecs.BOM_UTF16_LE, "utf-16-le"), (codecs.BOM_UTF16_BE, "utf-16-be")):
        if raw.startswith(bom):
            try:
                return raw[2:].decode(enc).encode("utf-8"), "UTF-16"
            except UnicodeDecodeError:
                raise SurveyError("starts with a UTF-16 mark but is not UTF-16 text", name) from None
    if b"\x00" in raw[:65536]:
        raise SurveyError("not a text file (it holds NUL bytes); expected a grid of numbers "
                          "as text, or a TIFF / PNG / .npy image", name)
    return raw, "UTF-8" if _is_utf8(raw[:65536]) else "Latin-1/cp1252"


def _is_utf8(b: bytes) -> bool:
    try:
        b.decode("utf-8")
        return True
    except UnicodeDecodeError as exc:
        return exc.start >= len(b) - 3  # cut inside a multi-byte character at the sample end


def _split_header(raw: bytes, eol: bytes, name: str) -> tuple[bytes, int, int]:
    """(header bytes, byte offset of the grid, line number of the grid's first line).

    The grid starts at the first line that reads as numbers and is followed by two more
    such lines; a leading numeric line whose number of values differs from the two below it
    (e.g. ``160;120`` giving the size, or a row of column numbers) stays in the header.
    """
    pos, starts, lines = 0, [], []
    while len(lines) < MAX_HEADER_LINES + 4 and pos < len(raw):
        end = raw.find(eol, pos)
        end = len(raw) if end < 0 else end
        lines.append(raw[pos:end].rstrip(b"\r\n"))
        starts.append(pos)
        pos = end + 1
    memo: dict[int, bool] = {}

    def data(j: int) -> bool:
        if j not in memo:
            memo[j] = _is_data_line(lines[j])
        return memo[j]

    for i in range(len(lines)):
        if i > MAX_HEADER_LINES:
            break
        if not data(i):
            continue
        nxt = [j for j in range(i + 1, min(i + 12, len(lines))) if lines[j].strip()][:5]
        if nxt[:2] and not all(data(j) for j in nxt[:2]):
            continue
        counts = [_ntok(lines[j]) for j in nxt if data(j)]
        if counts:
            ref = max(set(counts), key=counts.count)
            ni = _ntok(lines[i])
            # a short numeric line (e.g. "160;120", the image size) or a row of column
            # numbers one shorter than the rows below stays in the header; any other line
            # of numbers starts the grid (and a wrong length there is an error, not skipped)
            if 2 * ni <= ref or (ni == ref - 1 and _is_count_row(lines[i])):
                continue
        return raw[: starts[i]], starts[i], i
    if not any(data(j) for j in range(min(len(lines), MAX_HEADER_LINES))):
        mixed = next((j for j in range(min(len(lines), MAX_HEADER_LINES)) if _mostly_numbers(lines[j])), None)
        hint = ("" if mixed is None else
                f"; line {mixed + 1} holds numbers mixed with other text (such as 'N/A' or '--' "
                "for invalid pixels?): an invalid pixel is an empty cell or 'nan'")
        raise SurveyError("no line of numbers found; expected a grid of temperatures (one "
                          f"image row per line){hint}", name)
    raise SurveyError(f"no grid of numbers within the first {MAX_HEADER_LINES} lines", name)


def _is_data_line(line: bytes) -> bool:
    """True for a line of numbers (cells separated by tab, ';', ',' or spaces)."""
    if not line.strip() or line.translate(None, _DATA_CHARS):
        return False
    return all(_CELL.match(c) for c in re.split(rb"[,;\t ]", line.strip()))


def _mostly_numbers(line: bytes) -> bool:
    """True for a line of at least 8 cells, most of them numbers (a grid row with a few
    cells of another kind; error path only)."""
    cells = [c for c in re.split(rb"[,;\t ]+", line.strip()) if c]
    good = sum(bool(_CELL.match(c)) for c in cells)
    return len(cells) >= 8 and good >= 0.75 * len(cells)


def _is_count_row(line: bytes) -> bool:
    """True for a line of whole numbers counting 0, 1, 2… or 1, 2, 3… (column numbers)."""
    words = re.split(rb"[,;\t ]+", line.strip())
    if len(words) < 8 or not all(w.isdigit() for w in words):
        return False
    first = int(words[0])
    return first in (0, 1) and [int(w) for w in words] == list(range(first, first + len(words)))


def _ntok(line: bytes) -> int:
    """Number of values on a line, by its most delimiter-like character."""
    line = line.strip(b" \r\n")
    for d in (b"\t", b";"):
        if d in line:
            return line.count(d) + 1
    words = line.split()
    if b"," in line and (len(words) == 1 or re.search(rb",\s|\s,|,,|,\Z", line)):
        return line.count(b",") + 1
    return len(words)


def _decode_header(head: bytes, encoding: str) -> list[str]:
    if not head:
        return []
    try:
        text = head.decode("utf-8")
    except UnicodeDecodeError:
        text = head.decode("cp1252", errors="replace")
    out = []
    for ln in text.splitlines():
        ln = "".join(c if c.isprintable() or c == "\t" else " " for c in ln).strip()
        if ln:
            out.append(ln[:500])
    return out


def _first_non_ascii(b: bytes) -> int:
    arr = np.frombuffer(b, np.uint8)
    return int(np.argmax(arr >= 128))


def _unquote(grid: bytes, name: str) -> tuple[bytes, bool]:
    """Remove double quotes round cells; ``"13,70","13,75"`` becomes ``13,70;13,75``."""
    if b'"' not in grid:
        return grid, False
    if b'","' in grid:
        if b";" in grid:
            raise SurveyError("quoted cells separated by ',' that also hold ';'; expected one "
                              "delimiter", name)
        grid = grid.replace(b'","', b'";"').replace(b'",\n', b'";\n').replace(b'",\r', b'";\r')
        if grid.endswith(b'",'):
            grid = grid[:-1] + b";"
    return grid.replace(b'"', b""), True


def _dialect(grid: bytes, name: str) -> tuple[str, str]:
    """(delimiter, decimal mark) of a grid; refuses the ambiguous cases."""
    has_comma, has_dot = b"," in grid, b"." in grid
    if b"\t" in grid:
        delim = "\t"
    elif b";" in grid:
        delim = ";"
    elif has_comma:
        sample = grid[:65536]
        spaced = re.search(rb"\d[ ]+[-+]?[\d.,]", sample)
        comma_sep = re.search(rb",[ \t]*(?:\r|\n|\Z)|,[ \t]+|[ \t]+,|,,", sample)
        if not has_dot and spaced and not comma_sep:
            delim = " "
        else:
            delim = ","
    else:
        delim = " "
    if delim == ",":
        return delim, "."
    if has_comma and has_dot:
        raise SurveyError("cells hold both '.' and ',' (digit grouping?); expected one decimal "
                          "mark: re-export without thousands separators", name)
    return delim, "," if has_comma else "."


def _has_decimals(grid: bytes, decimal: str) -> bool:
    return decimal.encode() in grid or b"e" in grid.replace(b"nan", b"").replace(b"NaN", b"") \
        or b"E" in grid.replace(b"NAN", b"")


def _fields(grid: bytes, eol: bytes, delim: str):
    """Values per non-blank line, checked chunk by chunk with numpy.

    Returns ``(fields, trailing, first_bad, rows)``: the common number of fields per line
    (a trailing delimiter's empty field included), whether a delimiter ends every line (then
    that last, empty field is not a value), ``(line index, fields, expected)`` of the first
    line that differs (else None), and the number of non-blank lines.
    """
    e = eol[0]
    d = ord(delim)
    n = len(grid)
    pos, line0 = 0, 0
    expected, all_trail, nrows = None, True, 0
    while pos < n:
        end = min(pos + _CHUNK_BYTES, n)
        if end < n:
            k = grid.find(eol, end)
            end = n if k < 0 else k + 1
        b = np.frombuffer(grid, np.uint8, count=end - pos, offset=pos)
        space = (b == 32) | (b == 13) | (b == e)
        if delim != "\t":
            space |= b == 9
        ends = np.flatnonzero(b == e)
        if ends.size == 0 or ends[-1] != b.size - 1:
            ends = np.append(ends, b.size)
        starts = np.concatenate(([0], ends[:-1] + 1))
        tok = ~space
        tok[1:] &= space[:-1]
        cs = np.concatenate(([0], np.cumsum(tok, dtype=np.int64)))
        ntok = cs[ends] - cs[starts]
        keep = ntok > 0
        nrows += int(keep.sum())
        if delim == " ":
            nval = ntok
        else:
            cd = np.concatenate(([0], np.cumsum(b == d, dtype=np.int64)))
            nval = cd[ends] - cd[starts] + 1
            all_trail &= bool((_last_non_space(b, starts, ends, space)[keep] == d).all())
        if keep.any():
            if expected is None:
                expected = int(nval[np.flatnonzero(keep)[0]])
            bad = keep & (nval != expected)
            if bad.any():
                i = int(np.flatnonzero(bad)[0])
                return expected, False, (line0 + i, int(nval[i]), expected), nrows
        line0 += ends.size
        pos = end
    trailing = delim != " " and expected is not None and all_trail
    return expected or 0, trailing, None, nrows


def _last_non_space(b, starts, ends, space) -> np.ndarray:
    """Byte value of the last non-space character of each line (0 for a blank line)."""
    idx = np.flatnonzero(~space)
    if idx.size == 0:
        return np.zeros(starts.shape, np.uint8)
    k = np.searchsorted(idx, ends) - 1
    k = np.clip(k, 0, None)
    pos = idx[k]
    ok = (pos >= starts) & (pos < ends)
    return np.where(ok, b[pos], 0).astype(np.uint8)


def _parse(grid: bytes, delim: str, decimal: str, start_line: int, eol: bytes, name: str,
           nrows: int, nfields: int) -> np.ndarray:
    """Parse the grid with pandas' C parser, a block of rows at a time into one array (the
    peak memory stays near the size of the result)."""
    import pandas as pd

    from .readers import MAX_PIXELS

    if nrows * nfields > MAX_PIXELS * 1.01 + nrows:
        raise SurveyError(f"a grid of {nrows} × {nfields} values exceeds {MAX_PIXELS} pixels", name)
    out = np.empty((nrows, nfields), dtype=np.float64)
    block = max(1, (1 << 20) // max(nfields, 1))
    r = 0
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            reader = pd.read_csv(io.BytesIO(grid), sep=r"\s+" if delim == " " else delim,
                                 decimal=decimal, header=None, names=range(nfields),
                                 dtype=np.float64, engine="c", keep_default_na=False,
                                 na_values=_NA, skipinitialspace=True, quoting=3,
                                 skip_blank_lines=True, encoding="ascii", chunksize=block)
            with reader:
                for df in reader:
                    k = len(df)
                    if r + k > nrows:
                        raise ValueError("more rows than counted")
                    out[r:r + k] = df.to_numpy(dtype=np.float64)
                    r += k
    except (ValueError, pd.errors.ParserError, OverflowError, MemoryError):
        line, col = _locate_bad(grid, delim, decimal, eol)
        raise SurveyError(f"line {start_line + line + 1}, value {col + 1}: not a number; "
                          f"expected numbers separated by {_dname(delim)} with '{decimal}' "
                          "as decimal mark (empty or 'nan' for an invalid pixel)", name) from None
    if r != nrows:  # pragma: no cover - the counts and the parser agree on blank lines
        raise SurveyError(f"read {r} rows, expected {nrows}", name)
    return out


def _dname(delim: str) -> str:
    return {"\t": "tabs", " ": "spaces"}.get(delim, f"'{delim}'")


_NUM = {".": re.compile(r"[-+]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?\Z|[-+]?(?:nan|NaN|NAN)\Z|\Z"),
        ",": re.compile(r"[-+]?(?:\d+(?:,\d*)?|,\d+)(?:[eE][-+]?\d+)?\Z|[-+]?(?:nan|NaN|NAN)\Z|\Z")}


def _locate_bad(grid: bytes, delim: str, decimal: str, eol: bytes) -> tuple[int, int]:
    """(line, column) of the first cell that is not a number (error path only)."""
    for i, ln in enumerate(grid.split(eol)):
        text = ln.decode("ascii", "replace").strip()
        if not text:
            continue
        cells = text.split() if delim == " " else [c.strip() for c in text.split(delim)]
        for j, c in enumerate(cells):
            if not _NUM[decimal].match(c):
                return i, j
    return 0, 0


def _strip_labels(values: np.ndarray):
    """Drop row numbers (first column) and column numbers (first row) that count 0, 1, 2…
    or 1, 2, 3… exactly (at least 8 of them: no image of temperatures does that)."""
    def counts(v) -> bool:
        return v.size >= 8 and any(
            np.array_equal(v, np.arange(k, k + v.size, dtype=float)) for k in (0, 1))

    if values.shape[0] < 2 or values.shape[1] < 2:
        return values, False
    if counts(values[0, 1:]) and counts(values[1:, 0]):
        return values[1:, 1:], True
    if counts(values[0, :]):
        return values[1:, :], True
    if counts(values[:, 0]):
        return values[:, 1:], True
    return values, False


def _header_dict(lines: list[str]) -> dict:
    out: dict[str, str] = {}
    for ln in lines:
        m = _HEADER_KV.match(ln)
        if m and m.group(1).strip():
            key = m.group(1).strip()[:80]
            if key not in out:
                out[key] = m.group(2).strip().strip('"').strip()[:200]
    return out
