"""Stage: the ISO 13788 limits of the survey and each element's condensation / mould verdict."""

from __future__ import annotations

import dataclasses

import numpy as np

from envelope import condensation
from envelope.errors import SurveyError
from envelope.stages.data import ElementResult
from envelope.stages.elements import DesignConditions
from envelope.survey import Climate, Conditions

__all__ = ["frsi_limits", "element_risk"]


def frsi_limits(climate: Climate, conditions: Conditions, survey_file: str = "survey.toml"):
    """``(mould, condensation, note)``: the `FrsiLimit` pair for the site, or (None, None) and
    a note saying why there is none."""
    cl = climate
    if cl.frsi_criterion != "iso13788":
        lim = condensation.fixed_limit(cl.frsi_criterion)
        return lim, lim, f"fRsi limit: fixed criterion {cl.frsi_criterion} ({lim.value:.2f})"
    if cl.monthly_outdoor_c is None or cl.monthly_outdoor_rh is None:
        return None, None, ("no monthly climate in the survey ([climate] monthly_outdoor_c and "
                            "monthly_outdoor_rh): fRsi is reported without a limit")
    t_i = cl.monthly_indoor_c or (cl.design_indoor_c or conditions.indoor_air_c,) * 12
    hum = condensation.IndoorHumidity(
        cl.indoor_humidity, rh=cl.indoor_rh, humidity_class=cl.humidity_class,
        moisture_kg_h=cl.moisture_kg_h, air_changes_per_h=cl.air_changes_per_h,
        volume_m3=cl.volume_m3)
    try:
        mould = condensation.frsi_limit(cl.monthly_outdoor_c, cl.monthly_outdoor_rh, t_i, hum, 0.8)
        cond = condensation.frsi_limit(cl.monthly_outdoor_c, cl.monthly_outdoor_rh, t_i, hum, 1.0)
    except ValueError as exc:
        raise SurveyError(str(getattr(exc, "detail", exc)), survey_file, "climate") from None
    return mould, cond, None


def element_risk(res: ElementResult, frsi_values, limits, design: DesignConditions,
                 defect_risks=(), frsi_design_values=None) -> ElementResult:
    """The element result with its fRsi statistics and risk verdict filled in.

    Parameters
    ----------
    res : ElementResult
    frsi_values : ndarray
        Factor measured on the night, the element's finite pixels [-].
    limits : (FrsiLimit or None, FrsiLimit or None)
        Mould and condensation limits.
    design : DesignConditions
    defect_risks : iterable of str
        Risks of the defects found on this element: the element's verdict is at least its
        worst defect's.
    frsi_design_values : ndarray, optional
        The same pixels' factor at the design convention (Rsi 0.25 opaque, 0.13 glazing), on
        which the verdict is judged (`condensation.assess_frsi`).

    Notes
    -----
    Glazing and frames do not feed mould the way opaque surfaces do; what matters on them is
    surface condensation (critical surface humidity 1.0), so windows are judged against the
    condensation limit only (common practice).
    """
    mould, cond = limits
    if mould is None or np.size(frsi_values) == 0:
        return res
    if frsi_design_values is not None and not np.isfinite(frsi_design_values).any():
        # no pixel loses heat outwards on the night's readings (surfaces at or below the
        # outdoor air): there is no design-convention factor to judge
        return dataclasses.replace(res, risk="not assessed", risk_note=(
            "no pixel loses heat outwards on the night's readings (the surface is not warmer "
            "than the outdoor air): risk not judged"))
    notes = []
    if res.kind == "window":
        mould = cond
        notes.append("glazing: judged against the condensation limit only")
    v = condensation.assess_frsi(frsi_values, mould, cond, design.t_i_c, design.t_e_c,
                                 design.rh_i, frsi_design_values=frsi_design_values)
    risk = condensation.worst_risk([v.risk or "none", *defect_risks])
    if risk != (v.risk or "none"):
        notes.append(f"raised to {risk} by a defect on it")
    return dataclasses.replace(res, frsi_min=v.frsi_min, frsi_p05=v.frsi_p05,
                               frsi_design_min=v.frsi_design_min,
                               frsi_design_p05=v.frsi_design_p05, risk=risk,
                               risk_judged_on=v.judged_on, risk_note="; ".join(notes),
                               t_si_design_c=v.t_si_design_c, rh_si_design=v.rh_si_design)
