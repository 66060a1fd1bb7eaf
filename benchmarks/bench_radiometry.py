"""Benchmark: radiometric correction of a stack of thermograms against a plain memory copy.

Times `envelope.radiometry.object_temperature` on a stack of 640 x 480 float32 frames with
scalar emissivity, reflected temperature and transmittance (one thread: numpy ufuncs), and
`np.copy` of the same stack. Targets: >= 100 Mpx/s and a time ratio correction/copy <= 10.
"""

from __future__ import annotations

import time

import numpy as np

from envelope.radiometry import object_temperature


def _best_time(func, repeats):
    best = float("inf")
    for _ in range(repeats):
        t0 = time.perf_counter()
        func()
        best = min(best, time.perf_counter() - t0)
    return best


def run(quick: bool = False) -> dict[str, float]:
    """Return ``{"correction_mpx_per_s", "copy_mpx_per_s", "correction_vs_copy"}``."""
    frames = 5 if quick else 20
    rng = np.random.default_rng(0)
    stack = rng.uniform(-5.0, 25.0, size=(frames, 480, 640)).astype(np.float32)
    object_temperature(stack[:1], 0.93, 4.0, 0.98)  # warm the per-band fit cache
    repeats = 3 if quick else 5
    t_corr = _best_time(lambda: object_temperature(stack, 0.93, 4.0, 0.98), repeats)
    t_copy = _best_time(lambda: np.copy(stack), repeats)
    mpx = stack.size / 1e6
    return {
        "correction_mpx_per_s": mpx / t_corr,
        "copy_mpx_per_s": mpx / t_copy,
        "correction_vs_copy": t_corr / t_copy,
    }


if __name__ == "__main__":
    import sys

    for name, value in run(quick="--quick" in sys.argv).items():
        print(f"{name}: {value:.4g}")
