"""Heat loss of the fabric: H = ΣU·A + Σψ·L + Σχ [W/K] and the annual loss (pure functions).

Defects enter as an *extra* heat-loss coefficient ``h_w_k`` [W/K] on top of the element's
undisturbed U, so element U values passed here must be those of the undisturbed area (the
pipeline takes both over complementary pixels, `envelope.zones`). A linear bridge has
``h = psi L``, a point bridge ``h = chi``, and an air-leakage defect the extra heat it
carries per kelvin of indoor-outdoor difference, treated exactly like a bridge's.
Retrofit measures are in `envelope.retrofit`, the builder's verdict in `envelope.verdicts`.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping
from dataclasses import dataclass

import numpy as np

from envelope.constants import Z95

__all__ = ["Z95", "ElementLoss", "DefectLoss", "HeatLoss", "heat_loss_coefficient",
           "heat_loss_w", "annual_heat_loss_kwh", "layer_added_u", "defect_loss"]


@dataclass(frozen=True)
class ElementLoss:
    """One element as the energy balance sees it."""

    name: str
    u_w_m2k: float  # U of the undisturbed area [W m-2 K-1]
    u_std_w_m2k: float  # its standard uncertainty [W m-2 K-1]
    area_m2: float  # net area, openings cut out [m2]


@dataclass(frozen=True)
class DefectLoss:
    """One defect as an extra heat-loss coefficient [W/K]: psi L, chi, or W / survey dT."""

    id: str
    h_w_k: float  # extra heat-loss coefficient [W/K]
    h_std_w_k: float = 0.0  # its standard uncertainty [W/K]
    kind: str = "linear"  # "linear", "point" or "leak" (informative)
    length_m: float | None = None  # length of a linear bridge [m]: lets fix_bridge set psi
    element: str | None = None  # element the defect sits on


@dataclass(frozen=True)
class HeatLoss:
    """Fabric heat-loss coefficient H with its parts [W/K]; ``by_*`` as (name, W/K)."""

    h_w_k: float
    h_std_w_k: float  # standard uncertainty (independent elements)
    h_elements_w_k: float  # sum U A
    h_defects_w_k: float  # sum psi L + sum chi (leaks included)
    by_element: tuple[tuple[str, float], ...] = ()
    by_defect: tuple[tuple[str, float], ...] = ()

    def to_dict(self) -> dict:
        """Plain dict in the results-schema shape (``by_element`` as a list of dicts)."""
        return {"h_w_k": self.h_w_k, "h_std_w_k": self.h_std_w_k,
                "h_elements_w_k": self.h_elements_w_k, "h_defects_w_k": self.h_defects_w_k,
                "by_element": [{"name": n, "h_w_k": h} for n, h in self.by_element],
                "by_defect": [{"id": i, "h_w_k": h} for i, h in self.by_defect]}


def _as_element(e) -> ElementLoss:
    if isinstance(e, ElementLoss):
        return e
    if isinstance(e, Mapping):
        return ElementLoss(str(e["name"]), float(e["u_w_m2k"]),
                           float(e.get("u_std_w_m2k") or 0.0),
                           float(e.get("area_m2", e.get("area_net_m2"))))
    name, u, u_std, area = e
    return ElementLoss(str(name), float(u), float(u_std or 0.0), float(area))


def _as_defect(b) -> DefectLoss:
    if isinstance(b, DefectLoss):
        return b
    if isinstance(b, Mapping):
        return DefectLoss(str(b["id"]), float(b["h_w_k"]), float(b.get("h_std_w_k") or 0.0),
                          str(b.get("kind", "linear")), b.get("length_m"), b.get("element"))
    if len(b) == 4:  # linear: (id, psi, psi_std, length)
        bid, psi, psi_std, length = b
        return DefectLoss(str(bid), float(psi) * float(length),
                          float(psi_std or 0.0) * float(length), "linear", float(length))
    if len(b) == 3:  # point: (id, chi, chi_std)
        bid, chi, chi_std = b
        return DefectLoss(str(bid), float(chi), float(chi_std or 0.0), "point")
    raise ValueError(f"bridge entry {b!r}: expected (id, psi_w_mk, psi_std, length_m) "
                     "or (id, chi_w_k, chi_std)")


def heat_loss_coefficient(elements: Iterable, bridges: Iterable = ()) -> HeatLoss:
    """Fabric heat-loss coefficient H [W/K] with its parts and standard uncertainty.

    Parameters
    ----------
    elements : iterable
        ``(name, u_w_m2k, u_std_w_m2k, area_m2)`` tuples (or `ElementLoss`).
    bridges : iterable
        Linear bridges ``(id, psi_w_mk, psi_std_w_mk, length_m)``, point bridges
        ``(id, chi_w_k, chi_std_w_k)``, or `DefectLoss` (leaks included).

    Returns
    -------
    HeatLoss

    Notes
    -----
    ``H = sum_i U_i A_i + sum_j psi_j L_j + sum_k chi_k``. The standard uncertainty assumes
    independent elements and bridges, with areas and lengths exact:
    ``u(H)^2 = sum (A_i u(U_i))^2 + sum (L_j u(psi_j))^2 + sum u(chi_k)^2``
    (law of propagation of uncertainty, JCGM 100 Eq. 10). Errors shared between elements
    (same camera offset, same air temperatures) are correlated in reality, so this is a
    lower bound when such errors dominate.

    References
    ----------
    [1] ISO 13789:2017, Thermal performance of buildings -- Transmission and ventilation
        heat transfer coefficients -- Calculation method (definition of H_T, after).
    [2] JCGM 100:2008, Evaluation of measurement data -- Guide to the expression of
        uncertainty in measurement.
    """
    els = [_as_element(e) for e in elements]
    dfs = [_as_defect(b) for b in bridges]
    for e in els:
        if not (np.isfinite(e.u_w_m2k) and e.u_w_m2k >= 0 and np.isfinite(e.area_m2)
                and e.area_m2 >= 0):
            raise ValueError(f"element {e.name!r}: U and area must be finite and >= 0, "
                             f"got U={e.u_w_m2k}, area={e.area_m2}")
    by_el = tuple((e.name, e.u_w_m2k * e.area_m2) for e in els)
    by_df = tuple((d.id, d.h_w_k) for d in dfs)
    h_el = float(sum(h for _, h in by_el))
    h_df = float(sum(h for _, h in by_df))
    var = sum((e.area_m2 * e.u_std_w_m2k) ** 2 for e in els)
    var += sum(d.h_std_w_k ** 2 for d in dfs)
    return HeatLoss(h_el + h_df, math.sqrt(var), h_el, h_df, by_el, by_df)


def heat_loss_w(h_w_k, t_i_c, t_e_c):
    """Heat flow through the fabric [W] for indoor and outdoor temperatures [°C].

    Notes
    -----
    ``Q = H (T_i - T_e)`` (steady state).
    """
    return np.asarray(h_w_k, dtype=float) * (np.asarray(t_i_c, float) - np.asarray(t_e_c, float))


def annual_heat_loss_kwh(h_w_k, hdd_kd):
    """Yearly fabric heat loss [kWh] from heating degree-days [K day].

    Notes
    -----
    ``Q_year = H * HDD * 24 / 1000``. Degree-days already embody a base temperature (the
    outdoor temperature above which no heating is needed, which allows for internal and
    solar gains); choose them for the house's base temperature. The result is the heat
    delivered to the fabric, before the heating system's efficiency: divide by the
    efficiency for delivered (bought) energy.

    References
    ----------
    [1] CIBSE TM41:2006, Degree-days: theory and application (after).
    """
    return np.asarray(h_w_k, dtype=float) * np.asarray(hdd_kd, dtype=float) * 24.0 / 1000.0


def layer_added_u(u_w_m2k, thickness_m, conductivity_w_mk):
    """U-value after adding a homogeneous layer [W m-2 K-1].

    Notes
    -----
    Thermal resistances in series add (``R_T = R_si + sum d/lambda + R_se``, ISO 6946:2017
    clause 6.7.1), so a layer of thickness d and conductivity lambda adds d/lambda:
    ``U' = 1 / (1/U + d/lambda)``. Corrections for air gaps, fixings and inverted roofs
    (ISO 6946 Annex F) are not applied.

    References
    ----------
    [1] ISO 6946:2017, Building components and building elements -- Thermal resistance and
        thermal transmittance -- Calculation methods.
    """
    u = np.asarray(u_w_m2k, dtype=float)
    d = np.asarray(thickness_m, dtype=float)
    lam = np.asarray(conductivity_w_mk, dtype=float)
    if np.any(u <= 0) or np.any(d < 0) or np.any(lam <= 0):
        raise ValueError(f"layer_added_u: need U > 0, thickness >= 0, conductivity > 0; "
                         f"got U={u_w_m2k}, d={thickness_m}, lambda={conductivity_w_mk}")
    return 1.0 / (1.0 / u + d / lam)


def defect_loss(defect_id: str, defect_class: str, extra_w: float, extra_w_std: float,
                psi_w_mk: float | None, chi_w_k: float | None, length_m: float | None,
                element: str | None, delta_t_k: float) -> DefectLoss:
    """A defect as an extra heat-loss coefficient [W/K].

    ``psi_w_mk * length_m`` for a linear bridge, ``chi_w_k`` for a point bridge, otherwise
    (air leakage, missing insulation) ``extra_w / delta_t_k`` with ``delta_t_k`` the
    indoor-outdoor air difference of the survey [K]. The standard uncertainty keeps the
    relative uncertainty of the extra heat flow.
    """
    rel = abs(float(extra_w_std) / float(extra_w)) if extra_w and extra_w_std is not None else 0.0
    kind = "leak" if "leak" in (defect_class or "") else (
        "point" if chi_w_k is not None and psi_w_mk is None else "linear")
    if psi_w_mk is not None and length_m:
        h = float(psi_w_mk) * float(length_m)
    elif chi_w_k is not None:
        h = float(chi_w_k)
    elif extra_w is not None and delta_t_k > 0:
        h = float(extra_w) / float(delta_t_k)
    else:
        h = 0.0
    return DefectLoss(str(defect_id), h, abs(h) * rel, kind,
                      float(length_m) if length_m else None, element)
