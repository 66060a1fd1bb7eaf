"""Reference spots on the surface: the camera's offset from contact probes, and the spot
readings that calibrate one element (probe, tape of known emissivity).

The camera's absolute error is one number per image: a contact probe measures the true
surface temperature at a marked pixel; the measurement equation says what the camera should
have read there; the difference (measured − expected) is the offset, removed from every
pixel. What is left is the probe's own uncertainty and the camera's relative accuracy.

Pure functions on arrays; pixel positions are ``(x, y)`` = (column, row) as everywhere.
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass

import numpy as np

from envelope import radiometry

__all__ = ["Offset", "spot_pixel", "spot_mean", "probe_offset", "camera_offset"]


@dataclass(frozen=True)
class Offset:
    """Camera offset removed from a thermogram's apparent temperatures [K].

    Attributes
    ----------
    value_k : float
        What the camera read too warm (positive) at the reference [K].
    std_k : float or None
        Standard uncertainty left after the correction [K]; None when nothing was removed.
    source : str
        Where it came from, in words.
    """

    value_k: float = 0.0
    std_k: float | None = None
    source: str = ""


def spot_pixel(xy_px, shape) -> tuple[int, int] | None:
    """``(row, col)`` of the pixel holding point ``xy_px`` = (x, y), or None outside the frame."""
    col, row = int(math.floor(xy_px[0])), int(math.floor(xy_px[1]))
    if 0 <= row < shape[0] and 0 <= col < shape[1]:
        return row, col
    return None


def spot_mean(image, row: int, col: int) -> float:
    """Mean of the 3 × 3 px patch around a pixel (NaN-aware): one spot reading [°C].

    Returns NaN when the whole patch is invalid.
    """
    patch = np.asarray(image)[max(row - 1, 0): row + 2, max(col - 1, 0): col + 2]
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)  # an all-NaN patch gives NaN
        return float(np.nanmean(patch))


def probe_offset(apparent_c, probe_rows_cols, probe_surface_c, probe_std_k, emissivity_map,
                 reflected_c, transmittance, atmosphere_c, band_um, relative_accuracy_k):
    """Camera offset from contact probes: mean of (measured − expected) apparent readings.

    Parameters
    ----------
    apparent_c : ndarray (H, W)
        Blackbody-equivalent readings [°C] (export settings undone).
    probe_rows_cols : sequence of (int, int)
        Pixel of each probe.
    probe_surface_c, probe_std_k : sequence of float
        Probe surface temperatures [°C] and their standard uncertainties [K].
    emissivity_map : ndarray (H, W)
    reflected_c, transmittance, atmosphere_c : float
        Measurement-equation inputs of the view [°C, -, °C].
    band_um : (float, float)
    relative_accuracy_k : float
        Camera relative accuracy (± half-width, rectangular) [K].

    Returns
    -------
    (offset_k, std_k) : (float, float)

    Notes
    -----
    Expected reading at a probe: ``A = T_app(T_probe; eps, T_refl, tau, T_atm)`` (the
    measurement equation, `radiometry.apparent_temperature`); offset ``delta = A_meas − A``
    (3 × 3 px mean). Its standard uncertainty combines the probes' (averaged over n probes)
    and the relative accuracy (rectangular, half-width a: a/√3):
    ``u² = mean(u_p²)/n + (a/√3)²``.
    """
    deltas = []
    for (row, col), t_probe in zip(probe_rows_cols, probe_surface_c, strict=True):
        measured = spot_mean(apparent_c, row, col)
        if not math.isfinite(measured):
            raise ValueError(f"probe pixel (row {row}, column {col}) has no valid reading around it")
        expected = float(radiometry.apparent_temperature(
            t_probe, float(emissivity_map[row, col]), reflected_c, transmittance, atmosphere_c,
            band_um=band_um))
        deltas.append(measured - expected)
    n = len(deltas)
    if n == 0:
        raise ValueError("no probe given")
    rel = relative_accuracy_k / math.sqrt(3.0)
    std = math.sqrt(float(np.mean(np.square(probe_std_k))) / n + rel**2)
    return float(np.mean(deltas)), std


def camera_offset(apparent_c, probe_rows_cols, probe_surface_c, probe_std_k, emissivity_map,
                  reflected_c, transmittance, atmosphere_c, band_um, relative_accuracy_k,
                  survey_offset_k=None, survey_offset_std_k=0.3) -> Offset:
    """The view's camera offset: from its contact probes, else the survey's stated offset,
    else none (see `probe_offset` for the arguments).

    Returns
    -------
    Offset
    """
    rel = relative_accuracy_k / math.sqrt(3.0)
    if len(probe_rows_cols):
        value, std = probe_offset(apparent_c, probe_rows_cols, probe_surface_c, probe_std_k,
                                  emissivity_map, reflected_c, transmittance, atmosphere_c,
                                  band_um, relative_accuracy_k)
        plural = "s" if len(probe_rows_cols) > 1 else ""
        return Offset(value, std, f"contact probe{plural} in this thermogram: camera read "
                                  f"{value:+.2f} K, removed")
    if survey_offset_k is not None:
        std = math.sqrt(survey_offset_std_k**2 + rel**2)
        return Offset(float(survey_offset_k), std,
                      f"survey camera offset {survey_offset_k:+.2f} K removed")
    return Offset()
