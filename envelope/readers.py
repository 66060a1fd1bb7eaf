"""Pixel files of camera exports → temperatures [°C], and the series air log (edge).

One reader for every kind of pixel file a survey may name:

- text grids (``.csv``, ``.txt``, ``.tsv``, ``.asc``) in any common dialect, with header
  lines (`envelope.csvgrid`, `envelope.exportmeta`);
- TIFF: float pages as they are; integer pages with a declared ``scale`` (and ``offset``);
  several pages: the largest single-channel page, or the one named by ``page``;
- 16-bit greyscale PNG with a declared ``scale`` (and ``offset``);
- ``.npy`` (read without pickle; integer arrays need a ``scale`` too).

The unit of the readings is °C unless the file's header or the survey (``unit`` = "K" or
"F") says otherwise; readings that look like kelvin without a declared unit are refused with
the exact key to set. Sizes are checked from the file's own description before any pixel is
decoded (`MAX_PIXELS`, `MAX_FILE_BYTES`), so a small compressed file cannot take a lot of
memory. Nothing is guessed: a file that can be read in two ways is refused with the fix.
Error messages name the file and never quote its bytes.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from .constants import T0_K
from .errors import SurveyError, celsius_slip

__all__ = [
    "Export", "DeclarationNeeded", "read_export", "load_pixels", "check_view_readings",
    "load_air_log", "MAX_PIXELS", "MAX_FILE_BYTES",
    "MAX_TIFF_PAGES", "KELVIN_SUSPECT_C", "PLAUSIBLE_C", "MAX_INVALID_SHARE", "TEXT_SUFFIXES",
    "IMAGE_SUFFIXES",
]

MAX_PIXELS = 4096 * 4096
"""Largest thermogram accepted [px]; bigger files are refused before they are decoded."""
MAX_FILE_BYTES = 256 * 1024 * 1024
"""Largest pixel file read [bytes]."""
MAX_TIFF_PAGES = 64
"""Most pages looked at in a multi-page TIFF."""
MAX_SEGMENT_PX = 4096 * 4096
"""Largest TIFF strip or tile [px] (a tile larger than the cap is refused before decoding)."""
KELVIN_SUSPECT_C = 150.0
"""A median reading above this [°C] looks like kelvin exported by mistake."""
PLAUSIBLE_C = (-60.0, 200.0)
"""Readings outside this range [°C] cannot be building surfaces."""
MAX_INVALID_SHARE = 0.5
"""A thermogram with more than this share of NaN pixels is refused."""
ABOVE_INDOOR_K = 20.0
"""An interior view whose median reading is this far above the indoor air [K] is not read
(°F exported as °C, a wrong scale); ours, generous: a heated room's surfaces sit below it."""
BELOW_OUTDOOR_K = 5.0
"""An interior view whose median reading is this far below the outdoor air [K] is not read:
inside surfaces are warmed by the room (ours)."""
ABOVE_OUTDOOR_K = 20.0
"""An exterior view, without sun in the last `SUN_FREE_H`, whose median reading is this far
above the outdoor air [K] is not read (ours: a façade at night sits within a few K of it)."""
SUN_FREE_H = 2.0
PROBE_MISMATCH_K = 10.0
"""A contact probe and the image reading at its pixel this far apart [K] (or three times the
camera's accuracy, when larger) mean a wrong unit, scale, probe pixel or probe reading: a
camera's offset is a few kelvin (ours)."""
TEXT_SUFFIXES = (".csv", ".txt", ".tsv", ".asc")
IMAGE_SUFFIXES = (".tif", ".tiff", ".png", ".npy")
_EXPORT_TABLE = "this thermogram's [thermograms.export] table"


class DeclarationNeeded(SurveyError):
    """The file is readable once the survey declares how: ``keys`` of ``[thermograms.export]``
    to set (e.g. ``scale`` and ``unit`` for raw counts, ``page`` for a stack of pages)."""

    def __init__(self, message: str, file: str | None = None, keys: tuple[str, ...] = ()):
        super().__init__(message, file)
        self.keys = tuple(keys)


@dataclass(frozen=True)
class Export:
    """One camera export, read.

    Attributes
    ----------
    readings_c : ndarray of float32, shape (H, W)
        Temperatures as exported [°C] (NaN: invalid pixel).
    settings : dict
        Export settings found in the file's header (see `envelope.exportmeta`).
    header : dict of str to str
        The header's ``key → value`` lines as written.
    dialect : str
        What kind of file it was and how it was read.
    notes : tuple of str
        Header values left out, and why.
    """

    readings_c: np.ndarray
    settings: dict = field(default_factory=dict)
    header: dict = field(default_factory=dict)
    dialect: str = ""
    notes: tuple = ()


def load_pixels(path, label: str | None = None, settings=None) -> np.ndarray:
    """Read one thermogram's per-pixel temperatures [°C] as float32 (H, W).

    Parameters
    ----------
    path : str or Path
        The pixel file.
    label : str, optional
        Name used in messages (default: the path).
    settings : ExportSettings, optional
        The thermogram's ``[thermograms.export]`` table: ``unit``, ``scale``, ``offset`` and
        ``page`` are used (None: nothing declared).

    Returns
    -------
    ndarray of float32
        Readings as exported [°C].

    Raises
    ------
    SurveyError
        A file that is too big, not an image of temperatures, ambiguous, mostly NaN, in
        kelvin without saying so, or outside the range of building surfaces.
    """
    return read_export(path, label, settings).readings_c


def read_export(path, label: str | None = None, settings=None) -> Export:
    """Read a camera export: temperatures [°C] and the settings in its header.

    Parameters and errors as `load_pixels`; returns an `Export`.
    """
    path = Path(path)
    name = label or str(path)
    unit = getattr(settings, "unit", None)
    scale = getattr(settings, "scale", None)
    offset = getattr(settings, "offset", 0.0) or 0.0
    page = getattr(settings, "page", None)
    try:
        if not path.is_file():
            raise SurveyError("pixel file not found (or not a regular file)", name)
        size = path.stat().st_size
    except OSError as exc:
        raise SurveyError(f"cannot read ({exc.strerror or type(exc).__name__})", name) from None
    if size > MAX_FILE_BYTES:
        raise SurveyError(f"file larger than {MAX_FILE_BYTES // 2**20} MB", name)
    if size == 0:
        raise SurveyError("the file is empty (0 bytes); copy or export the thermogram again", name)
    suffix = path.suffix.lower()
    header: dict = {}
    found: dict = {}
    notes: list = []
    try:
        if suffix in TEXT_SUFFIXES:
            values, integer, dialect, header, found, notes = _text(path, name)
        elif suffix in (".tif", ".tiff"):
            values, integer, dialect = _tiff(path, name, page)
        elif suffix == ".png":
            values, integer, dialect = _png(path, name)
        elif suffix == ".npy":
            values, integer, dialect = _npy(path, name)
        else:
            raise SurveyError(f"unsupported pixel file type '{suffix[:12]}' (expected "
                              f"{', '.join(TEXT_SUFFIXES + IMAGE_SUFFIXES)})", name)
    except SurveyError:
        raise
    except MemoryError:
        raise SurveyError("not enough memory to decode this file", name) from None
    except OSError as exc:
        raise SurveyError(f"cannot read ({exc.strerror or type(exc).__name__})", name) from None
    except Exception as exc:  # noqa: BLE001 - any decoder failure is a bad file for the user
        raise SurveyError(f"cannot read pixel data ({type(exc).__name__}); expected a "
                          "readable image of temperatures", name) from None
    if page is not None and suffix not in (".tif", ".tiff"):
        raise SurveyError(f"`page` applies to TIFF files only; remove it from {_EXPORT_TABLE}",
                          name)
    _check_shape(values, name)
    if "width" in found and "height" in found and (found["height"], found["width"]) != values.shape:
        raise SurveyError(f"the header says {found['width']} × {found['height']} px but the grid "
                          f"has {values.shape[1]} × {values.shape[0]}; the file was not read as "
                          "written", name)
    hdr_unit = found.get("unit")
    if unit and hdr_unit and unit != hdr_unit:
        raise SurveyError(f"the file's header says the unit is {hdr_unit}, the survey says {unit} "
                          f"(`unit` in {_EXPORT_TABLE}); make them agree", name)
    readings = _to_celsius(values, integer, unit or hdr_unit, scale, offset, name)
    return Export(readings, found, header, dialect, tuple(notes))


# --------------------------------------------------------------------------- formats
def _text(path: Path, name: str):
    from .csvgrid import read_grid
    from .exportmeta import settings_from_header

    raw = path.read_bytes()
    grid = read_grid(raw, name)
    del raw
    found, notes = settings_from_header(grid.header)
    return (grid.values, grid.whole_numbers, grid.dialect, grid.header, found, notes)


def _tiff(path: Path, name: str, page_no: int | None):
    import tifffile

    with tifffile.TiffFile(path) as tif:
        pages = []
        for i, p in enumerate(tif.pages):
            if i >= MAX_TIFF_PAGES:
                if page_no is None or page_no >= MAX_TIFF_PAGES:
                    raise SurveyError(f"more than {MAX_TIFF_PAGES} pages; expected an image "
                                      "with one data page (and perhaps a preview)", name)
                break
            pages.append(p)
        if not pages:
            raise SurveyError("TIFF without pages", name)
        if page_no is not None:
            if page_no >= len(pages):
                raise SurveyError(f"`page = {page_no}` but the file has {len(pages)} page"
                                  f"{'s' if len(pages) > 1 else ''} (numbered from 0)", name)
            page = pages[page_no]
            if not _single_channel(page):
                raise SurveyError(f"page {page_no} is a colour or multi-channel picture "
                                  f"({_describe(page)}), not temperatures", name)
            chosen = page_no
        else:
            data = [(i, p) for i, p in enumerate(pages) if _single_channel(p)]
            if not data:
                raise SurveyError("no single-channel page of numbers (a colour picture is not "
                                  "temperatures); export the per-pixel temperatures", name)
            big = max(_npix(p) for _, p in data)
            top = [i for i, p in data if _npix(p) == big]
            if len(top) > 1:
                raise DeclarationNeeded(f"pages {', '.join(map(str, top))} hold images of the same size;"
                                  f" set `page = N` (0-based) in {_EXPORT_TABLE}", name, ("page",))
            chosen = top[0]
            page = pages[chosen]
        _check_tiff_page(page, name)
        if int(page.compression) != 1 and not _have_imagecodecs():
            raise SurveyError("a compressed TIFF needs the 'imagecodecs' package to be decoded "
                              "within bounded memory (pip install imagecodecs)", name)
        values = page.asarray(maxworkers=1)
    dtype = np.dtype(values.dtype)
    dialect = f"TIFF page {chosen} of {len(pages)}: {values.shape[-1]} × {values.shape[0]} px {dtype}"
    return values, dtype.kind in "iu", dialect


def _have_imagecodecs() -> bool:
    try:
        import imagecodecs  # noqa: F401
    except ImportError:
        return False
    return True


def _npix(page) -> int:
    return int(np.prod(page.shape, dtype=np.int64))


def _single_channel(page) -> bool:
    shape = tuple(s for s in page.shape if s != 1)
    kind = np.dtype(page.dtype).kind if page.dtype is not None else "?"
    # a page of one row or one pixel counts too: it is then refused as too small
    return (len(shape) <= 2 and len(page.shape) >= 2 and getattr(page, "samplesperpixel", 1) == 1
            and kind in "fiu")


def _describe(page) -> str:
    return f"{'×'.join(map(str, page.shape))} {page.dtype}"


def _check_tiff_page(page, name: str) -> None:
    """Refuse, from the tags alone, a page whose decoding could take more than the caps."""
    n = _npix(page)
    if n > MAX_PIXELS:
        raise SurveyError(f"image of {_describe(page)} exceeds {MAX_PIXELS} pixels", name)
    itemsize = np.dtype(page.dtype).itemsize
    if itemsize > 8:
        raise SurveyError(f"pixel type {page.dtype} is not a temperature", name)
    if page.is_tiled:
        seg = int(page.tilewidth) * int(page.tilelength) * max(int(getattr(page, "tiledepth", 1) or 1), 1)
    else:
        seg = min(int(page.rowsperstrip or page.imagelength), int(page.imagelength)) * int(page.imagewidth)
    if seg > MAX_SEGMENT_PX:
        raise SurveyError(f"a TIFF {'tile' if page.is_tiled else 'strip'} of {seg} pixels "
                          f"exceeds {MAX_SEGMENT_PX}", name)
    counts = [int(c) for c in page.databytecounts]
    if sum(counts) > MAX_FILE_BYTES:
        raise SurveyError("declared pixel data larger than the file limit", name)


def _png(path: Path, name: str):
    from PIL import Image

    with Image.open(path) as im:
        if im.format != "PNG":
            raise SurveyError("not a PNG file", name)
        w, h = im.size
        if w * h > MAX_PIXELS:
            raise SurveyError(f"image of {w} × {h} px exceeds {MAX_PIXELS} pixels", name)
        if im.mode not in ("I;16", "I;16B", "I;16L", "I"):
            raise SurveyError(f"a PNG in mode {im.mode} is a picture, not temperatures; expected "
                              "a 16-bit greyscale PNG of raw values (with `scale`)", name)
        values = np.asarray(im)
    return values, True, f"PNG 16-bit greyscale: {w} × {h} px"


def _npy(path: Path, name: str):
    try:
        data = np.load(path, allow_pickle=False, mmap_mode="r")
    except ValueError as exc:
        if "pickle" in str(exc).lower() or "object" in str(exc).lower():
            raise SurveyError("the .npy file holds Python objects (pickled); expected an array of pixel "
                              "values (numbers)", name) from None
        raise
    if not isinstance(data, np.ndarray):
        raise SurveyError("expected one array (.npy), not an archive", name)
    if data.size > MAX_PIXELS:
        raise SurveyError(f"array of {data.shape} exceeds {MAX_PIXELS} pixels", name)
    if data.dtype.kind not in "fiu" or data.dtype.itemsize > 8:
        raise SurveyError(f"expected numeric pixel values, got dtype {data.dtype}", name)
    values = np.array(data)
    return values, data.dtype.kind in "iu", f".npy array {data.shape} {data.dtype}"


# --------------------------------------------------------------------------- checks
def _check_shape(values: np.ndarray, name: str) -> None:
    shape = np.shape(values)
    core = [s for s in shape if s != 1]
    if len(shape) < 2 or len(core) > 2 or (len(core) < 2 and shape[-2] * shape[-1] != np.size(values)):
        raise SurveyError(f"expected a 2-D image of temperatures, got shape {shape}", name)
    h, w = (core if len(core) == 2 else shape[-2:])
    if h < 8 or w < 8:
        raise SurveyError(f"image of {w} × {h} px is too small (at least 8 × 8 px); expected "
                          "the camera's full image of temperatures", name)


_SCALES = ((1.0, "K"), (0.1, "K"), (0.01, "K"), (0.001, "K"), (0.1, "C"), (0.01, "C"),
           (0.001, "C"))


def _hint(med: float) -> str:
    """The (scale, unit) pairs that put a median reading between −40 and +60 °C."""
    fits = [(s, u) for s, u in _SCALES if -40.0 <= (med * s - (T0_K if u == "K" else 0.0)) <= 60.0]
    if not fits:
        return ""
    keys = [f"scale = {s:g}, unit = \"{u}\"" for s, u in fits]
    if len(fits) == 1:
        return f"; a median of {med:.6g} fits {keys[0]} (offset = 0)"
    return f"; a median of {med:.6g} fits any of: {' / '.join(keys)}; the camera's export settings tell which"


def _to_celsius(values, integer: bool, unit, scale, offset, name: str) -> np.ndarray:
    """Stored values → readings [°C] (float32), with the unit and plausibility checks."""
    v = np.squeeze(np.asarray(values))
    if integer and scale is None:
        med = float(np.median(v)) if v.size else math.nan
        raise DeclarationNeeded(f"integer pixel values ({v.dtype}) are raw counts: declare how "
                                f"they map to temperatures with `scale` and `offset` (reading = "
                                f"value × scale + offset) and `unit` in {_EXPORT_TABLE}"
                                f"{_hint(med)}", name, ("scale", "offset", "unit"))
    if scale is not None:
        x = v.astype(np.float64) * float(scale) + float(offset)
    elif offset:
        x = v.astype(np.float64) + float(offset)
    else:
        x = v
    if unit == "K":
        x = np.asarray(x, dtype=np.float64) - T0_K
    elif unit == "F":
        x = (np.asarray(x, dtype=np.float64) - 32.0) * (5.0 / 9.0)
    img = np.asarray(x, dtype=np.float32)
    if img is v or img.base is v or not img.flags.writeable:
        img = img.copy()
    finite = np.isfinite(img)
    share_bad = 1.0 - float(finite.mean())
    if share_bad > MAX_INVALID_SHARE:
        raise SurveyError(f"{share_bad:.0%} of the pixels are NaN or infinite", name)
    img[~finite] = np.nan
    med = float(np.nanmedian(img))
    if med > KELVIN_SUSPECT_C and unit is None:
        if scale is None:
            raise DeclarationNeeded(f"median reading {med:.6g} looks like kelvin or raw counts: "
                                    f"declare the unit (`unit = \"K\"` in {_EXPORT_TABLE} for "
                                    f"kelvin; the readings are then converted to °C){_hint(med)}",
                                    name, ("unit",))
        raise SurveyError(f"median reading {med:.6g} after scale and offset: declare `unit` "
                          f"(\"K\" for kelvin) in {_EXPORT_TABLE}", name)
    lo, hi = float(np.nanmin(img)), float(np.nanmax(img))
    if lo < PLAUSIBLE_C[0] or hi > PLAUSIBLE_C[1]:
        outside = (img < PLAUSIBLE_C[0]) | (img > PLAUSIBLE_C[1])
        n_out = int(outside.sum())
        if -40.0 <= med <= 60.0 and n_out < 0.1 * finite.sum():
            extreme = f"down to {lo:.6g}" if lo < PLAUSIBLE_C[0] else f"up to {hi:.6g}"
            raise SurveyError(f"{n_out} pixel{'s' if n_out > 1 else ''} read outside "
                              f"{PLAUSIBLE_C[0]:g}…{PLAUSIBLE_C[1]:g} °C ({extreme}) while the "
                              "rest look right: a no-data value for invalid pixels? Export them "
                              "as NaN (an empty cell or 'nan' in a text grid)", name)
        kelvin = (f" (a median of {med:.6g} read as °{unit or 'C'} looks like kelvin: the file "
                  "or the survey declares the wrong unit)" if unit != "K" and 200.0 <= med <= 400.0
                  else f" (read as kelvin, the values look like °C: a median of {med + T0_K:.6g}; "
                  "the file or the survey declares the wrong unit)"
                  if unit == "K" and scale is None and -40.0 <= med + T0_K <= 60.0 else "")
        raise SurveyError(f"readings span {lo:.1f}…{hi:.1f} °C, outside {PLAUSIBLE_C[0]:g}…"
                          f"{PLAUSIBLE_C[1]:g} °C{kelvin}; check `unit`, `scale` and `offset` in "
                          f"{_EXPORT_TABLE}", name)
    return img


def check_view_readings(readings_c, thermogram, conditions, camera, name: str) -> None:
    """Refuse a view's readings that cannot be what the survey says they are.

    Read as the survey declares, the readings must still agree with the night: a blank or
    frozen export (every pixel the same), an interior view far warmer than the room or far
    colder than outdoors, an exterior view far warmer than outdoors, or a contact probe far
    from the image at its pixel all mean a wrong ``unit`` (°F read as °C), ``scale`` or
    ``offset``, or wrong air temperatures, and would give plausible-looking but wrong numbers.

    Parameters
    ----------
    readings_c : ndarray (H, W)
        The readings as read by `load_pixels` [°C].
    thermogram : Thermogram
        The survey's entry (side, probes, export settings, hours since sun).
    conditions : Conditions
        Air temperatures of the night [°C] (NaN: not filled in yet, not checked).
    camera : Camera
        Its ``accuracy_k`` and ``offset_k`` widen the probe tolerance.
    name : str
        The pixel file, for messages.

    Raises
    ------
    SurveyError
    """
    img = np.asarray(readings_c)
    _check_marked_pixels(img.shape, thermogram, name)
    finite = img[np.isfinite(img)]
    if finite.size == 0:
        return
    lo, hi = float(finite.min()), float(finite.max())
    if lo == hi:
        raise SurveyError(f"every valid pixel reads {lo:.6g} °C: not an image of a surface (a "
                          "blank or frozen export?); export the thermogram again", name)
    med = float(np.median(finite))
    fix = (f"check `unit`, `scale` and `offset` in {_EXPORT_TABLE} and the air temperatures "
           "in [conditions]")
    t_i = getattr(conditions, "indoor_air_c", math.nan)
    t_e = getattr(conditions, "outdoor_air_c", math.nan)
    side = getattr(thermogram, "side", "")
    sun_h = getattr(thermogram, "hours_since_sun", None)
    if side == "interior" and math.isfinite(t_i) and med > t_i + ABOVE_INDOOR_K:
        hint = ("; readings in °F? then set `unit = \"F\"`" if 32.0 <= med <= 100.0 else "")
        raise SurveyError(f"the median reading {med:.1f} °C of this interior view is "
                          f"{med - t_i:.0f} K above the indoor air ({t_i:g} °C): {fix}{hint}", name)
    if side == "interior" and math.isfinite(t_e) and med < t_e - BELOW_OUTDOOR_K:
        raise SurveyError(f"the median reading {med:.1f} °C of this interior view is "
                          f"{t_e - med:.0f} K below the outdoor air ({t_e:g} °C): {fix}", name)
    if (side == "exterior" and math.isfinite(t_e) and med > t_e + ABOVE_OUTDOOR_K
            and not (sun_h is not None and sun_h < SUN_FREE_H)):
        hint = ("; readings in °F? then set `unit = \"F\"`" if med >= 14.0 else "")
        raise SurveyError(f"the median reading {med:.1f} °C of this exterior view is "
                          f"{med - t_e:.0f} K above the outdoor air ({t_e:g} °C) with no sun for "
                          f"{'an unknown time' if sun_h is None else f'{sun_h:g} h'}: {fix}{hint}",
                          name)
    acc = getattr(camera, "accuracy_k", 0.0) or 0.0
    tol = max(PROBE_MISMATCH_K, 3.0 * acc) + abs(getattr(camera, "offset_k", None) or 0.0)
    for i, probe in enumerate(getattr(thermogram, "probes", ())):
        x, y = probe.pixel_xy
        if not (math.isfinite(x) and math.isfinite(y) and math.isfinite(probe.surface_c)):
            continue
        col, row = int(math.floor(x)), int(math.floor(y))
        if not (0 <= row < img.shape[0] and 0 <= col < img.shape[1]):
            continue
        patch = img[max(row - 1, 0): row + 2, max(col - 1, 0): col + 2]
        patch = patch[np.isfinite(patch)]
        if patch.size == 0:
            continue
        at = float(patch.mean())
        if abs(at - probe.surface_c) > tol:
            raise SurveyError(f"contact probe {i} at ({x:g}, {y:g}) px read {probe.surface_c:g} °C "
                              f"where the image reads {at:.1f} °C, {abs(at - probe.surface_c):.0f} K "
                              f"apart (a camera is off by a few kelvin at most): {fix}, and the "
                              "probe's pixel_xy and surface_c", name,
                              f"thermograms[{getattr(thermogram, 'id', '?')}].probes[{i}]")


def _check_marked_pixels(shape, thermogram, name: str) -> None:
    """Refuse reference points, tapes and a heat-flux-meter spot marked outside the image
    (a typo, or the pixels of another export size): they would be dropped or extrapolated."""
    h, w = shape[:2]
    tid = getattr(thermogram, "id", "?")
    marks = []
    rp = getattr(thermogram, "reference_points", None)
    if rp is not None:
        marks += [(f"reference_points.pixel_xy[{i}]", xy) for i, xy in enumerate(rp.pixel_xy)]
    for i, tape in enumerate(getattr(thermogram, "tapes", ())):
        marks += [(f"tapes[{i}].pixel_xy", tape.pixel_xy),
                  (f"tapes[{i}].surface_pixel_xy", tape.surface_pixel_xy)]
    meter = getattr(thermogram, "heat_flux_meter", None)
    if meter is not None:
        marks.append(("heat_flux_meter.pixel_xy", meter.pixel_xy))
    for key, xy in marks:
        x, y = xy
        if not (math.isfinite(x) and math.isfinite(y)):
            continue
        if not (-1.0 <= x <= w + 1.0 and -1.0 <= y <= h + 1.0):
            raise SurveyError(f"pixel [{x:g}, {y:g}] lies outside the {w} × {h} px image; mark "
                              "it on the thermogram (x to the right, y down)", name,
                              f"thermograms[{tid}].{key}")


# --------------------------------------------------------------------------- air log
LOG_COLUMNS_C = {"indoor_air_c": (-30.0, 45.0), "outdoor_air_c": (-50.0, 45.0),
                 "reflected_c": (-80.0, 200.0)}
"""Columns of the air log in °C and their ranges (those of the survey's keys)."""
MAX_LOG_GAP_H = 3.0
"""A series log may not skip more than this [h] (or ten of its usual steps, when longer)
between two rows: a date not advanced past midnight or a logger stopped overnight."""
_LOG_COLUMNS = "time, indoor_air_c, outdoor_air_c, frame[, reflected_c]"


def load_air_log(path, label: str | None = None):
    """Read a series log CSV: columns ``time`` (ISO 8601 with a date), ``indoor_air_c``,
    ``outdoor_air_c``, ``frame`` (pixel file of the thermogram taken then, relative to the
    log, may be empty), optional ``reflected_c``. Returns a pandas DataFrame sorted by time
    with ``hours`` added.

    Rows are in time order (oldest first, or newest first as some loggers write them); a log
    whose times go back and forth (a date not advanced past midnight), jump by more than
    `MAX_LOG_GAP_H`, or hold air temperatures outside the survey's ranges (kelvin or °F by
    mistake) is refused, naming the line.
    """
    import pandas as pd

    path = Path(path)
    name = label or str(path)
    try:
        size = path.stat().st_size
        if size > 64 * 1024 * 1024:
            raise SurveyError("air log larger than 64 MB", name)
        if size == 0:
            raise SurveyError(f"the air log is empty (0 bytes); expected CSV with columns "
                              f"{_LOG_COLUMNS}", name)
        with path.open("rb") as fh:
            first = fh.readline(4096).decode("utf-8-sig", "replace")
        if "," not in first and (";" in first or "\t" in first):
            sep = "';'" if ";" in first else "tabs"
            raise SurveyError(f"the header line is separated by {sep}; expected a comma-separated "
                              f"log with decimal points (columns {_LOG_COLUMNS})", name)
        df = pd.read_csv(path, dtype={"frame": "string"}, encoding="utf-8-sig")
    except SurveyError:
        raise
    except OSError as exc:
        raise SurveyError(f"cannot read the air log ({exc.strerror or type(exc).__name__})", name) from None
    except Exception:  # noqa: BLE001 - any parser failure is a bad file for the user
        raise SurveyError("cannot read the air log; expected CSV with columns time, "
                          "indoor_air_c, outdoor_air_c, frame", name) from None
    for col in ("time", "indoor_air_c", "outdoor_air_c"):
        if col not in df.columns:
            raise SurveyError(f"missing column (expected columns: {_LOG_COLUMNS})", name, col)
    if df.empty:
        raise SurveyError("the air log has a header but no rows", name)
    text = df["time"].astype("string").str.strip().fillna("")
    clock = text.str.fullmatch(r"\d{1,2}:\d{2}(?::\d{2}(?:\.\d*)?)?")
    if clock.any():
        row = int(np.flatnonzero(clock.to_numpy())[0]) + 2
        raise SurveyError(f"line {row}: a clock time without its date; expected an ISO 8601 "
                          "timestamp, e.g. 2026-01-14T22:00 (a clock time alone cannot tell the "
                          "night's hours after midnight from those before it)", name, "time")
    no_date = ~text.str.match(r"\d{4}-\d{2}-\d{2}")
    if no_date.any():
        row = int(np.flatnonzero(no_date.to_numpy())[0]) + 2
        raise SurveyError(f"line {row}: expected an ISO 8601 timestamp, year first, e.g. "
                          "2026-01-14T22:00", name, "time")
    try:
        df["time"] = pd.to_datetime(text, format="ISO8601")
    except (ValueError, TypeError):
        raise SurveyError("expected ISO 8601 timestamps, e.g. 2026-01-14T22:00", name, "time") from None
    for col in ("indoor_air_c", "outdoor_air_c") + (("reflected_c",) if "reflected_c" in df else ()):
        vals = pd.to_numeric(df[col], errors="coerce")
        if vals.isna().any():
            row = int(np.flatnonzero(vals.isna().to_numpy())[0]) + 2
            raise SurveyError(f"line {row}: expected a number in °C", name, col)
        lo, hi = LOG_COLUMNS_C[col]
        bad = ((vals < lo) | (vals > hi)).to_numpy()
        if bad.any():
            row = int(np.flatnonzero(bad)[0])
            v = float(vals.iloc[row])
            raise SurveyError(f"line {row + 2}: {v:g} is outside {lo:g}…{hi:g} °C"
                              f"{_unit_slip(v, lo, hi)}", name, col)
        df[col] = vals.astype(float)
    _check_log_order(df["time"], name)
    df = df.sort_values("time").reset_index(drop=True)
    if df["time"].duplicated().any():
        raise SurveyError("duplicate timestamps", name, "time")
    step = df["time"].diff().dt.total_seconds().to_numpy()[1:] / 3600.0
    if step.size:
        usual = float(np.median(step))
        limit = max(MAX_LOG_GAP_H, 10.0 * usual)
        if step.max() > limit:
            k = int(np.argmax(step))
            raise SurveyError(f"the log jumps {step[k]:.3g} h between {df['time'].iloc[k]:%Y-%m-%d %H:%M} "
                              f"and {df['time'].iloc[k + 1]:%Y-%m-%d %H:%M} (its usual step is "
                              f"{usual * 60:.3g} min): a date not advanced past midnight, or a gap "
                              "in the logging? A series needs one unbroken night", name, "time")
    df["hours"] = (df["time"] - df["time"].iloc[0]).dt.total_seconds() / 3600.0
    if "frame" not in df:
        df["frame"] = pd.NA
    return df


def _unit_slip(v: float, lo: float, hi: float) -> str:
    """A likely unit slip for a logged temperature out of range, or ""."""
    slip = celsius_slip(v, lo, hi)
    if slip is None:
        return ""
    unit, c = slip
    name = "kelvin" if unit == "K" else unit
    return f"; logged in {name}? {v:g} {unit} is {c:.{2 if unit == 'K' else 1}f} °C: the columns are in °C"


def _check_log_order(times, name: str) -> None:
    """Refuse a log whose times are neither all rising nor all falling, naming the line."""
    step = times.diff().dt.total_seconds().to_numpy()[1:]
    if (step >= 0).all() or (step <= 0).all():
        return
    rising = int((step > 0).sum()) >= int((step < 0).sum())
    k = int(np.flatnonzero(step < 0 if rising else step > 0)[0])
    raise SurveyError(f"line {k + 3}: its time {times.iloc[k + 1]:%Y-%m-%d %H:%M} goes "
                      f"{'back' if rising else 'forward'} from line {k + 2}'s "
                      f"({times.iloc[k]:%Y-%m-%d %H:%M}): a date not advanced past midnight? "
                      "Rows must be in time order", name, "time")
