"""Reading an output folder's ``results.json`` back (edge), for ``envelope rerender``.

A results file is read only when it is ours: a regular file inside the output folder (not a
symbolic link), at most `MAX_RESULTS_BYTES`, UTF-8 JSON whose ``schema`` and
``schema_version`` are those this version writes, and that the shipped JSON Schema accepts
(`envelope.results.schema`, checked by jsonschema). Messages name
the file and the field, never the foreign bytes. Figures named in it are embedded only when
they lie inside the output folder's ``figures/`` with no symbolic link on the way.
"""

from __future__ import annotations

import json
import os
from pathlib import Path, PurePosixPath

from .errors import SurveyError
from .manifest import plain_inside, safe_rel
from .results import SCHEMA, SCHEMA_VERSION
from .results import schema as results_schema

__all__ = ["MAX_RESULTS_BYTES", "checked_figures", "read_results", "validate"]

MAX_RESULTS_BYTES = 64 * 1024 * 1024
"""Largest results.json read back [bytes]."""


def _expected(error) -> str:
    """What a schema keyword asked for, in words, without the value found (which may hold
    bytes of a foreign file)."""
    kw, want = error.validator, error.validator_value
    if kw == "type":
        return "a value of type " + (" or ".join(want) if isinstance(want, list) else str(want))
    if kw == "required":
        missing = [k for k in want if isinstance(error.instance, dict) and k not in error.instance]
        return "the key " + ", ".join(json.dumps(k) for k in missing[:3])
    if kw == "const":
        return f"the value {json.dumps(want)}"
    if kw == "enum":
        return "one of " + ", ".join(json.dumps(x) for x in want)
    if kw == "additionalProperties":
        return "no other keys"
    if kw in ("anyOf", "oneOf"):
        return "one of the allowed forms"
    return f"a value meeting '{kw}'"


def validate(instance, file: str = "results.json") -> None:
    """Raise `SurveyError` naming the first field of `instance` that the shipped results
    schema (`envelope.results.schema`, JSON Schema draft 2020-12, checked by jsonschema)
    refuses; the message names the field and what was expected, never the value."""
    import jsonschema

    validator = jsonschema.Draft202012Validator(results_schema())
    errors = sorted(validator.iter_errors(instance), key=lambda e: (len(e.path), list(map(str, e.path))))
    if errors:
        e = errors[0]
        field = "".join(f"[{p}]" if isinstance(p, int) else f".{p}" for p in e.path).lstrip(".")
        raise SurveyError(f"expected {_expected(e)}", file, field or "(top level)")


# --------------------------------------------------------------------------------------
# reading
# --------------------------------------------------------------------------------------


def _no_constants(name):
    raise ValueError(f"{name} is not JSON")


def read_results(out_dir: str | Path) -> dict:
    """The results dict of an output folder, checked (see the module notes).

    Raises
    ------
    SurveyError
        Naming ``results.json`` (as the user wrote the folder) and the field.
    """
    path = Path(out_dir) / "results.json"
    name = str(path)
    if os.path.islink(path):
        raise SurveyError("is a symbolic link; envelope reads back only the results file it "
                          "wrote inside the output folder", name)
    if not path.exists():
        raise SurveyError("no results.json here; expected a folder written by `envelope assess`",
                          str(out_dir))
    if not path.is_file():
        raise SurveyError("is not a regular file; expected the results file of "
                          "`envelope assess`", name)
    if path.stat().st_size > MAX_RESULTS_BYTES:
        raise SurveyError(f"larger than {MAX_RESULTS_BYTES // 2**20} MB; not a results file of "
                          "envelope", name)
    data = path.read_bytes()
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise SurveyError(f"not UTF-8 text (at byte {exc.start}); not a results file of envelope",
                          name) from None
    try:
        doc = json.loads(text, parse_constant=_no_constants)
    except json.JSONDecodeError as exc:
        raise SurveyError(f"not valid JSON ({exc.msg}, line {exc.lineno} column {exc.colno})",
                          name) from None
    except ValueError:
        raise SurveyError("not valid JSON (NaN or Infinity)", name) from None
    except RecursionError:
        raise SurveyError("JSON nested too deeply; not a results file of envelope", name) from None
    if not isinstance(doc, dict) or doc.get("schema") != SCHEMA:
        raise SurveyError(f"not an envelope results file (expected \"schema\": \"{SCHEMA}\")",
                          name, "schema")
    if doc.get("schema_version") != SCHEMA_VERSION or isinstance(doc.get("schema_version"), bool):
        raise SurveyError(f"written for another results schema version; this envelope reads "
                          f"version {SCHEMA_VERSION}: run `envelope assess` again", name,
                          "schema_version")
    validate(doc, name)
    return doc


def _figure_refs(results: dict):
    for i, t in enumerate(results.get("thermograms") or []):
        for key, rel in sorted((t.get("figures") or {}).items()):
            yield f"thermograms[{i}].figures.{key}", rel
    for i, sr in enumerate(results.get("series") or []):
        yield f"series[{i}].figure", sr.get("figure")


def checked_figures(results: dict, out_dir: str | Path) -> list[PurePosixPath]:
    """Figure files named in `results` that exist inside ``out_dir/figures``.

    Raises
    ------
    SurveyError
        When a figure path is absolute, holds ``..``, lies outside ``figures/``, is not a
        ``.png`` or passes through a symbolic link (naming the field, not the path).
    """
    out_dir = Path(out_dir)
    found = []
    for field, rel in _figure_refs(results):
        if rel is None:
            continue
        p = safe_rel(rel)
        if p is None or len(p.parts) < 2 or p.parts[0] != "figures" or p.suffix.lower() != ".png":
            raise SurveyError("figure path must be figures/NAME.png inside the output folder",
                              str(out_dir / "results.json"), field)
        full = plain_inside(out_dir, p)
        if full is None:
            raise SurveyError("figure path passes through a symbolic link; only figures inside "
                              "the output folder are embedded", str(out_dir / "results.json"), field)
        if full.is_file() and p not in found:
            found.append(p)
    return found
