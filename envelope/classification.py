"""Defect classes of a cold region by a transparent rule set.

Every rule that fires adds a score to a class and a sentence with its numbers to the
reasons; the confidences are the scores normalised to sum to 1 (`classify`). Used by
`envelope.defects.find_defects`.
"""

from __future__ import annotations

import math

from envelope.anomalies import DefectSettings, Region
from envelope.junctions import OUTLINE_EDGE
from envelope.registration import PairChange

__all__ = ["CLASSES", "MIN_PRESSURE_PA", "BASE_SCORE", "classify", "parallel_to"]

CLASSES = ("linear thermal bridge", "repeating thermal bridge", "missing insulation",
           "air leakage", "unexplained")
"""Defect classes, in the order of the confidence dictionaries."""

MIN_PRESSURE_PA = 5.0
"""Smallest pressure difference for an air-leakage search (EN 13187:1998, 4.3; from memory)."""

BASE_SCORE = 0.5
"""Score of "unexplained" when no rule fires for another class."""


def parallel_to(region: Region, junction, tol_deg: float = 20.0) -> bool:
    """Whether a region's major axis runs along a junction's shared edge (within tol_deg)."""
    ux, uy = junction.direction_px
    target = math.degrees(math.atan2(-uy, ux)) % 180.0
    d = abs(region.orientation_deg - target) % 180.0
    return min(d, 180.0 - d) <= tol_deg


def classify(region: Region, change: PairChange | None = None, pressure_pa: float | None = None,
             group_size: int = 0, settings: DefectSettings | None = None):
    """Class of a cold region by a transparent rule set.

    Parameters
    ----------
    region : Region
        Described region (`envelope.anomalies.describe_region`), with ``repetition`` and
        ``spacing_m`` set by `find_repetition`.
    change : PairChange, optional
        Its change between the baseline and the depressurised image.
    pressure_pa : float, optional
        Pressure difference of the depressurised image [Pa].
    group_size : int
        Number of members of its repetition group (0 if none).
    settings : DefectSettings, optional

    Returns
    -------
    defect_class : str
    confidence : dict[str, float]
        Scores normalised to sum to 1, over `CLASSES`.
    reasons : list of str
        The rules that fired, in words with their numbers.
    notes : list of str

    Notes
    -----
    Scores (each rule adds to one class; "unexplained" starts at 0.5):

    ========================  ===============================================  =====
    class                     rule                                             score
    ========================  ===============================================  =====
    linear thermal bridge     elongated: length/width ≥ ``elongated``          1.0
    linear thermal bridge     within ``junction_m`` of a junction, parallel     1.0
    repeating thermal bridge  member of a repetition (regular spacing)          2.5
    missing insulation        compact: length/width < 3                        1.0
    missing insulation        regular outline: solidity ≥ 0.8                   0.5
    missing insulation        large: area ≥ 0.1 m²                              0.5
    missing insulation        away from junctions                               0.5
    missing insulation        on a ceiling or roof (gaps in loft insulation)    1.0
    air leakage               absent from the baseline, appears under ≥ 5 Pa    2.5
    air leakage               grows by ≥ 50 % under ≥ 5 Pa                      1.0
    air leakage               cools by ≥ 0.3 K under ≥ 5 Pa                     1.0
    air leakage               irregular: solidity < 0.8 (with a pair)           0.5
    air leakage               at an opening (with a pair)                       0.5
    ========================  ===============================================  =====

    Air-leakage rules need a depressurised image at ≥ 5 Pa (EN 13187); below that a note
    is added instead. The highest score gives the class.
    """
    settings = DefectSettings() if settings is None else settings
    score = dict.fromkeys(CLASSES, 0.0)
    score["unexplained"] = BASE_SCORE
    reasons: list[str] = []
    notes: list[str] = []

    def fire(cls, pts, text):
        score[cls] += pts
        reasons.append(text)

    e = region.elongation
    near = [j for j in region.junctions if j.distance_m <= settings.junction_m]
    if e >= settings.elongated:
        fire("linear thermal bridge", 1.0, f"elongated (length/width {e:.1f})")
    for j in near:
        if e >= settings.elongated * 0.75 and parallel_to(region, j):
            where = ("an element edge with no neighbouring outline" if j.kind == OUTLINE_EDGE
                     else j.name)
            fire("linear thermal bridge", 1.0,
                 f"within {j.distance_m:.2f} m of the {j.kind} junction ({where}) and "
                 f"parallel to it")
            break
    if region.repetition is not None and group_size >= settings.min_repeats:
        fire("repeating thermal bridge", 2.5,
             f"one of {group_size} parallel elongated regions at a regular spacing of "
             f"{region.spacing_m:.2f} m")
    if e < 3.0:
        fire("missing insulation", 1.0, f"compact (length/width {e:.1f})")
    if region.solidity >= 0.8 and e < settings.elongated:
        fire("missing insulation", 0.5, f"regular outline (solidity {region.solidity:.2f})")
    if region.area_m2 >= 0.1 and e < settings.elongated:
        fire("missing insulation", 0.5, f"large ({region.area_m2:.2f} m²)")
    if not near and e < settings.elongated:
        fire("missing insulation", 0.5,
             f"away from junctions ({region.edge_distance_m:.2f} m from the element edge)")
    if region.element_kind.lower() in ("ceiling", "roof") and e < settings.elongated:
        fire("missing insulation", 1.0,
             f"on a {region.element_kind.lower()}, where gaps in the insulation are the "
             f"usual cause")
    if change is not None:
        p = pressure_pa if pressure_pa is not None else math.nan
        if not p >= MIN_PRESSURE_PA:
            notes.append(f"pressure difference {p:.0f} Pa is under the {MIN_PRESSURE_PA:.0f} Pa "
                         f"of EN 13187: air leakage not assessed")
        else:
            if change.appears:
                fire("air leakage", 2.5, f"absent from the baseline, appears at {p:.0f} Pa "
                     f"({change.area_dep_m2:.3f} m²)")
            elif change.growth_ratio >= 0.5:
                fire("air leakage", 1.0,
                     f"grows by {100 * change.growth_ratio:.0f} % at {p:.0f} Pa")
            if change.cooling_k >= 0.3:
                fire("air leakage", 1.0, f"cools by {change.cooling_k:.2f} K on average at "
                     f"{p:.0f} Pa")
            if score["air leakage"] > 0:
                if region.solidity < 0.8:
                    fire("air leakage", 0.5,
                         f"irregular, plume-like (solidity {region.solidity:.2f})")
                if any(j.kind.startswith("around opening") for j in near):
                    fire("air leakage", 0.5, "at an opening")
    elif region.solidity < 0.8 and any(j.kind.startswith("around opening") for j in near):
        notes.append("irregular region at an opening: a depressurised image pair would show "
                     "whether it is air leakage")
    best = max(CLASSES, key=lambda c: (score[c], -CLASSES.index(c)))
    if best == "unexplained":
        reasons.append(f"no class rule scored above the base level {BASE_SCORE}")
    total = sum(score.values())
    confidence = {c: score[c] / total for c in CLASSES}
    return best, confidence, reasons, notes
