"""Retrofit measures: what each one saves on its own and all of them together (pure).

A measure changes the state of some elements (U) or defects (extra W/K); its saving is the
drop of H times the degree-days, turned into delivered energy, money and CO2 with
user-given prices. Added layers follow ISO 6946 (resistances in series).
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Sequence
from dataclasses import asdict, dataclass, replace

import numpy as np

from envelope.energy import Z95, _as_defect, _as_element


def _where(field: str, message: str) -> str:
    return f"{field}: {message}"


__all__ = ["MEASURE_KINDS", "DEFAULT_LEAK_FRACTION_REMOVED", "Measure", "EnergyPrices",
           "MeasureResult", "apply_measures", "evaluate_measures", "package_result"]

DEFAULT_LEAK_FRACTION_REMOVED = 0.8
"""Share of a leak's extra heat loss that sealing removes when the user gives none.

An assumption (common practice guess): sealing reaches most, not all, of a leakage path.
"""

MEASURE_KINDS = ("add_layer", "replace_glazing", "seal_leak", "fix_bridge", "repair_defect")


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
    defect_classes: tuple[str, ...] = ()  # classes a defect measure targets (survey input)
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

    Energy figures are delivered energy [kWh/yr] (fabric saving / efficiency); ``_low95`` and
    ``_high95`` bound a 95 % range from the U and defect uncertainties.
    """

    name: str
    kind: str
    targets: tuple[str, ...]
    cost: float
    h_saved_w_k: float
    annual_kwh_saved: float
    annual_kwh_saved_low95: float
    annual_kwh_saved_high95: float
    annual_money_saved: float
    annual_money_saved_low95: float
    annual_money_saved_high95: float
    annual_co2_saved_kg: float
    annual_co2_saved_kg_low95: float
    annual_co2_saved_kg_high95: float
    payback_years: float | None
    lifetime_years: float | None = None
    h_before_w_k: float | None = None
    h_after_w_k: float | None = None

    def to_dict(self) -> dict:
        """Plain dict (tuples as lists) for ``results.json``."""
        d = asdict(self)
        d["targets"] = list(self.targets)
        return d


def _check_positive(value, what: str, i: int) -> float:
    if value is None or not np.isfinite(value) or value <= 0:
        raise ValueError(_where(f"measures[{i}].{what}", f"{what} must be a number > 0, got {value!r}"))
    return float(value)


def _targets(names, pool, what: str, i: int) -> tuple[str, ...]:
    names = tuple(names)
    if not names:
        raise ValueError(_where(f"measures[{i}].{what}", f"a measure of this kind needs at least one {what[:-1]}"))
    missing = [n for n in names if n not in pool]
    if missing:
        raise ValueError(_where(f"measures[{i}].{what}", f"unknown {what} {missing}; known: {sorted(pool)}"))
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
        raise ValueError(_where(f"measures[{i}].leak_fraction_removed", f"leak_fraction_removed must be in [0, 1], got {f!r}"))
    for n in _targets(m.defects, dfs, "defects", i):
        plan["df"][n][1] *= 1.0 - float(f)


def _plan_fix_bridge(m, i, plan, els, dfs):
    for n in _targets(m.defects, dfs, "defects", i):
        if m.new_psi_w_mk is None:
            plan["df"][n][0] = 0.0
            continue
        length = dfs[n].length_m
        if not length:
            raise ValueError(_where(f"measures[{i}].new_psi_w_mk", f"defect {n!r} has no length, so new_psi_w_mk cannot apply; "
                              "leave new_psi_w_mk out to remove its extra loss"))
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
        raise ValueError(_where("prices.heating_efficiency", f"heating_efficiency must be > 0, got {prices.heating_efficiency}"))
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
    co2, price = prices.co2_kg_per_kwh, prices.price_per_kwh
    return MeasureResult(
        name=name, kind=kind, targets=targets, cost=cost, h_saved_w_k=saving,
        annual_kwh_saved=kwh, annual_kwh_saved_low95=kwh_lo, annual_kwh_saved_high95=kwh_hi,
        annual_money_saved=money, annual_money_saved_low95=kwh_lo * price,
        annual_money_saved_high95=kwh_hi * price, annual_co2_saved_kg=kwh * co2,
        annual_co2_saved_kg_low95=kwh_lo * co2, annual_co2_saved_kg_high95=kwh_hi * co2,
        payback_years=cost / money if money > 0 else None, lifetime_years=lifetime,
        h_before_w_k=h_before, h_after_w_k=h_before - saving)


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

