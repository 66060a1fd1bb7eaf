"""Benchmark: segmentation and description of a 1024 x 768 thermogram with 20 elements.

Prints ``name: value`` lines; ``run(quick)`` returns ``{"defects_ms": median ms}``.
Target: under 200 ms per thermogram.
"""

from __future__ import annotations

import sys
import time
from dataclasses import dataclass

import numpy as np
import shapely

from envelope.defects import find_defects

H, W = 768, 1024
PX_M2 = 0.005**2  # 5 mm per pixel


@dataclass(frozen=True)
class _Element:
    name: str
    kind: str
    polygon_net: object
    mask: np.ndarray
    reference_mask: np.ndarray | None = None


def scene(seed: int = 0):
    """20 wall panels (5 x 4) of 0.3 W/m2K, each with a cold spot and a cold strip."""
    rng = np.random.default_rng(seed)
    frsi = np.full((H, W), 0.95) + rng.normal(0.0, 0.0025, (H, W))
    elements = {}
    ph, pw = H // 4, W // 5
    for i in range(4):
        for j in range(5):
            r0, c0 = i * ph, j * pw
            frsi[r0 + 20:r0 + 60, c0 + 30:c0 + 80] -= 0.15
            frsi[r0 + ph - 14:r0 + ph - 4, c0 + 5:c0 + pw - 5] -= 0.1
            mask = np.zeros((H, W), bool)
            mask[r0:r0 + ph, c0:c0 + pw] = True
            name = f"Panel {i}-{j}"
            elements[name] = _Element(name, "wall", shapely.box(c0, r0, c0 + pw, r0 + ph),
                                      mask)
    t = 20.0 * frsi  # T_e = 0 °C, T_i = 20 °C
    q = 7.7 * (20.0 - t)  # linear film, h_si = 1/0.13 (ISO 6946 Table 7)
    return t, frsi, q, np.full((H, W), PX_M2), elements


def run(quick: bool = False) -> dict[str, float]:
    t, f, q, area, elements = scene()
    repeats = 3 if quick else 7
    times = []
    n = 0
    for _ in range(repeats):
        t0 = time.perf_counter()
        found = find_defects(t, f, q, area, elements, "interior", 20.0, 2500.0)
        times.append((time.perf_counter() - t0) * 1e3)
        n = len(found)
    return {"defects_ms": float(np.median(times)), "defects_found": float(n)}


if __name__ == "__main__":
    for k, v in run("--quick" in sys.argv).items():
        print(f"{k}: {v:.1f}")
