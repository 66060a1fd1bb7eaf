"""`envelope init`: a survey folder from a folder of camera exports (edge).

`init_survey` reads and checks every export, copies the readable ones into the survey's
``thermograms/`` folder (byte for byte: the exports folder itself is never written to), writes
an empty outline file per thermogram and a ``survey.toml`` that holds every required key:
values found in the exports' headers or given as options, and the placeholder ``"fill in"``
with a comment for the rest. Run again with new exports, it appends the new thermograms (and
any new elements) at the end of ``survey.toml`` and leaves every line already there as it was.
"""

from __future__ import annotations

import json
import os
import re
from dataclasses import dataclass, field
from pathlib import Path

from .errors import SurveyError
from .loader import check_identifier, check_text
from .manifest import sha256
from .readers import IMAGE_SUFFIXES, TEXT_SUFFIXES, DeclarationNeeded, read_export
from .survey import ELEMENT_KINDS, FORMAT_NAME, FORMAT_VERSION, HOST_KINDS, PLACEHOLDER, SURVEY_FILE
from .tomledit import append_blocks, toml_value, write_atomic

__all__ = ["InitReport", "init_survey", "parse_element_option", "parse_view_option",
           "MAX_EXPORTS"]

MAX_EXPORTS = 500
"""Most exports taken in one run."""
_FILL = toml_value(PLACEHOLDER)


@dataclass
class InitReport:
    """What `init_survey` did: the survey file, whether it was new, the thermograms added
    ``(id, export name, how it was read)``, exports already in the survey, exports refused
    ``(name, reason)``, elements added, and keys left to fill in."""

    survey_file: Path
    created: bool
    added: list = field(default_factory=list)
    already: list = field(default_factory=list)
    refused: list = field(default_factory=list)
    elements_added: list = field(default_factory=list)


def parse_element_option(text: str) -> tuple[str, str, str | None]:
    """``"NAME:KIND[:HOST]"`` → (name, kind, host); SurveyError naming the option."""
    parts = [p.strip() for p in text.split(":")]
    if len(parts) not in (2, 3):
        raise SurveyError(f"expected NAME:KIND or NAME:KIND:HOST, got '{text[:60]}'", None, "--element")
    name, kind = parts[0], parts[1]
    if why := check_identifier(name):
        raise SurveyError(f"element name: {why}", None, "--element")
    if kind not in ELEMENT_KINDS:
        raise SurveyError(f"expected a kind among {', '.join(ELEMENT_KINDS)}, got '{kind[:20]}'",
                          None, "--element")
    host = parts[2] if len(parts) == 3 and parts[2] else None
    if host is not None and kind not in ("window", "door"):
        raise SurveyError(f"only windows and doors have a host; '{name}' is a {kind}", None, "--element")
    return name, kind, host


def parse_view_option(text: str) -> tuple[str, tuple[str, ...]]:
    """``"EXPORT=ELEMENT,ELEMENT"`` → (export stem or thermogram id, element names)."""
    if "=" not in text:
        raise SurveyError(f"expected VIEW=ELEMENT,ELEMENT, got '{text[:60]}'", None, "--view")
    view, els = text.split("=", 1)
    names = tuple(e.strip() for e in els.split(",") if e.strip())
    if not view.strip() or not names:
        raise SurveyError(f"expected VIEW=ELEMENT,ELEMENT, got '{text[:60]}'", None, "--view")
    return view.strip(), names


def _thermogram_id(stem: str, taken: set) -> str:
    base = re.sub(r"[^A-Za-z0-9._-]+", "-", stem).strip("-.")[:60] or "thermogram"
    tid, k = base, 2
    while tid in taken:
        tid, k = f"{base}-{k}", k + 1
    return tid


def _check_folders(survey: Path, exports: Path) -> None:
    if not exports.is_dir():
        raise SurveyError("expected a folder of camera exports", str(exports), "--from")
    s, e = survey.resolve(), exports.resolve()
    if s == e or s.is_relative_to(e):
        raise SurveyError("the survey folder must not be the exports folder or inside it (the "
                          "exports are never written to); choose another SURVEY", str(survey))
    if survey.exists() and not survey.is_dir():
        raise SurveyError("exists and is not a folder", str(survey))
    for sub in ("thermograms", "outlines"):
        p = survey / sub
        if p.exists() and not p.is_dir():
            raise SurveyError("exists and is not a folder", str(p))
    toml = survey / SURVEY_FILE
    if toml.is_symlink() or (toml.exists() and not toml.is_file()):
        raise SurveyError("expected a regular file", str(toml))


def init_survey(survey_dir, exports_dir, elements=(), views=(), side=None, site=None,
                indoor_air_c=None, outdoor_air_c=None, export_defaults=None) -> InitReport:
    """Create or extend a survey folder from a folder of camera exports.

    Parameters
    ----------
    survey_dir, exports_dir : path
        The survey folder (created if needed) and the folder holding the exports (read only).
    elements : iterable of (name, kind, host)
        Elements to declare (`parse_element_option`); existing names are left as they are.
    views : iterable of (view, element names)
        The elements each new thermogram shows (by export file stem or thermogram id).
    side : {"interior", "exterior"}, optional
        Side of every new thermogram (else a placeholder).
    site : str, optional
        Site name of a new survey (else a placeholder).
    indoor_air_c, outdoor_air_c : float, optional
        Air temperatures on the night [°C] of a new survey (else placeholders).
    export_defaults : dict, optional
        ``emissivity`` / ``reflected_c`` the camera used, for exports whose header does not
        say (else placeholders).

    Returns
    -------
    InitReport

    Raises
    ------
    SurveyError
        Bad options, folders, or an existing survey.toml that does not load.
    """
    from .loader import load

    survey, exports = Path(survey_dir), Path(exports_dir)
    _check_folders(survey, exports)
    toml = survey / SURVEY_FILE
    existing = load(survey, incomplete=True) if toml.exists() else None
    if site is not None and (why := check_text(site)):
        raise SurveyError(why, None, "--site")
    el_names = set(existing.elements) if existing else set()
    new_elements = [(n, k, h) for n, k, h in elements if n not in el_names]
    declared = el_names | {n for n, _k, _h in new_elements}
    kinds = ({n: e.kind for n, e in existing.elements.items()} if existing else {}) | {
        n: k for n, k, _h in new_elements}
    for n, _k, h in new_elements:
        if h is not None and (h not in declared or kinds.get(h) not in HOST_KINDS):
            raise SurveyError(f"host '{h}' of '{n}' must be a declared wall or roof", None, "--element")
    view_map = dict(views)
    for v, names in view_map.items():
        for n in names:
            if n not in declared:
                raise SurveyError(f"view '{v}': no element named '{n}' (declare it with "
                                  "--element NAME:KIND)", None, "--view")

    taken = {t.id for t in existing.thermograms} if existing else set()
    known = {}
    if existing:
        for t in existing.thermograms:
            if t.file is not None and t.file.is_file():
                known[sha256(t.file)] = t.id
    candidates = sorted(p for p in exports.iterdir() if not p.name.startswith(".")
                        and p.suffix.lower() in TEXT_SUFFIXES + IMAGE_SUFFIXES)
    if len(candidates) > MAX_EXPORTS:
        raise SurveyError(f"more than {MAX_EXPORTS} exports; split the folder", str(exports))
    report = InitReport(toml, existing is None)
    plans = []
    for p in candidates:
        if p.is_symlink() and not p.resolve().is_relative_to(exports.resolve()):
            report.refused.append((p.name, "a link leading outside the exports folder"))
            continue
        if not p.is_file():
            continue
        digest = sha256(p)
        if digest in known:
            report.already.append((p.name, known[digest]))
            continue
        tid = _thermogram_id(p.stem, taken)
        try:
            ex = read_export(p, p.name)
            pending, note = (), ex.dialect
        except DeclarationNeeded as exc:
            ex, pending, note = None, exc.keys, exc.detail
        except SurveyError as exc:
            report.refused.append((p.name, exc.detail))
            continue
        taken.add(tid)
        known[digest] = tid
        elements_of = view_map.get(p.stem, view_map.get(tid, ()))
        plans.append((p, tid, ex, pending, note, elements_of))
        report.added.append((tid, p.name, note))

    # nothing is written before every export has been read and every option checked
    (survey / "thermograms").mkdir(parents=True, exist_ok=True)
    (survey / "outlines").mkdir(parents=True, exist_ok=True)
    blocks = []
    if existing is None:
        blocks.append(_head(plans, site, indoor_air_c, outdoor_air_c))
    blocks += [_element_block(n, k, h) for n, k, h in new_elements]
    report.elements_added = [n for n, _k, _h in new_elements]
    for p, tid, ex, pending, note, elements_of in plans:
        dest = survey / "thermograms" / f"{tid}{p.suffix.lower()}"
        _copy_exclusive(p, dest)
        outl = survey / "outlines" / f"{tid}.geojson"
        if not outl.exists():
            with open(outl, "x", encoding="utf-8") as fh:
                fh.write(json.dumps({"type": "FeatureCollection", "features": []}) + "\n")
        blocks.append(_thermogram_block(tid, p, dest.relative_to(survey), ex, pending, note,
                                        side, elements_of, export_defaults or {}))
    if existing is None:
        write_atomic(toml, "\n\n".join(b.strip("\n") for b in blocks) + "\n")
    elif blocks:
        append_blocks(toml, blocks)
    load(survey, incomplete=True)  # what was written loads (inspect lists what is left)
    return report


def _copy_exclusive(src: Path, dest: Path) -> None:
    """Copy bytes into a new file (never over an existing one)."""
    fd = os.open(dest, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o666)
    try:
        with os.fdopen(fd, "wb") as out, open(src, "rb") as inp:
            for chunk in iter(lambda: inp.read(1 << 20), b""):
                out.write(chunk)
    except BaseException:
        dest.unlink(missing_ok=True)
        raise


def _line(key: str, value, comment: str = "") -> str:
    text = f"{key} = {value}"
    if not comment:
        return text
    return f"{text:<36}# {comment}" if len(text) < 36 else f"{text}  # {comment}"


def _head(plans, site, t_in, t_out) -> str:
    dates = {ex.settings.get("date") for _p, _t, ex, *_ in plans if ex is not None} - {None}
    times = sorted({ex.settings.get("time") for _p, _t, ex, *_ in plans if ex is not None} - {None})
    date = (_line("date", dates.pop(), "from the exports' headers") if len(dates) == 1
            else _line("# date", "2026-01-14", "the survey night (a TOML date)"))
    out = [
        "# Survey written by `envelope init`. Keys set to \"fill in\" are still needed:",
        "# `envelope inspect` lists them; `envelope assess` refuses the survey until they are set.",
        "# Every key is described, with its unit, in docs/survey-format.md.",
        _line("format", toml_value(FORMAT_NAME)), _line("version", FORMAT_VERSION), "",
        "[site]",
        _line("name", toml_value(site) if site else _FILL, "REQUIRED: the house (free text)"),
        _line("# town", '""'), "",
        "[survey]", date, _line("# surveyor", '""'), "",
        "[conditions]                        # at the time of the survey",
        _line("indoor_air_c", _FILL if t_in is None else toml_value(float(t_in)),
              "REQUIRED [°C] indoor air temperature"),
        _line("outdoor_air_c", _FILL if t_out is None else toml_value(float(t_out)),
              "REQUIRED [°C] outdoor air temperature"),
        _line("# indoor_rh", "0.5", "[0–1] measured indoor relative humidity"),
        _line("# outdoor_rh", "0.85", "[0–1]"),
        _line("# wind_m_s", "1.0", "[m/s] at the façade"),
    ]
    if times:
        span = f"the exports span {times[0]}–{times[-1]}" if len(times) > 1 else "from the exports"
        out.append(_line("# time", toml_value(times[0]), f"local time; {span}"))
    out += ["", "[camera]", _line("# accuracy_k", "2.0", "[K] ± absolute accuracy of the camera"),
            "", "[climate]", _line("# heating_degree_days_kd", "2400", "[K·day] per year, for annual energy")]
    return "\n".join(out)


def _element_block(name, kind, host) -> str:
    lines = ["[[elements]]", _line("name", toml_value(name)), _line("kind", toml_value(kind))]
    if host:
        lines.append(_line("host", toml_value(host)))
    lines.append(_line("# u_specified_w_m2k", "0.3", "[W/m²K] specified U, for the builder check"))
    return "\n".join(lines)


def _thermogram_block(tid, src: Path, rel: Path, ex, pending, note, side, elements_of,
                      defaults) -> str:
    s = ex.settings if ex is not None else {}
    lines = [
        "[[thermograms]]",
        _line("id", toml_value(tid), f"from {src.name[:60]}"),
        _line("file", toml_value(rel.as_posix()), "a copy of the export, as exported"),
        _line("outlines", toml_value(f"outlines/{tid}.geojson"), f"draw: envelope outline SURVEY {tid}"),
        _line("side", toml_value(side) if side else _FILL, "REQUIRED: interior | exterior"),
        _line("reflected_c", _FILL, "REQUIRED [°C] reflected apparent temperature on the night"
              + (f" (the export used {s['reflected_c']:g})" if "reflected_c" in s else "")),
    ]
    if "distance_m" in s:
        lines.append(_line("distance_m", toml_value(s["distance_m"]), "[m] from the export's header"))
    else:
        lines.append(_line("# distance_m", "3.0", "[m] camera to surface"))
    if "time" in s:
        lines.append(_line("time", toml_value(s["time"]), "local time, from the export's header"))
    if elements_of:
        lines.append(_line("elements", toml_value(list(elements_of)), "what this view shows"))
    if "rh" in s:
        lines.append(f"# the camera's export used a relative humidity of {s['rh'] * 100:g} %")
    lines.append("# scale: pick it in `envelope outline` (key k or g), or add "
                 "[thermograms.known_length]")
    lines += ["", "[thermograms.export]                # settings the camera used for this export"]
    for key, comment in (("emissivity", "the emissivity set in the camera (1 for blackbody readings)"),
                         ("reflected_c", "[°C] the reflected temperature set in the camera")):
        if key in s:
            lines.append(_line(key, toml_value(s[key]), "from the export's header"))
        elif defaults.get(key) is not None:
            lines.append(_line(key, toml_value(float(defaults[key])), "given to envelope init"))
        else:
            lines.append(_line(key, _FILL, comment))
    for key in ("transmittance", "atmosphere_c"):
        if key in s:
            lines.append(_line(key, toml_value(s[key]), "from the export's header"))
    if "unit" in s:
        lines.append(_line("unit", toml_value(s["unit"]), "from the export's header"))
    if pending:
        lines.append("# " + note[:600].replace("\n", " "))
        for key in pending:
            if key == "offset":
                lines.append(_line(key, "0.0", "reading = value × scale + offset"))
            elif not (key == "unit" and "unit" in s):
                lines.append(_line(key, _FILL, "see the note above"))
    else:
        lines.append(f"# read as: {note[:200]}")
    return "\n".join(lines)
