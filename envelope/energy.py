"""Heat loss, retrofit measures and the builder's verdict (pure functions).

The fabric heat-loss coefficient is ``H = sum(U_i A_i) + sum(psi_j L_j) + sum(chi_k)``
[W/K]; the annual loss follows from heating degree-days; a retrofit measure changes the
state of some elements (U) or defects (extra W/K) and its saving is the drop of H times the
degree-days, turned into delivered energy, money and CO2 with user-given prices.

Defects enter as an *extra* heat-loss coefficient ``h_w_k`` [W/K] on top of the element's
undisturbed U, so element U values passed here should be those of the undisturbed area
(otherwise the defects are counted twice). A linear bridge has ``h = psi L``, a point bridge
``h = chi``, and an air-leakage defect the extra heat it carries per kelvin of indoor-outdoor
difference (extra W at survey conditions divided by the survey difference), treated exactly
like a bridge's.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import asdict, dataclass, field, replace

import numpy as np

from envelope.errors import SurveyError

Z95 = 1.959963984540054
"""Coverage factor of a two-sided 95 % interval of a normal distribution (JCGM 100, G.3)."""

DEFAULT_LEAK_FRACTION_REMOVED = 0.8
"""Share of a leak's extra heat loss that sealing removes when the user gives none.

An assumption (common practice guess): sealing reaches most, not all, of a leakage path.
"""

MEASURE_KINDS = ("add_layer", "replace_glazing", "seal_leak", "fix_bridge", "repair_defect")


# --------------------------------------------------------------------------------------
# inputs and results
# --------------------------------------------------------------------------------------


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


@dataclass(frozen=True)
class Measure:
    """A proposed retrofit measure; ``kind`` one of `MEASURE_KINDS`.

    ``add_layer`` and ``replace_glazing`` act on ``elements`` (names), ``seal_leak`` and
    ``fix_bridge`` on ``defects`` (ids). A new glazing U is taken as exact; ``fix_bridge``
    without ``new_psi_w_mk`` removes the defect's extra loss entirely.
    """

    name: str
    kind: str
    elements: tuple[str, ...] = ()
    defects: tuple[str, ...] = ()
    thickness_m: float | None = None  # added layer [m] (add_layer)
    conductivity_w_mk: float | None = None  # its conductivity [W m-1 K-1] (add_layer)
    new_u_w_m2k: float | None = None  # new glazing/door U [W m-2 K-1] (replace_glazing)
    new_psi_w_mk: float | None = None  # remaining psi [W m-1 K-1] (fix_bridge)
    leak_fraction_removed: float = DEFAULT_LEAK_FRACTION_REMOVED  # (seal_leak) [-]
    cost: float = 0.0  # in the survey's currency
    lifetime_years: float | None = None


@dataclass(frozen=True)
class EnergyPrices:
    """Prices and factors (all user inputs).

    ``heating_efficiency`` is delivered-to-useful [-], above 1 for a heat pump (its seasonal
    coefficient of performance); ``co2_kg_per_kwh`` is per kWh delivered.
    """

    price_per_kwh: float  # [currency/kWh] delivered
    heating_efficiency: float = 1.0
    co2_kg_per_kwh: float = 0.0
    currency: str = ""


@dataclass(frozen=True)
class MeasureResult:
    """Yearly effect of one measure (or of the package).

    Energy figures are delivered energy [kWh/yr] (fabric saving / efficiency); ``_low`` and
    ``_high`` bound a 95 % range from the U and defect uncertainties.
    """

    name: str
    kind: str
    targets: tuple[str, ...]
    cost: float
    h_saved_w_k: float
    kwh_saved_per_year: float
    kwh_saved_low: float
    kwh_saved_high: float
    money_per_year: float
    money_low: float
    money_high: float
    co2_kg_per_year: float
    payback_years: float | None
    lifetime_years: float | None = None
    h_before_w_k: float | None = None
    h_after_w_k: float | None = None
    ranges: dict = field(default_factory=dict)

    def to_dict(self) -> dict:
        """Plain dict (tuples as lists) for ``results.json``."""
        d = asdict(self)
        d["targets"] = list(self.targets)
        return d


# --------------------------------------------------------------------------------------
# heat loss
# --------------------------------------------------------------------------------------


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


def layers_u(layers: Sequence, r_si: float = 0.13, r_se: float = 0.04) -> float:
    """U-value of a component of homogeneous layers [W m-2 K-1].

    Parameters
    ----------
    layers : sequence
        Each ``(thickness_m, conductivity_w_mk)`` or a thermal resistance [m2 K/W] as a
        float (air layer, tabulated product).
    r_si, r_se : float
        Surface resistances [m2 K/W]; defaults are ISO 6946:2017 Table 7 values for
        horizontal heat flow (0.13 and 0.04).

    Notes
    -----
    ``U = 1 / (R_si + sum d_i/lambda_i + R_se)`` (ISO 6946:2017, 6.7.1).

    References
    ----------
    [1] ISO 6946:2017 (see `layer_added_u`).
    """
    r = float(r_si) + float(r_se)
    for i, layer in enumerate(layers):
        if isinstance(layer, int | float):
            r_i = float(layer)
        else:
            d, lam = layer
            if lam <= 0 or d < 0:
                raise ValueError(f"layers[{i}]: need thickness >= 0 and conductivity > 0, "
                                 f"got {layer!r}")
            r_i = float(d) / float(lam)
        if r_i < 0:
            raise ValueError(f"layers[{i}]: thermal resistance must be >= 0, got {r_i}")
        r += r_i
    if r <= 0:
        raise ValueError("layers_u: total thermal resistance must be > 0")
    return 1.0 / r


# --------------------------------------------------------------------------------------
# retrofit measures
# --------------------------------------------------------------------------------------


def defect_loss_from_result(defect: Mapping, delta_t_k: float) -> DefectLoss:
    """Turn a defect of the results dict into a `DefectLoss` [W/K].

    ``psi_w_mk * length_m`` for a linear bridge, ``chi_w_k`` for a point bridge, otherwise
    (air leakage, missing insulation) ``extra_w / delta_t_k`` with ``delta_t_k`` the
    indoor-outdoor air difference of the survey [K].
    """
    psi, length = defect.get("psi_w_mk"), defect.get("length_m")
    chi, extra = defect.get("chi_w_k"), defect.get("extra_w")
    rel = 0.0
    if extra and defect.get("extra_w_std") is not None:
        rel = abs(float(defect["extra_w_std"]) / float(extra))
    cls = str(defect.get("class") or "")
    kind = "leak" if "leak" in cls else ("point" if chi is not None and psi is None else "linear")
    if psi is not None and length:
        h = float(psi) * float(length)
    elif chi is not None:
        h = float(chi)
    elif extra is not None and delta_t_k > 0:
        h = float(extra) / float(delta_t_k)
    else:
        h = 0.0
    return DefectLoss(str(defect["id"]), h, abs(h) * rel, kind,
                      float(length) if length else None, defect.get("element"))


def measures_from_config(entries: Iterable[Mapping], file: str | None = None) -> list[Measure]:
    """Build `Measure` objects from mappings (survey TOML), naming the bad field on error."""
    known = set(Measure.__dataclass_fields__)
    out = []
    for i, entry in enumerate(entries):
        unknown = set(entry) - known
        if unknown:
            raise SurveyError(f"unknown keys {sorted(unknown)}; valid keys: {sorted(known)}",
                              file=file, field=f"measures[{i}]")
        kw = dict(entry)
        for key in ("elements", "defects"):
            val = kw.get(key, ())
            kw[key] = (val,) if isinstance(val, str) else tuple(val)
        try:
            out.append(Measure(**kw))
        except TypeError as exc:
            raise SurveyError(str(exc), file=file, field=f"measures[{i}]") from exc
    return out


def _check_positive(value, what: str, i: int) -> float:
    if value is None or not np.isfinite(value) or value <= 0:
        raise SurveyError(f"{what} must be a number > 0, got {value!r}",
                          field=f"measures[{i}].{what}")
    return float(value)


def _targets(names, pool, what: str, i: int) -> tuple[str, ...]:
    names = tuple(names)
    if not names:
        raise SurveyError(f"a measure of this kind needs at least one {what[:-1]}",
                          field=f"measures[{i}].{what}")
    missing = [n for n in names if n not in pool]
    if missing:
        raise SurveyError(f"unknown {what} {missing}; known: {sorted(pool)}",
                          field=f"measures[{i}].{what}")
    return names


# A plan holds, per element, [set U or None, added resistance m2K/W]; per defect,
# [set h or None, remaining factor]. Planners fill it; it is local to one evaluation.
def _plan_add_layer(m, i, plan, els, dfs):
    d = _check_positive(m.thickness_m, "thickness_m", i)
    lam = _check_positive(m.conductivity_w_mk, "conductivity_w_mk", i)
    for n in _targets(m.elements, els, "elements", i):
        plan["el"][n][1] += d / lam


def _plan_replace_glazing(m, i, plan, els, dfs):
    u_new = _check_positive(m.new_u_w_m2k, "new_u_w_m2k", i)
    for n in _targets(m.elements, els, "elements", i):
        plan["el"][n][0] = u_new  # a later replacement wins


def _plan_seal_leak(m, i, plan, els, dfs):
    f = m.leak_fraction_removed
    if f is None or not (0.0 <= f <= 1.0):
        raise SurveyError(f"leak_fraction_removed must be in [0, 1], got {f!r}",
                          field=f"measures[{i}].leak_fraction_removed")
    for n in _targets(m.defects, dfs, "defects", i):
        plan["df"][n][1] *= 1.0 - float(f)


def _plan_fix_bridge(m, i, plan, els, dfs):
    for n in _targets(m.defects, dfs, "defects", i):
        if m.new_psi_w_mk is None:
            plan["df"][n][0] = 0.0
            continue
        length = dfs[n].length_m
        if not length:
            raise SurveyError(f"defect {n!r} has no length, so new_psi_w_mk cannot apply; "
                              "leave new_psi_w_mk out to remove its extra loss",
                              field=f"measures[{i}].new_psi_w_mk")
        plan["df"][n][0] = float(m.new_psi_w_mk) * float(length)


def _plan_repair_defect(m, i, plan, els, dfs):
    """Make good a defect (refit a missing batt, close a gap): its extra loss goes."""
    for n in _targets(m.defects, dfs, "defects", i):
        plan["df"][n][0] = 0.0


_PLANNERS = {
    "add_layer": _plan_add_layer,
    "replace_glazing": _plan_replace_glazing,
    "seal_leak": _plan_seal_leak,
    "fix_bridge": _plan_fix_bridge,
    "repair_defect": _plan_repair_defect,
}
# Replacements (set values) are applied before series layers / sealing factors, whatever
# the order of the measures, so that e.g. new glazing plus secondary glazing combine.
_ORDER = {"replace_glazing": 0, "fix_bridge": 0, "repair_defect": 0, "add_layer": 1,
          "seal_leak": 1}


def _make_plan(measures, els, dfs):
    plan = {"el": {n: [None, 0.0] for n in els}, "df": {n: [None, 1.0] for n in dfs}}
    indexed = sorted(enumerate(measures), key=lambda im: _ORDER.get(im[1].kind, 0))
    for i, m in indexed:
        planner = _PLANNERS.get(m.kind)
        if planner is None:
            raise ValueError(f"measures[{i}] ({m.name!r}): unknown kind {m.kind!r}; "
                             f"valid kinds: {', '.join(_PLANNERS)}")
        planner(m, i, plan, els, dfs)
    return plan


def _u_after(u, step):
    set_u, r_add = step
    u0 = np.full_like(u, set_u) if set_u is not None else u
    return 1.0 / (1.0 / u0 + r_add) if r_add > 0 else u0


def _h_after(h, step):
    set_h, factor = step
    h0 = np.full_like(h, set_h) if set_h is not None else h
    return h0 * factor


def _pools(elements, defects):
    els = {e.name: e for e in (_as_element(x) for x in elements)}
    dfs = {d.id: d for d in (_as_defect(x) for x in defects)}
    return els, dfs


def apply_measures(measures: Sequence[Measure], elements: Iterable, defects: Iterable = ()):
    """After-state of elements and defects with all `measures` applied together.

    Returns
    -------
    (list of ElementLoss, list of DefectLoss)
        U and its standard uncertainty after the measures (a set U counts as exact; a
        layer scales u(U) by (U'/U)^2, the derivative of 1/(1/U + R)); defects likewise.
    """
    els, dfs = _pools(elements, defects)
    plan = _make_plan(measures, els, dfs)
    out_e, out_d = [], []
    for n, e in els.items():
        step = plan["el"][n]
        u1 = float(_u_after(np.array([e.u_w_m2k]), step)[0])
        scale = (u1 / e.u_w_m2k) ** 2 if e.u_w_m2k > 0 else 0.0
        std = 0.0 if step[0] is not None else e.u_std_w_m2k * scale
        out_e.append(replace(e, u_w_m2k=u1, u_std_w_m2k=std))
    for n, d in dfs.items():
        step = plan["df"][n]
        h1 = float(_h_after(np.array([d.h_w_k]), step)[0])
        std = 0.0 if step[0] is not None else d.h_std_w_k * step[1]
        out_d.append(replace(d, h_w_k=h1, h_std_w_k=std))
    return out_e, out_d


def _result(name, kind, measures, els, dfs, prices, hdd_kd, lifetime=None):
    if not (prices.heating_efficiency > 0):
        raise SurveyError(f"heating_efficiency must be > 0, got {prices.heating_efficiency}",
                          field="prices.heating_efficiency")
    plan = _make_plan(measures, els, dfs)
    saving, lo_sq, hi_sq = 0.0, 0.0, 0.0
    comps = [(e.u_w_m2k, e.u_std_w_m2k, e.area_m2, plan["el"][n], _u_after, 1e-6)
             for n, e in els.items()]
    comps += [(d.h_w_k, d.h_std_w_k, 1.0, plan["df"][n], _h_after, 0.0)
              for n, d in dfs.items()]
    for base, std, weight, step, after, floor in comps:
        if step[0] is None and step[1] == (0.0 if after is _u_after else 1.0):
            continue  # untouched
        x = np.array([max(base - Z95 * std, floor), base, base + Z95 * std])
        s = weight * (x - after(x, step))
        saving += float(s[1])
        lo_sq += float(s[1] - s[0]) ** 2
        hi_sq += float(s[2] - s[1]) ** 2
    h_lo, h_hi = saving - math.sqrt(lo_sq), saving + math.sqrt(hi_sq)
    to_kwh = hdd_kd * 24.0 / 1000.0 / prices.heating_efficiency
    kwh, kwh_lo, kwh_hi = saving * to_kwh, h_lo * to_kwh, h_hi * to_kwh
    money = kwh * prices.price_per_kwh
    cost = float(sum(m.cost or 0.0 for m in measures))
    targets = tuple(dict.fromkeys(t for m in measures for t in (*m.elements, *m.defects)))
    h_before = float(sum(e.u_w_m2k * e.area_m2 for e in els.values())
                     + sum(d.h_w_k for d in dfs.values()))
    co2 = prices.co2_kg_per_kwh
    ranges = {"kwh": [kwh_lo, kwh_hi],
              "money": [kwh_lo * prices.price_per_kwh, kwh_hi * prices.price_per_kwh],
              "co2_kg": [kwh_lo * co2, kwh_hi * co2]}
    return MeasureResult(
        name=name, kind=kind, targets=targets, cost=cost, h_saved_w_k=saving,
        kwh_saved_per_year=kwh, kwh_saved_low=kwh_lo, kwh_saved_high=kwh_hi,
        money_per_year=money, money_low=ranges["money"][0], money_high=ranges["money"][1],
        co2_kg_per_year=kwh * co2, payback_years=cost / money if money > 0 else None,
        lifetime_years=lifetime, h_before_w_k=h_before, h_after_w_k=h_before - saving,
        ranges=ranges)


def evaluate_measures(measures: Sequence[Measure], elements: Iterable, defects: Iterable,
                      prices: EnergyPrices, hdd_kd: float) -> list[MeasureResult]:
    """Saving of each measure on its own, against the surveyed state.

    Parameters
    ----------
    measures : sequence of Measure
    elements : iterable
        ``(name, u_w_m2k, u_std_w_m2k, area_m2)`` or `ElementLoss` (undisturbed U).
    defects : iterable
        `DefectLoss` (or bridge tuples as in `heat_loss_coefficient`).
    prices : EnergyPrices
    hdd_kd : float
        Heating degree-days [K day].

    Returns
    -------
    list of MeasureResult

    Notes
    -----
    Fabric saving ``dQ = dH * HDD * 24/1000`` [kWh/yr]; delivered saving
    ``dQ / efficiency``; money ``= delivered * price``; CO2 ``= delivered * factor``;
    simple payback ``= cost / money`` (None without a saving). The 95 % range combines, per
    element or defect, the saving at its value -/+ 1.96 standard uncertainties (exact for
    the non-linear layer formula), root-sum-square over independent components.
    """
    els, dfs = _pools(elements, defects)
    return [_result(m.name, m.kind, [m], els, dfs, prices, hdd_kd, m.lifetime_years)
            for m in measures]


def package_result(measures: Sequence[Measure], elements: Iterable, defects: Iterable,
                   prices: EnergyPrices, hdd_kd: float,
                   name: str = "all measures together") -> MeasureResult:
    """Saving of all measures applied together (no double counting).

    The package's after-state applies every measure at once: two layers on one wall add
    their resistances in series, sealing twice multiplies the remaining shares, so the
    package saving is smaller than the sum of the single savings where measures overlap.
    Cost is the sum of the costs. See `evaluate_measures` for the arithmetic.
    """
    els, dfs = _pools(elements, defects)
    return _result(name, "package", list(measures), els, dfs, prices, hdd_kd)


# --------------------------------------------------------------------------------------
# builder's check
# --------------------------------------------------------------------------------------

_RESOLVE = ("a larger indoor-outdoor temperature difference on a repeat night, a contact-"
            "probe reference spot to calibrate the surface temperatures, or a longer time "
            "series (ISO 9869-1 average method) would narrow the interval")


def builder_verdict(u_low95: float, u_high95: float, u_specified: float,
                    tolerance: float = 0.0, checks_ok: bool = True) -> tuple[str, str]:
    """Pass / fail / inconclusive verdict of a measured U against its specification.

    Parameters
    ----------
    u_low95, u_high95 : float
        Bounds of the 95 % interval of the measured U [W m-2 K-1].
    u_specified : float
        Specified (design) U [W m-2 K-1].
    tolerance : float
        Allowance added to the specification [W m-2 K-1], >= 0.
    checks_ok : bool
        False when a survey validity check failed.

    Returns
    -------
    (verdict, reason)
        verdict in {"pass", "fail", "inconclusive"}.

    Notes
    -----
    With ``limit = u_specified + tolerance``: pass when ``u_high95 <= limit`` (the whole
    interval meets it; equality passes), fail when ``u_low95 > limit`` (the whole interval
    is above), otherwise inconclusive (straddling, including ``u_low95 == limit``). A
    failed survey check downgrades a pass to inconclusive; a fail stays a fail but its
    reason says the night was not fully valid.
    """
    if u_specified is None or not np.isfinite(u_specified) or u_specified <= 0:
        raise ValueError(f"u_specified must be > 0, got {u_specified!r}")
    if tolerance is None or not np.isfinite(tolerance) or tolerance < 0:
        raise ValueError(f"tolerance must be >= 0, got {tolerance!r}")
    limit = float(u_specified) + float(tolerance)
    lim_txt = f"{limit:.2f} W/(m²·K)" + (f" (specified {u_specified:.2f} + tolerance "
                                         f"{tolerance:.2f})" if tolerance else "")
    if u_low95 is None or u_high95 is None or not (np.isfinite(u_low95)
                                                    and np.isfinite(u_high95)):
        return "inconclusive", f"no measured U interval for this element; {_RESOLVE}."
    if u_low95 > u_high95:
        raise ValueError(f"u_low95 {u_low95} is above u_high95 {u_high95}")
    iv = f"measured 95 % interval {u_low95:.2f} to {u_high95:.2f} W/(m²·K)"
    if u_high95 <= limit:
        if not checks_ok:
            return ("inconclusive", f"{iv} is within the limit {lim_txt}, but a survey "
                    "validity check failed, so the evidence does not support a pass; "
                    "repeat on a night that meets the checks.")
        return "pass", f"{iv} lies wholly at or below the limit {lim_txt}."
    if u_low95 > limit:
        note = "" if checks_ok else (" A survey validity check failed: confirm before "
                                     "remedial work.")
        return "fail", f"{iv} lies wholly above the limit {lim_txt}.{note}"
    note = "" if checks_ok else " A survey validity check also failed."
    return ("inconclusive", f"{iv} is not wholly on one side of the limit {lim_txt}; {_RESOLVE}.{note}")


def insulation_coverage(coverage_share: float | None) -> str:
    """Sentence for the share of net area within the reference level (0-1, or None)."""
    if coverage_share is None or not np.isfinite(coverage_share):
        return "coverage not measured"
    if not 0.0 <= coverage_share <= 1.0:
        raise ValueError(f"coverage_share must be in [0, 1], got {coverage_share!r}")
    return f"{100.0 * coverage_share:.0f} % of the net area looks properly insulated"
