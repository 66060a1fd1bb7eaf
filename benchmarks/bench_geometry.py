"""Benchmark: element masks and areas on a 1024 x 768 thermogram.

``mask_ms``: `envelope.geometry.rasterise` of 20 polygons (two walls covering most of the
frame, a roof, 17 windows and doors), median of several repeats; target < 50 ms.
``regions_ms``: `element_regions` for the same outlines (host search, openings cut out,
masks, exact areas, area-map sums). ``area_map_ms`` and ``rectify_ms`` (2 cm grid of the
whole frame) for scale.
"""

from __future__ import annotations

import statistics
import time

import numpy as np
from shapely.geometry import Polygon

from envelope.geometry import (
    element_regions,
    fit_homography,
    parse_outlines,
    pixel_area_map,
    rasterise,
    rectify,
)

SHAPE = (768, 1024)


def _scene():
    """Twenty outlines on an oblique façade (pixel quads, invented names)."""
    feats, elements = [], {}

    def add(name, kind, pts, host=None):
        feats.append({"type": "Feature", "properties": {"element": name, "role": "element"},
                      "geometry": {"type": "Polygon", "coordinates": [pts]}})
        elements[name] = (kind, host)

    add("wall_left", "wall", [[12.3, 140.2], [505.1, 120.4], [508.7, 760.3], [8.9, 750.6]])
    add("wall_right", "wall", [[515.2, 118.3], [1015.6, 100.1], [1012.4, 765.2], [512.0, 761.8]])
    add("roof", "roof", [[10.2, 130.5], [1015.1, 90.4], [760.3, 4.2], [260.7, 12.1]])
    rng = np.random.default_rng(3)
    for k in range(17):
        side = k % 2
        x0 = (60 + 470 * side) + (k // 2) % 4 * 105 + rng.uniform(0, 5)
        y0 = 200 + (k // 8) * 200 + rng.uniform(0, 5)
        w, h = 70 + rng.uniform(0, 10), 110 + rng.uniform(0, 20)
        kind = "door" if k == 16 else "window"
        add(f"{kind}_{k}", kind, [[x0, y0], [x0 + w, y0 + 2], [x0 + w + 1, y0 + h],
                                  [x0 - 1, y0 + h + 2]])
    return {"type": "FeatureCollection", "features": feats}, elements


def _median_ms(func, repeats):
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        func()
        times.append(time.perf_counter() - t0)
    return 1e3 * statistics.median(times)


def run(quick: bool = False) -> dict[str, float]:
    """Return ``{"mask_ms", "regions_ms", "area_map_ms", "rectify_ms"}``."""
    repeats = 3 if quick else 9
    obj, elements = _scene()
    outlines = parse_outlines(obj, SHAPE, elements)
    polys = [Polygon(o.polygon.exterior.coords) for o in outlines]
    h = fit_homography([[0, 0], [1024, 0], [1024, 768], [0, 768]],
                       [[0, 7.6], [10.0, 7.0], [9.6, 0.0], [0.2, 0.0]])
    rasterise(polys[0], SHAPE)  # warm-up
    mask_ms = _median_ms(lambda: [rasterise(p, SHAPE) for p in polys], repeats)
    regions_ms = _median_ms(lambda: element_regions(outlines, elements, SHAPE, h), repeats)
    area_ms = _median_ms(lambda: pixel_area_map(h, SHAPE), repeats)
    img = np.random.default_rng(0).normal(18.0, 0.5, SHAPE)
    rect_ms = _median_ms(lambda: rectify(img, h, cm_per_px=2.0), 1 if quick else 3)
    return {"mask_ms": mask_ms, "regions_ms": regions_ms, "area_map_ms": area_ms,
            "rectify_ms": rect_ms}


if __name__ == "__main__":
    import sys

    for name, value in run(quick="--quick" in sys.argv).items():
        print(f"{name}: {value:.3g}")
