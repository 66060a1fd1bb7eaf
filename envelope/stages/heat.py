"""Stage: builder verdicts, the heat balance of the surveyed fabric and the retrofit case."""

from __future__ import annotations

import dataclasses
import math

from envelope import budget, energy, retrofit, uncertainty, verdicts
from envelope.errors import SurveyError
from envelope.stages.data import ElementResult, EnergyCase, HeatBalance
from envelope.survey import Analysis, Climate, Conditions, Prices

__all__ = ["with_verdicts", "best_per_element", "defect_losses", "target_measures",
           "energy_case"]

DEFECT_MEASURE_CLASSES = {"seal_leak": ("air leakage",),
                          "fix_bridge": ("linear thermal bridge", "repeating thermal bridge"),
                          "repair_defect": ("missing insulation",)}
"""Defect classes a defect measure acts on when the survey names none."""


BASIS_WORDS = {"environmental": "environmental temperatures (the ISO 6946 definition)",
               "air": "air temperatures"}


def with_verdicts(elements, survey_checks, analysis: Analysis) -> tuple[ElementResult, ...]:
    """Element results with the builder's verdict on those that have a specified U.

    The verdict judges the element as built: its whole net area, defects included (a wall
    with a missing batt must not pass on its good parts), with that area's own interval, by
    the definition of the specified value: environmental temperatures for design U-values
    (ISO 6946), air temperatures when the survey says the specification is air-to-air.
    """
    night_ok = all(ch.status != "fail" for ch in survey_checks)
    out = []
    for e in elements:
        if e.u_specified_w_m2k is not None:
            ok = night_ok and e.u_valid and all(ch.status != "fail" for ch in e.checks)
            env = e.u_specified_basis == "environmental"
            lo = e.u_whole_env_low95_w_m2k if env else e.u_whole_low95_w_m2k
            hi = e.u_whole_env_high95_w_m2k if env else e.u_whole_high95_w_m2k
            remedy = e.narrowing[0][2] if e.narrowing else None
            verdict, reason = verdicts.builder_verdict(
                lo, hi, e.u_specified_w_m2k, analysis.verdict_tolerance_w_m2k, checks_ok=ok,
                remedy=remedy)
            basis = (f"whole net area as built (defects included), U referred to "
                     f"{BASIS_WORDS.get(e.u_specified_basis, e.u_specified_basis)}")
            e = dataclasses.replace(e, verdict=verdict, verdict_reason=reason,
                                    verdict_basis=basis)
        out.append(e)
    return tuple(out)


def best_per_element(results) -> dict[str, ElementResult]:
    """One result per element for the energy balance: valid first, interior, calibrated,
    then the smallest standard uncertainty."""
    def key(r):
        return (not r.u_valid, r.side != "interior", not r.calibrated, r.u_std_w_m2k)

    best: dict[str, ElementResult] = {}
    for r in results:
        if r.name not in best or key(r) < key(best[r.name]):
            best[r.name] = r
    return best


def defect_losses(defects, delta_t_k: float) -> list:
    """The defects that add heat loss (all but the unexplained) as `energy.DefectLoss`: each
    defect's own part of H (psi·L, chi, or for a leak the larger of its air share and its
    surface excess) with the standard uncertainty of its extra heat flow."""
    out = []
    for d in defects:
        if d.defect_class == "unexplained":
            continue
        loss = energy.defect_loss(d.id, d.defect_class, d.extra_w, d.extra_w_std, d.psi_w_mk,
                                  d.chi_w_k, d.length_m, d.element, delta_t_k)
        h = getattr(d, "h_w_k", math.nan)
        if h is not None and math.isfinite(h) and h != loss.h_w_k:
            rel = loss.h_std_w_k / loss.h_w_k if loss.h_w_k else 0.0
            loss = dataclasses.replace(loss, h_w_k=float(h), h_std_w_k=abs(float(h)) * rel)
        out.append(loss)
    return out


def target_measures(measures, defects, usable: set[str], notes: list) -> list:
    """The survey's measures with their defect targets resolved; measures that name an
    element without a usable result (its view failed or was not valid) are left out with a
    note, as are defect measures with no defect to act on."""
    out = []
    for i, m in enumerate(measures):
        missing = [n for n in m.elements if n not in usable]
        if missing:
            notes.append(f"measure '{m.name}' (measures[{i}]) left out: no usable U for "
                         f"{', '.join(missing)}")
            continue
        ids: tuple = ()
        if m.kind in DEFECT_MEASURE_CLASSES:
            classes = m.defect_classes or DEFECT_MEASURE_CLASSES[m.kind]
            ids = tuple(d.id for d in defects if d.defect_class in classes
                        and (not m.elements or d.element in m.elements))
            if not ids:
                notes.append(f"measure '{m.name}' (measures[{i}]) left out: no defect of "
                             f"class {', '.join(classes)} was found to act on")
                continue
        keep_elements = m.elements if m.kind in ("add_layer", "replace_glazing") else ()
        out.append(retrofit.Measure(
            name=m.name, kind=m.kind, elements=tuple(keep_elements), defects=ids,
            defect_classes=tuple(m.defect_classes), thickness_m=m.thickness_m,
            conductivity_w_mk=m.conductivity_w_mk, new_u_w_m2k=m.new_u_w_m2k,
            new_psi_w_mk=m.new_psi_w_mk, leak_fraction_removed=m.leak_fraction_removed,
            cost=m.cost))
    return out


def joint_heat_loss(best, draws: dict, d_loss, seed: int):
    """H's uncertainty from the joint Monte Carlo: every element's per-trial U (same seed and
    number of trials: shared inputs line up trial by trial) summed with the defects'.

    Returns `budget.HeatLossResult`, or None when a used element has no draws."""
    terms = []
    for r in best:
        d = draws.get((r.thermogram, r.name))
        if d is None:
            return None
        terms.append((r.area_net_m2, d))
    if not terms:
        return None
    n = terms[0][1].size
    bridges = [(1.0, d.h_w_k + d.h_std_w_k * uncertainty.keyed_normal(f"defect:{d.id}", seed, n))
               for d in d_loss]
    try:
        return budget.heat_loss_from_draws(terms, bridges)
    except ValueError:
        return None


def energy_case(elements, defects, measures, conditions: Conditions, climate: Climate,
                prices: Prices, notes: list, survey_file: str = "survey.toml", draws=None,
                seed: int = 0) -> EnergyCase:
    """H, the heat flow at survey and design conditions, annual loss, and the retrofit case.

    Parameters
    ----------
    elements : sequence of ElementResult
    defects : sequence of Defect
        Ranked defects (ids assigned).
    measures : sequence of retrofit.Measure
        As the survey gives them.
    conditions, climate, prices
        Survey inputs.
    notes : list of str
        Notes are appended here.
    """
    c, cl = conditions, climate
    dt = c.indoor_air_c - c.outdoor_air_c
    best = best_per_element(elements)
    usable = [r for r in best.values() if r.u_valid]
    if not usable:
        notes.append("no valid element U: heat loss not computed")
        return EnergyCase(None)
    el_loss = [energy.ElementLoss(r.name, r.u_w_m2k, r.u_std_w_m2k, r.area_net_m2)
               for r in usable]
    d_loss = defect_losses(defects, dt)
    hl = energy.heat_loss_coefficient(el_loss, d_loss)
    joint = joint_heat_loss(usable, draws or {}, d_loss, seed)
    if joint is not None and joint.low_raised_to_zero:
        notes.append(f"H: {budget.FLOOR_NOTE}")
    h_std = joint.h_std_w_k if joint is not None else hl.h_std_w_k
    hdd = cl.heating_degree_days_kd
    q_design = None
    if cl.design_indoor_c is not None and cl.design_outdoor_c is not None:
        q_design = float(energy.heat_loss_w(hl.h_w_k, cl.design_indoor_c, cl.design_outdoor_c))
    annual = annual_std = None
    if hdd is not None:
        annual = float(energy.annual_heat_loss_kwh(hl.h_w_k, hdd))
        annual_std = float(energy.annual_heat_loss_kwh(h_std, hdd))
    else:
        notes.append("no heating degree-days ([climate] heating_degree_days_kd): annual figures "
                     "left out")
    balance = HeatBalance(
        hl, float(energy.heat_loss_w(hl.h_w_k, c.indoor_air_c, c.outdoor_air_c)), q_design,
        cl.design_indoor_c, cl.design_outdoor_c, hdd, annual, annual_std, h_std,
        None if joint is None else joint.h_low95_w_k, None if joint is None else joint.h_high95_w_k,
        hl.h_std_w_k)
    if not measures:
        return EnergyCase(balance)
    if prices.energy_price_per_kwh is None or not hdd:
        notes.append("measures given but no energy price or degree-days: retrofit case left out")
        return EnergyCase(balance)
    ms = target_measures(measures, defects, {r.name for r in usable}, notes)
    if not ms:
        return EnergyCase(balance)
    p = retrofit.EnergyPrices(prices.energy_price_per_kwh, prices.heating_efficiency,
                              prices.co2_kg_per_kwh or 0.0, prices.currency)
    try:
        results = tuple(retrofit.evaluate_measures(ms, el_loss, d_loss, p, hdd))
        package = retrofit.package_result(ms, el_loss, d_loss, p, hdd)
        after_e, after_d = retrofit.apply_measures(ms, el_loss, d_loss)
    except ValueError as exc:
        raise SurveyError(str(exc), survey_file, "measures") from None
    after = energy.heat_loss_coefficient(after_e, after_d)
    return EnergyCase(balance, results, package, after)

