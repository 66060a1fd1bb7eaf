"""Benchmark: peak memory and time of reading the largest exports the caps allow.

Each file is written by one fresh Python process and read by `envelope.readers.load_pixels`
in another, whose peak resident memory (``ru_maxrss``) is reported, so that one case cannot
hide another (Linux keeps a process's high-water mark across exec: the parent stays small):

``tiff_f64_max_mb``: a 4096 × 4096 float64 TIFF (the pixel cap, 134 MB decoded), deflate-
compressed in tiles, about 1 MB on disk; target < 1000 MB.
``tiff_bomb_mb``: a 2 MB deflate strip that would inflate to 2 GB behind a page that declares
4096 × 4096 float32 (refused); target < 1000 MB.
``csv_max_mb`` / ``csv_max_s``: a 4096 × 4096 text grid (``;`` and decimal commas, a header;
about 120 MB); target < 1000 MB. ``baseline_mb``: the same process reading nothing.
With ``quick`` the CSV is 1024 × 1024.
"""

from __future__ import annotations

import struct
import subprocess
import sys
import tempfile
import time
import zlib
from pathlib import Path

import numpy as np

_CHILD = """
import resource, sys, time
from envelope.readers import load_pixels
from envelope.errors import SurveyError
t = time.perf_counter()
if sys.argv[1] != "-":
    try:
        load_pixels(sys.argv[1])
    except SurveyError:
        pass
print(resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024, time.perf_counter() - t)
"""


def _peak(path) -> tuple[float, float]:
    out = subprocess.run([sys.executable, "-c", _CHILD, str(path)], capture_output=True,
                         text=True, check=True).stdout.split()
    return float(out[0]), float(out[1])


def _bomb(folder: Path) -> Path:
    import tifffile

    legit = folder / "legit.tif"
    tifffile.imwrite(legit, np.zeros((4096, 4096), np.float32), compression="zlib",
                     rowsperstrip=4096)
    co = zlib.compressobj(9)
    zeros = b"\0" * (1 << 26)
    bomb = b"".join(co.compress(zeros) for _ in range(32)) + co.flush()
    raw = bytearray(legit.read_bytes())
    with tifffile.TiffFile(legit) as tif:
        page = tif.pages[0]
        struct.pack_into("<I", raw, page.tags["StripOffsets"].valueoffset, len(raw))
        struct.pack_into("<I", raw, page.tags["StripByteCounts"].valueoffset, len(bomb))
    path = folder / "bomb.tif"
    path.write_bytes(bytes(raw) + bomb)
    return path


def _write_files(folder: str, n: int) -> None:
    """Write the test files (run in its own process)."""
    import tifffile

    folder = Path(folder)
    tifffile.imwrite(folder / "f64.tif", np.full((4096, 4096), 12.5), compression="zlib",
                     tile=(512, 512))
    _bomb(folder)
    rng = np.random.default_rng(1)
    with open(folder / "grid.csv", "w", encoding="cp1252") as fh:
        fh.write("Emissivity;0,95\nReflected temperature;20,0 °C\n")
        for _ in range(n):
            row = np.char.replace(np.char.mod("%.2f", rng.uniform(5, 22, n)), ".", ",")
            fh.write(";".join(row) + "\n")


def run(quick: bool = False) -> dict[str, float]:
    out = {}
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        n = 1024 if quick else 4096
        subprocess.run([sys.executable, __file__, "--write", tmp, str(n)], check=True)
        out["baseline_mb"] = _peak("-")[0]
        f64 = folder / "f64.tif"
        out["tiff_f64_file_mb"] = f64.stat().st_size / 2**20
        out["tiff_f64_max_mb"], out["tiff_f64_max_s"] = _peak(f64)
        out["tiff_bomb_mb"] = _peak(folder / "bomb.tif")[0]
        csv = folder / "grid.csv"
        out["csv_file_mb"] = csv.stat().st_size / 2**20
        t0 = time.perf_counter()
        out["csv_max_mb"], out["csv_max_s"] = _peak(csv)
        out["csv_wall_s"] = time.perf_counter() - t0
    return out


if __name__ == "__main__":
    if sys.argv[1:2] == ["--write"]:
        _write_files(sys.argv[2], int(sys.argv[3]))
        sys.exit(0)
    for k, v in run(quick="--quick" in sys.argv).items():
        print(f"{k}: {v:.3f}")
