"""Benchmark: ISO 9869-1 average-method U from a stream of 640 x 480 thermograms.

Frames are made one at a time by a generator (apparent image of a wall whose outdoor air
follows a daily sine, with 0.05 K pixel noise), corrected to object temperature
(`envelope.radiometry.object_temperature`) and fed to
`envelope.transmittance.series_u_from_frames`, which never holds more than one frame.
Reports the wall time for 500 frames (quick: 50, scaled to 500) and the peak traced memory.
Targets: < 10 s and < 500 MB.
"""

from __future__ import annotations

import time
import tracemalloc

import numpy as np

from envelope import radiometry, synth
from envelope.transmittance import series_u_from_frames

SHAPE = (480, 640)


def _series(n):
    times_h = np.arange(n) * (24.0 / 96.0)  # one frame every 15 min
    t_ai = np.full(n, 20.0)
    t_ae = 2.0 + 4.0 * np.sin(2.0 * np.pi * times_h / 24.0)
    t_r = np.full(n, 19.5)
    return times_h, t_ai, t_ae, t_r


def _frames(n, t_si, t_r, eps, seed=0):
    """Yield corrected object-temperature frames one at a time.

    The wall is rendered once; each frame shifts that apparent image by the change of the
    surface's apparent temperature (first-order, exact enough for timing), adds noise from a
    small pool rolled by a random number of rows, and is corrected back to object temperature.
    """
    rng = np.random.default_rng(seed)
    pattern = np.zeros(SHAPE, np.float32)
    pattern[:, 300:320] = -1.0  # a cold stud line
    base = synth.render_apparent(pattern + np.float32(t_si[0]), eps, t_r[0])
    a0 = radiometry.apparent_temperature(t_si[0], eps, t_r[0])
    pool = rng.standard_normal((4, *SHAPE), dtype=np.float32) * np.float32(0.05)
    for k in range(n):
        shift = np.float32(radiometry.apparent_temperature(t_si[k], eps, t_r[k]) - a0)
        app = base + shift
        app += np.roll(pool[k % 4], int(rng.integers(SHAPE[0])), axis=0)
        yield radiometry.object_temperature(app, eps, t_r[k])


def run(quick: bool = False) -> dict[str, float]:
    """Return ``{"timeseries_500_s", "timeseries_peak_mb"}`` (quick: 50 frames, scaled)."""
    n = 50 if quick else 500
    eps = 0.9
    times_h, t_ai, t_ae, t_r = _series(n)
    t_si = synth.surface_temperature_for_u(0.6, t_ai, t_ae, t_r, eps, 2.5)
    mask = np.zeros(SHAPE, bool)
    mask[40:440, 60:580] = True
    tracemalloc.start()
    t0 = time.perf_counter()
    res = series_u_from_frames(
        _frames(n, t_si, t_r, eps), mask, t_ai, t_ae, t_r, eps, "iso6946", times_h
    )
    elapsed = time.perf_counter() - t0
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    if not np.isfinite(res.u_w_m2k):
        raise RuntimeError("time-series U is not finite")
    return {"timeseries_500_s": elapsed * 500.0 / n, "timeseries_peak_mb": peak / 1e6}


if __name__ == "__main__":
    import sys

    for name, value in run(quick="--quick" in sys.argv).items():
        print(f"{name}: {value:.3f}")
