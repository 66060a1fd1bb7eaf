"""Assessment → the versioned results dict and the tables of ``results.json`` and the CSVs.

This module builds dicts and DataFrames only; `envelope.outputs.write_tables` writes them.

Schema ``envelope-results`` version 2 (JSON Schema in ``envelope/schema/``): every number carries its unit in its key
(``_c`` °C, ``_k`` K, ``_m2`` m², ``_w`` W, ``_w_k`` W/K, ``_w_m2k`` W/(m²·K), ``_w_mk``
W/(m·K), ``_kwh`` kWh, shares and rh as fractions 0–1). Keys are sorted and there are no
timestamps, so the same survey gives a byte-identical file on every run.
"""

from __future__ import annotations

import dataclasses
import json
import math
from pathlib import Path

import numpy as np

from . import __version__

SCHEMA = "envelope-results"
SCHEMA_VERSION = 2
SIGNIFICANT = 6

ELEMENT_COLUMNS = (
    "name", "kind", "thermogram", "side", "area_net_m2", "emissivity", "u_w_m2k",
    "u_std_w_m2k", "u_low95_w_m2k", "u_high95_w_m2k", "u_whole_w_m2k", "undisturbed_share",
    "u_valid", "u_method", "h_c_model", "h_c_w_m2k", "calibrated", "frsi_min", "frsi_p05",
    "frsi_limit_mould", "frsi_limit_condensation", "risk", "t_si_design_c", "rh_si_design",
    "u_specified_w_m2k", "verdict", "coverage_share",
)
DEFECT_COLUMNS = (
    "rank", "id", "thermogram", "element", "defect_class", "class_confidence", "risk",
    "score_text", "area_m2", "length_m", "width_m", "junction", "extra_w", "extra_w_std",
    "psi_w_mk", "chi_w_k", "incidence_factor", "annual_kwh", "frsi_min", "frsi_p05", "reasons",
)
MEASURE_COLUMNS = (
    "name", "kind", "targets", "cost", "annual_kwh_saved", "annual_kwh_saved_low95",
    "annual_kwh_saved_high95", "annual_money_saved", "annual_co2_saved_kg", "payback_years",
)

__all__ = ["SCHEMA", "SCHEMA_VERSION", "clean", "to_results", "dumps",
           "elements_table", "defects_table", "measures_table", "schema",
           "validate"]


def clean(obj):
    """JSON-ready copy: numpy → Python, NaN/inf → None, floats to `SIGNIFICANT` digits."""
    if isinstance(obj, dict):
        return {str(k): clean(v) for k, v in obj.items()}
    if isinstance(obj, list | tuple):
        return [clean(v) for v in obj]
    if dataclasses.is_dataclass(obj) and not isinstance(obj, type):
        return clean(dataclasses.asdict(obj))
    if isinstance(obj, np.ndarray):
        return clean(obj.tolist())
    if isinstance(obj, bool | np.bool_):
        return bool(obj)
    if isinstance(obj, int | np.integer):
        return int(obj)
    if isinstance(obj, float | np.floating):
        x = float(obj)
        if not math.isfinite(x):
            return None
        return float(f"{x:.{SIGNIFICANT}g}")
    if isinstance(obj, Path):
        return obj.as_posix()
    return obj


def _check(ch) -> dict:
    return {"name": ch.name, "status": ch.status, "value": ch.value, "unit": ch.unit,
            "rule": ch.rule, "scope": getattr(ch, "scope", "survey")}


def _limit(lim):
    if lim is None:
        return None
    return {"value": lim.value, "critical_month": getattr(lim, "critical_month", None),
            "method": lim.method, "critical_rh": getattr(lim, "critical_rh", None)}


def _budget(pairs) -> list[dict]:
    return [{"input": k, "share": float(v)} for k, v in pairs]


def _element(e, a) -> dict:
    d = dataclasses.asdict(e)
    d["checks"] = [_check(ch) for ch in e.checks]
    d["budget"] = _budget(e.budget)
    d["narrowing"] = [{"contributor": c, "share": s, "remedy": r} for c, s, r in e.narrowing]
    d["frsi_limit_mould"] = a.limit_mould.value if a.limit_mould else None
    d["frsi_limit_condensation"] = a.limit_condensation.value if a.limit_condensation else None
    return d


def _view(v, root, figures: dict) -> dict:
    tg, cv = v.thermogram, v.corrected
    try:
        file = tg.file.resolve().relative_to(Path(root).resolve()).as_posix()
    except (ValueError, OSError):
        file = str(tg.file)
    return {
        "id": tg.id, "side": tg.side, "file": file, "status": v.status, "error": v.error,
        "paired_with": v.paired_with,
        "transmittance": None if cv is None else cv.transmittance,
        "atmosphere_c": None if cv is None else cv.atmosphere_c,
        "reflected_c": tg.reflected_c if cv is None else cv.thermogram.reflected_c,
        "camera_offset_k": None if cv is None else cv.offset.value_k,
        "camera_offset_source": None if cv is None else (cv.offset.source or None),
        "view_angle_deg": tg.view_angle_deg, "distance_m": tg.distance_m,
        "scale": None if cv is None else {
            "method": cv.homography.method, "rms_error_m": cv.homography.rms_error_m,
            "fronto_parallel_assumed": cv.homography.fronto_parallel_assumed},
        "figures": figures,
        "checks": [_check(ch) for ch in v.checks],
    }


def _series(s) -> dict:
    d = dataclasses.asdict(s)
    d["checks"] = [_check(ch) for ch in s.checks]
    d["budget"] = _budget(s.budget)
    d["figure"] = f"figures/series-{s.id}.png"
    return d


def _annual(h_w_k, hdd_kd):
    if h_w_k is None or hdd_kd is None:
        return None
    from envelope.energy import annual_heat_loss_kwh

    return float(annual_heat_loss_kwh(h_w_k, hdd_kd))


def _heat_loss(energy) -> dict | None:
    b = energy.balance
    if b is None:
        return None
    d = b.heat_loss.to_dict()
    d.update(q_survey_w=b.q_survey_w, q_design_w=b.q_design_w, design_indoor_c=b.design_indoor_c,
             design_outdoor_c=b.design_outdoor_c, hdd_kd=b.hdd_kd, annual_kwh=b.annual_kwh,
             annual_kwh_std=b.annual_kwh_std, h_low95_w_k=b.h_low95_w_k,
             h_high95_w_k=b.h_high95_w_k, h_std_independent_w_k=b.h_std_independent_w_k,
             annual_kwh_low95=_annual(b.h_low95_w_k, b.hdd_kd),
             annual_kwh_high95=_annual(b.h_high95_w_k, b.hdd_kd))
    if b.h_std_w_k is not None:
        d["h_std_w_k"] = b.h_std_w_k
    return d


def to_results(a) -> dict:
    """The results dict (schema version 2) of an `assess.Assessment`."""
    from envelope.defects import defect_to_dict
    from envelope.plots.plan import plan_figures

    s = a.survey
    c = s.conditions
    en = a.energy
    plan = plan_figures(a)
    out = {
        "schema": SCHEMA, "schema_version": SCHEMA_VERSION, "tool_version": __version__,
        "survey": {
            "site": dataclasses.asdict(s.site), "surveyor": s.surveyor, "client": s.client,
            "date": s.date, "currency": s.prices.currency,
            "conditions": {"indoor_air_c": c.indoor_air_c, "outdoor_air_c": c.outdoor_air_c,
                           "indoor_rh": c.indoor_rh, "outdoor_rh": c.outdoor_rh,
                           "wind_m_s": c.wind_m_s, "rain": c.rain,
                           "sky_cloud_oktas": c.sky_cloud_oktas},
            "camera": {"label": s.camera.label, "band_um": list(s.camera.band_um),
                       "accuracy_k": s.camera.accuracy_k,
                       "relative_accuracy_k": s.camera.relative_accuracy_k,
                       "noise_k": s.camera.noise_k},
            "analysis": dataclasses.asdict(s.analysis),
            "airtightness": None if getattr(s, "airtightness", None) is None
            else dataclasses.asdict(s.airtightness),
            "junctions": [dataclasses.asdict(j) for j in getattr(s, "junctions", ())],
            "prices": dataclasses.asdict(s.prices),
            "climate": dataclasses.asdict(s.climate),
        },
        "checks": [_check(ch) for ch in a.checks],
        "frsi_limit": {"mould": _limit(a.limit_mould), "condensation": _limit(a.limit_condensation)},
        "thermograms": [_view(v, s.root, plan.get(v.thermogram.id, {})) for v in a.views],
        "elements": [_element(e, a) for e in a.elements],
        "defects": [defect_to_dict(d) for d in a.defects],
        "heat_loss": _heat_loss(en),
        "heat_loss_after": None if en.after is None else en.after.to_dict(),
        "measures": [m.to_dict() for m in en.measures],
        "package": None if en.package is None else en.package.to_dict(),
        "series": [_series(sr) for sr in a.series],
        "failures": [{"thermogram": f.what, "file": f.file, "error": f.error}
                     for f in a.failures],
        "notes": list(a.notes),
    }
    return clean(out)


def schema() -> dict:
    """The JSON Schema (draft 2020-12) of ``results.json``, shipped in the package."""
    from importlib import resources

    text = resources.files("envelope").joinpath("schema/results.schema.json").read_text("utf-8")
    return json.loads(text)


def validate(results: dict) -> list[str]:
    """Problems of a results dict against the schema, as ``"$.path: message"`` lines
    (empty when valid). Uses jsonschema."""
    import jsonschema

    validator = jsonschema.Draft202012Validator(schema())
    return [f"{e.json_path}: {e.message[:200]}" for e in
            sorted(validator.iter_errors(results), key=lambda e: list(e.path))]


def dumps(results: dict) -> str:
    """Canonical JSON text: sorted keys, two-space indent, UTF-8, trailing newline."""
    return json.dumps(results, sort_keys=True, indent=2, ensure_ascii=False, allow_nan=False) + "\n"


def _frame(rows: list[dict], columns: tuple[str, ...]):
    import pandas as pd

    flat = []
    for r in rows:
        row = {}
        for col in columns:
            v = r.get(col)
            if col == "class_confidence":
                conf = r.get("confidence") or {}
                v = max(conf.values()) if conf else None
            if isinstance(v, list | tuple):
                v = "; ".join(str(x) for x in v)
            row[col] = v
        flat.append(row)
    return pd.DataFrame(flat, columns=list(columns))


def elements_table(results: dict):
    """Elements as a pandas DataFrame (one row per element and thermogram)."""
    return _frame(results.get("elements") or [], ELEMENT_COLUMNS)


def defects_table(results: dict):
    """Ranked defects as a pandas DataFrame."""
    return _frame(results.get("defects") or [], DEFECT_COLUMNS)


def measures_table(results: dict):
    """Retrofit measures, then the package, as a pandas DataFrame."""
    rows = list(results.get("measures") or [])
    if results.get("package"):
        rows.append(results["package"])
    return _frame(rows, MEASURE_COLUMNS)
