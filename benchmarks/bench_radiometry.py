"""Benchmark: radiometric correction against a plain memory copy, in CPU time.

Three timings on 640 × 480 float32 frames (one thread: numpy ufuncs):
- ``correction``: `object_temperature` on a stack, scalar emissivity and settings;
- ``correction_pipeline``: the path the pipeline really runs, frame by frame — the camera's
  export settings undone (`blackbody_reading`) then the object temperature with a per-pixel
  emissivity map of five elements (`object_temperature`);
- ``copy``: `np.copy` of the same data.
The sides are measured alternately (correction, copy, correction, ...) and the medians of
CPU time (`time.process_time`) are reported, so load from other processes on a shared
machine does not inflate one side. Targets: correction and correction_pipeline >= 100 Mpx/s;
correction / copy <= 10.
"""

from __future__ import annotations

import time

import numpy as np

from envelope.radiometry import blackbody_reading, object_temperature


def _cpu(func) -> float:
    t0 = time.process_time()
    func()
    return time.process_time() - t0


def _alternate(a, b, repeats: int) -> tuple[float, float]:
    """Median CPU seconds of `a` and of `b`, measured alternately."""
    ta, tb = [], []
    for _ in range(repeats):
        ta.append(_cpu(a))
        tb.append(_cpu(b))
    return float(np.median(ta)), float(np.median(tb))


def _emissivity_map(shape) -> np.ndarray:
    eps = np.full(shape, 0.93, np.float32)  # plaster
    eps[:200, :300] = 0.84                  # glazing
    eps[300:, 400:] = 0.95                  # brick
    eps[100:150, :] = 0.90                  # timber
    eps[420:, :120] = 0.88                  # painted metal
    return eps


def run(quick: bool = False) -> dict[str, float]:
    """Return the Mpx/s of each path and the correction / copy ratio."""
    frames = 5 if quick else 20
    repeats = 5 if quick else 9
    rng = np.random.default_rng(0)
    stack = rng.uniform(-5.0, 25.0, size=(frames, 480, 640)).astype(np.float32)
    eps = _emissivity_map(stack.shape[1:])

    def pipeline():
        for frame in stack:
            app = blackbody_reading(frame, 0.95, 20.0, 1.0, None)
            object_temperature(app, eps, 4.0, 0.98, 2.0)

    object_temperature(stack[:1], 0.93, 4.0, 0.98)  # warm the per-band fit cache
    pipeline()
    t_corr, t_copy = _alternate(lambda: object_temperature(stack, 0.93, 4.0, 0.98),
                                lambda: np.copy(stack), repeats)
    t_pipe, _ = _alternate(pipeline, lambda: np.copy(stack), repeats)
    mpx = stack.size / 1e6
    return {
        "correction_mpx_per_s": mpx / t_corr,
        "correction_pipeline_mpx_per_s": mpx / t_pipe,
        "copy_mpx_per_s": mpx / t_copy,
        "correction_vs_copy": t_corr / t_copy,
    }


if __name__ == "__main__":
    import sys

    for name, value in run(quick="--quick" in sys.argv).items():
        print(f"{name}: {value:.4g}")
