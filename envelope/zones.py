"""The undisturbed area of an element: one definition used by U, defects and energy.

An element's heat loss is split into its clear field and its defects:
``Q = U_undisturbed · A_net · ΔT + Σ Q_extra``. For that to count every watt once, the
clear-field U must be taken over exactly the pixels that no defect's extra heat was
integrated over, and each defect's extra heat must be measured against that same clear
field. This module holds that one definition.
"""

from __future__ import annotations

import numpy as np

__all__ = ["undisturbed_mask", "whole_area_mask"]


def undisturbed_mask(element_mask, reference_mask=None, defect_zones=(), warm_zones=()):
    """Pixels of the element's undisturbed area.

    Parameters
    ----------
    element_mask : ndarray of bool (H, W)
        The element's net pixels (openings cut out).
    reference_mask : ndarray of bool, optional
        A reference zone drawn by the surveyor: when given (and not empty), it is the
        undisturbed area (any defect pixels inside it are still taken out).
    defect_zones : iterable of ndarray of bool (H, W)
        Each defect's integration zone: the pixels its extra heat was summed over.
    warm_zones : iterable of ndarray of bool (H, W)
        Warm spots (reflections, heat sources) that belong to neither.

    Returns
    -------
    (mask, name) : (ndarray of bool, str)
        The undisturbed pixels and what they are, in words.

    Notes
    -----
    Without a reference zone: ``element − ∪ defect zones − ∪ warm spots``. With one:
    ``reference − ∪ defect zones − ∪ warm spots``. If nothing is left (a defect covering the
    whole element), the element mask minus the warm spots is used and the name says so.
    """
    base = np.asarray(element_mask, bool)
    name = "element without its defects' zones"
    if reference_mask is not None and np.any(reference_mask):
        base = np.asarray(reference_mask, bool) & base
        name = "reference zone"
    taken = np.zeros_like(base)
    for z in defect_zones:
        taken |= np.asarray(z, bool)
    warm = np.zeros_like(base)
    for z in warm_zones:
        warm |= np.asarray(z, bool)
    mask = base & ~taken & ~warm
    if not mask.any():
        mask = np.asarray(element_mask, bool) & ~warm
        name = "whole element (its defects cover it)"
    if not np.any(taken) and name.startswith("element without"):
        name = "whole element (no defect found)"
    return mask, name


def whole_area_mask(element_mask, warm_zones=()):
    """Pixels of the whole-area U: the net area without warm spots (a warm reflection reads
    as a negative heat flux and is not a property of the element)."""
    mask = np.asarray(element_mask, bool).copy()
    for z in warm_zones:
        mask &= ~np.asarray(z, bool)
    return mask if mask.any() else np.asarray(element_mask, bool)
