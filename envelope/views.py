"""What the pipeline reads, read at one edge: a view's pixels and outlines, a series' frames.

Every stage after this module takes arrays and dataclasses, never paths. A *source* hands
the pipeline one view or one series at a time (so one unreadable file fails one view only):

- `SurveyFolder` reads them from the survey's folder (the normal case);
- `InMemory` serves arrays the caller already holds (notebooks, tests, other front ends).

Both satisfy the `ViewSource` protocol that `envelope.assess.assess_survey` takes.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Callable, Iterator, Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Protocol

import numpy as np

from envelope.errors import GeometryError, SurveyError
from envelope.outlines import Outline, parse_outlines, read_outlines
from envelope.readers import check_view_readings
from envelope.survey import Series, Survey, Thermogram, load_air_log, load_pixels

__all__ = ["ViewData", "SeriesData", "ViewSource", "SurveyFolder", "InMemory"]


@dataclass(frozen=True)
class ViewData:
    """One thermogram as read: the exported readings and its outlines.

    Attributes
    ----------
    thermogram : Thermogram
        The survey's entry (settings, probes, tapes, scale).
    readings_c : ndarray (H, W), float32
        Temperatures as the camera exported them, with its export settings [°C].
    outlines : tuple of Outline
        Validated element outlines and reference zones in pixel coordinates.
    label : str
        Name of the pixel file for messages (relative to the survey folder).
    outlines_label : str
        Name of the outlines file for messages.
    """

    thermogram: Thermogram
    readings_c: np.ndarray
    outlines: tuple[Outline, ...]
    label: str = "<memory>"
    outlines_label: str = "<memory>"


@dataclass(frozen=True)
class SeriesData:
    """A logged night series of one view: air log rows with a frame, and a frame stream.

    Attributes
    ----------
    series : Series
    times_h : ndarray
        Hours since the first row [h].
    indoor_air_c, outdoor_air_c : ndarray
        Logged air temperatures [°C].
    reflected_c : ndarray or None
        Logged reflected apparent temperature per row [°C]; None: the thermogram's value.
    frames : callable
        ``frames()`` returns a fresh iterator of readings arrays (H, W) [°C], one per row,
        read lazily (a long series is never held in memory at once).
    label : str
        Name of the air log for messages.
    """

    series: Series
    times_h: np.ndarray
    indoor_air_c: np.ndarray
    outdoor_air_c: np.ndarray
    reflected_c: np.ndarray | None
    frames: Callable[[], Iterator[np.ndarray]]
    label: str = "<memory>"
    frame_labels: tuple[str, ...] = field(default=())

    @property
    def n_frames(self) -> int:
        return len(self.times_h)


class ViewSource(Protocol):
    """Where the pipeline gets a view's data and a series' frames."""

    def open_view(self, thermogram: Thermogram) -> ViewData: ...

    def open_series(self, series: Series) -> SeriesData: ...


def _rel(path: Path, root: Path) -> str:
    try:
        return Path(path).resolve().relative_to(root.resolve()).as_posix()
    except ValueError:
        return str(path)


class SurveyFolder:
    """Reads views and series from the survey's own folder (pixel files, GeoJSON, air logs)."""

    def __init__(self, survey: Survey):
        self.survey = survey
        self.root = Path(survey.root)

    def open_view(self, thermogram: Thermogram) -> ViewData:
        label = _rel(thermogram.file, self.root)
        readings = load_pixels(thermogram.file, label, thermogram.export)
        check_view_readings(readings, thermogram, self.survey.conditions, self.survey.camera,
                            label)
        olabel = _rel(thermogram.outlines, self.root)
        try:
            outlines = read_outlines(thermogram.outlines, readings.shape,
                                     tuple(self.survey.elements))
        except GeometryError as exc:  # name the file as the survey does, not by its full path
            raise GeometryError(exc.detail, olabel, exc.field) from None
        return ViewData(thermogram, readings, tuple(outlines), label, olabel)

    def open_series(self, series: Series) -> SeriesData:
        label = _rel(series.air_log, self.root)
        log = load_air_log(series.air_log, label)
        rows = log[log["frame"].notna() & (log["frame"].astype(str).str.strip() != "")]
        if len(rows) < 3:
            raise SurveyError("expected at least 3 rows with a frame", label, "frame")
        root = self.root.resolve()
        paths = []
        for i, rel in enumerate(rows["frame"].astype(str)):
            path = (series.air_log.parent / rel.strip()).resolve()
            if not path.is_relative_to(root):
                raise SurveyError(f"frame '{rel}' lies outside the survey folder", label,
                                  f"frame (row {i + 2})")
            paths.append(path)
        labels = tuple(p.relative_to(root).as_posix() for p in paths)
        tg = self.survey.thermogram(series.thermogram)
        export = tg.export
        # a frame is checked against the night as its view is (its probes were read once)
        plain = dataclasses.replace(tg, probes=())
        survey = self.survey

        def frames() -> Iterator[np.ndarray]:
            for path, flabel in zip(paths, labels, strict=True):
                img = load_pixels(path, flabel, export)
                check_view_readings(img, plain, survey.conditions, survey.camera, flabel)
                yield img

        refl = rows["reflected_c"].to_numpy(float) if "reflected_c" in rows else None
        return SeriesData(series, rows["hours"].to_numpy(float),
                          rows["indoor_air_c"].to_numpy(float),
                          rows["outdoor_air_c"].to_numpy(float), refl, frames, label, labels)


class InMemory:
    """Views and series held in memory.

    Parameters
    ----------
    views : mapping of thermogram id to ViewData, or to ``(readings_c, outlines)`` where
        outlines is a GeoJSON dict or a sequence of `Outline`.
    series : mapping of series id to SeriesData, optional
    element_names : iterable of str, optional
        Element names that outlines may use (GeoJSON dicts are validated against them).
    """

    def __init__(self, views: Mapping, series: Mapping | None = None, element_names=None):
        self._views = dict(views)
        self._series = dict(series or {})
        self._names = None if element_names is None else tuple(element_names)

    def open_view(self, thermogram: Thermogram) -> ViewData:
        try:
            v = self._views[thermogram.id]
        except KeyError:
            raise SurveyError("no pixel data given for this thermogram", "<memory>",
                              f"thermograms[{thermogram.id}]") from None
        if isinstance(v, ViewData):
            return v
        readings, outlines = v
        readings = np.asarray(readings, dtype=np.float32)
        if isinstance(outlines, Mapping):
            outlines = parse_outlines(outlines, readings.shape, self._names,
                                      source=f"<memory:{thermogram.id}>")
        return ViewData(thermogram, readings, tuple(outlines), f"<memory:{thermogram.id}>",
                        f"<memory:{thermogram.id} outlines>")

    def open_series(self, series: Series) -> SeriesData:
        try:
            return self._series[series.id]
        except KeyError:
            raise SurveyError("no frames given for this series", "<memory>",
                              f"series[{series.id}]") from None
