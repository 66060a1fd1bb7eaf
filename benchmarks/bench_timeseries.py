"""Benchmark: the pipeline's night-series stage on a stream of 640 × 480 thermograms.

A survey built in memory (`envelope.views.InMemory`): one interior view of a wall (U 0.6)
and a series of its frames whose outdoor air follows a daily sine, each frame made when the
stage asks for it (0.05 K pixel noise), so the series is never held in memory. The whole
survey is assessed; the series stage (frames through the view's correction path, the ISO
9869-1 average and dynamic methods, the series Monte Carlo) is timed by the stage clock.
Reports the series stage's wall time for 500 frames (quick: 50, scaled to 500) and the peak
traced memory of the run. Targets: < 10 s and < 500 MB.
"""

from __future__ import annotations

import time
import tracemalloc
from pathlib import Path

import numpy as np

from envelope import radiometry, synth
from envelope import survey as sv
from envelope.assess import StageClock, assess_survey
from envelope.views import InMemory, SeriesData

SHAPE = (480, 640)
U, EPS, T_R, H_C = 0.6, 0.9, 19.5, 2.5


def _survey(n_draws: int) -> sv.Survey:
    view = sv.Thermogram(
        id="wall", file=Path("wall.npy"), outlines=Path("wall.geojson"), side="interior",
        reflected_c=T_R, transmittance=1.0,
        known_length=sv.KnownLength((0.0, 479.5), (640.0, 479.5), 6.4))
    return sv.Survey(
        root=Path("."), file=Path("survey.toml"), site=sv.Site("benchmark wall"), date="",
        surveyor="", client="", conditions=sv.Conditions(indoor_air_c=20.0, outdoor_air_c=2.0),
        camera=sv.Camera(), climate=sv.Climate(), prices=sv.Prices(),
        analysis=sv.Analysis(monte_carlo_draws=n_draws, interior_convection="iso6946"),
        elements={"wall": sv.Element("wall", "wall", emissivity=EPS)}, thermograms=(view,),
        series=(sv.Series("night", "wall", "wall", Path("log.csv")),))


def _reading(t_ai, t_ae, rng, pattern):
    t_s = synth.surface_temperature_for_u(U, t_ai, t_ae, T_R, EPS, H_C) + pattern
    return synth.render_apparent(t_s, EPS, T_R, noise_k=0.05, rng=rng).astype(np.float32)


def run(quick: bool = False) -> dict[str, float]:
    """Return ``{"timeseries_500_s", "timeseries_peak_mb"}`` (quick: 50 frames, scaled)."""
    n = 50 if quick else 500
    times_h = np.arange(n) * (24.0 / 96.0)  # one frame every 15 min
    t_ai = np.full(n, 20.0)
    t_ae = 2.0 + 4.0 * np.sin(2.0 * np.pi * times_h / 24.0)
    pattern = np.zeros(SHAPE, np.float32)
    pattern[:, 300:320] = -0.5  # a cold stud line
    outlines = {"type": "FeatureCollection", "features": [
        {"type": "Feature", "properties": {"element": "wall"},
         "geometry": {"type": "Polygon", "coordinates": [[[0, 0], [640, 0], [640, 480],
                                                          [0, 480], [0, 0]]]}}]}

    # frames made when asked: a rendered wall shifted by the change of its apparent
    # temperature (first order, exact enough for timing) plus noise from a small pool
    base = _reading(20.0, 2.0, np.random.default_rng(0), pattern)
    t_si = synth.surface_temperature_for_u(U, t_ai, t_ae, T_R, EPS, H_C)
    a0 = radiometry.apparent_temperature(float(t_si[0]), EPS, T_R)
    pool = np.random.default_rng(2).standard_normal((4, *SHAPE), dtype=np.float32) * 0.05

    def frames():
        for k in range(n):
            shift = np.float32(radiometry.apparent_temperature(float(t_si[k]), EPS, T_R) - a0)
            yield base + shift + pool[k % 4]

    s = _survey(2000 if quick else 20000)
    data = SeriesData(s.series[0], times_h, t_ai, t_ae, None, frames, "log.csv")
    source = InMemory({"wall": (_reading(20.0, 2.0, np.random.default_rng(0), pattern),
                                outlines)}, {"night": data}, ["wall"])
    clock = StageClock()
    tracemalloc.start()
    t0 = time.perf_counter()
    a = assess_survey(s, source=source, clock=clock)
    total = time.perf_counter() - t0
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    if a.failures or not np.isfinite(a.series[0].u_w_m2k):
        raise RuntimeError(f"series not assessed: {a.failures}")
    series_s = clock.seconds.get("series", total)
    return {"timeseries_500_s": series_s * 500.0 / n, "timeseries_peak_mb": peak / 1e6,
            "timeseries_u_w_m2k": a.series[0].u_w_m2k}


if __name__ == "__main__":
    import sys

    for name, value in run(quick="--quick" in sys.argv).items():
        print(f"{name}: {value:.3f}")
