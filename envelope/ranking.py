"""Ranking of defects (risk first, then energy) and their JSON-ready records."""

from __future__ import annotations

import math

import numpy as np

from envelope.energy import Z95
from envelope.quantify import WARM_NOTE

__all__ = ["RISK_SCORES", "rank_defects", "defect_to_dict"]

RISK_SCORES = {"condensation": 2, "mould": 1, "none": 0, "not assessed": 0}
"""Risk part of the ranking score."""


def rank_defects(defects, assign_ids: bool = True):
    """Sort defects by risk then energy, fill in their score parts, ranks and ids.

    Parameters
    ----------
    defects : iterable of Defect
    assign_ids : bool
        Number the ids "D1", "D2", ... in rank order (replacing any earlier ids, so that a
        ranking over several thermograms gives unique ids). The order is total, so the ids
        are stable for a given input.

    Returns
    -------
    list of Defect
        Sorted; ``rank`` 1..N, ``score_risk`` (condensation 2, mould 1, none 0),
        ``score_annual_kwh`` and ``score_text`` set in place.

    Notes
    -----
    The score is the pair (risk part, energy part) compared in that order: a defect whose
    surface can reach condensation ranks above any defect that only costs energy, because
    mould is a health matter; among equal risks, the larger kWh/yr ranks first. Ties break
    on thermogram, element and position; "not assessed" scores as "none", so the order is deterministic.
    """
    items = list(defects)
    for d in items:
        d.score_risk = RISK_SCORES.get(d.risk, 0)
        d.score_annual_kwh = float(d.annual_kwh) if np.isfinite(d.annual_kwh) else 0.0
    items.sort(key=lambda d: (-d.score_risk, -d.score_annual_kwh, d.thermogram, d.element,
                              d.centroid_px[1], d.centroid_px[0]))
    for i, d in enumerate(items, start=1):
        d.rank = i
        d.score_text = (f"risk: {d.risk} ({d.score_risk}) · energy: "
                        f"{d.score_annual_kwh:.0f} kWh/yr")
        if assign_ids:
            d.id = f"D{i}"
    return items


def _num(x):
    if x is None:
        return None
    x = float(x)
    return x if math.isfinite(x) else None


def _bound(value, std, k):
    """value + k std (a 95 % bound with k = ±1.96), or None without both."""
    value, std = _num(value), _num(std)
    return None if value is None or std is None else value + k * std


def defect_to_dict(d) -> dict:
    """JSON-ready dictionary of a defect: keys carry their units, no shapely objects or masks.

    The outline is the exterior ring of the region's polygon (its largest part when the
    region is in several pieces) as ``[[x, y], ...]`` in pixel coordinates.
    """
    poly = d.polygon
    outline, parts = [], []
    if poly is not None and not poly.is_empty:
        pieces = sorted(getattr(poly, "geoms", [poly]), key=lambda g: -g.area)
        parts = [[[float(x), float(y)] for x, y in g.exterior.coords] for g in pieces]
        outline = parts[0]
    return {
        "id": d.id, "thermogram": d.thermogram, "element": d.element, "rank": d.rank,
        "defect_class": d.defect_class, "warm_spot": WARM_NOTE in d.notes,
        "confidence": {k: round(float(v), 4) for k, v in d.confidence.items()},
        "reasons": list(d.reasons), "notes": list(d.notes),
        "area_m2": _num(d.area_m2), "length_m": _num(d.length_m), "width_m": _num(d.width_m),
        "orientation_deg": _num(d.orientation_deg), "elongation": _num(d.elongation),
        "solidity": _num(d.solidity), "junction": d.junction,
        "junction_element": d.junction_element, "edge_distance_m": _num(d.edge_distance_m),
        "spacing_m": _num(d.spacing_m), "count": int(d.count), "extra_w": _num(d.extra_w),
        "extra_w_std": _num(d.extra_w_std), "psi_w_mk": _num(d.psi_w_mk),
        "psi_std_w_mk": _num(d.psi_std_w_mk), "psi_dimensions": d.psi_dimensions,
        "psi_low95_w_mk": _bound(d.psi_w_mk, d.psi_std_w_mk, -Z95),
        "psi_high95_w_mk": _bound(d.psi_w_mk, d.psi_std_w_mk, Z95),
        "chi_w_k": _num(d.chi_w_k), "chi_std_w_k": _num(d.chi_std_w_k),
        "incidence_factor": _num(d.incidence_factor),
        "incidence_area_m2": _num(d.incidence_area_m2),
        "elements": list(d.elements),
        "extra_by_element_w": {k: _num(v) for k, v in d.extra_by_element_w.items()},
        "reference_flux_w_m2": {k: _num(v) for k, v in d.reference_flux_w_m2.items()},
        "integration_distance_m": _num(d.integration_distance_m),
        "integration_stop": d.integration_stop, "zone_area_m2": _num(d.zone_area_m2),
        "h_w_k": _num(d.h_w_k), "air_h_w_k": _num(d.air_h_w_k),
        "annual_kwh": _num(d.annual_kwh),
        "annual_kwh_air": _num(d.annual_kwh_air), "energy_lower_bound": bool(d.energy_lower_bound),
        "leak_flow_natural_m3_h": _num(d.leak_flow_natural_m3_h),
        "leak_flow_test_m3_h": _num(d.leak_flow_test_m3_h),
        "frsi_min": _num(d.frsi_min), "frsi_p05": _num(d.frsi_p05),
        "frsi_design_min": _num(d.frsi_design_min), "frsi_design_p05": _num(d.frsi_design_p05),
        "risk": d.risk, "risk_judged_on": d.risk_judged_on,
        "psi_design_w_mk": _num(d.psi_design_w_mk), "psi_design_source": d.psi_design_source,
        "junction_verdict": d.junction_verdict,
        "junction_verdict_reason": d.junction_verdict_reason,
        "score_risk": int(d.score_risk), "score_annual_kwh": _num(d.score_annual_kwh),
        "score_text": d.score_text,
        "pressure_difference_pa": _num(d.pressure_difference_pa),
        "cooling_k": _num(d.cooling_k),
        "centroid_px": [float(v) for v in d.centroid_px],
        "outline_parts_px": parts,
        "bbox_px": [float(v) for v in d.bbox_px], "outline_px": outline,
    }
