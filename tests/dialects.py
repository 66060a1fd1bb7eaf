"""Write grids of temperatures as camera exports in many text dialects (for tests).

The writer is deliberately independent of `envelope.csvgrid`: it formats each cell with
Python's own float formatting and joins cells with the dialect's characters, so that a
reader bug cannot hide behind a shared helper. `expected` gives the array a correct reader
must return: the written text parsed as float64, converted from the unit, cast to float32.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import numpy as np


@dataclass
class Dialect:
    delim: str = ","
    decimal: str = "."
    header: list = field(default_factory=list)      # lines above the grid
    encoding: str = "utf-8"                          # utf-8, utf-8-sig, cp1252, latin-1, utf-16
    eol: str = "\n"
    trailing: bool = False                           # a delimiter at the end of every line
    final_eol: bool = True
    quote: bool = False                              # every cell in double quotes
    labels: bool = False                             # row and column numbers round the grid
    unit: str | None = None                          # written in the header as a unit line
    nan: str = ""                                    # how an invalid pixel is written
    digits: int = 2


def cell_text(values_c: np.ndarray, d: Dialect) -> np.ndarray:
    """The text of each cell (object array), in the dialect's unit and decimal mark."""
    v = np.asarray(values_c, dtype=np.float64)
    if d.unit == "K":
        v = v + 273.15
    elif d.unit == "F":
        v = v * 9.0 / 5.0 + 32.0
    out = np.empty(v.shape, dtype=object)
    for idx, x in np.ndenumerate(v):
        s = d.nan if np.isnan(x) else f"{x:.{d.digits}f}"
        out[idx] = s.replace(".", d.decimal)
    return out


def expected(values_c: np.ndarray, d: Dialect) -> np.ndarray:
    """What a correct reader returns for `values_c` written in dialect `d` [°C, float32]."""
    txt = cell_text(values_c, d)
    x = np.array([[np.nan if s in ("", "nan") else float(s.replace(",", "."))
                   for s in row] for row in txt], dtype=np.float64)
    if d.unit == "K":
        x = x - 273.15
    elif d.unit == "F":
        x = (x - 32.0) * (5.0 / 9.0)
    return x.astype(np.float32)


def export_text(values_c: np.ndarray, d: Dialect) -> bytes:
    cells = cell_text(values_c, d)
    rows = [[str(c) for c in r] for r in cells]
    if d.labels:
        rows = [[""] + [str(j) for j in range(len(rows[0]))]] + [
            [str(i)] + r for i, r in enumerate(rows)]
    if d.quote:
        rows = [[f'"{c}"' for c in r] for r in rows]
    lines = [d.delim.join(r) + (d.delim if d.trailing else "") for r in rows]
    head = list(d.header)
    if d.unit:
        head.append({"C": "Unit: °C", "K": "Temperature unit = K", "F": "Units;°F"}[d.unit])
    text = d.eol.join(head + lines) + (d.eol if d.final_eol else "")
    return text.encode(d.encoding)


def write_export(path, values_c: np.ndarray, d: Dialect) -> Path:
    path = Path(path)
    path.write_bytes(export_text(values_c, d))
    return path
