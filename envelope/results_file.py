"""Reading an output folder's ``results.json`` back (edge), for ``envelope rerender``.

A results file is read only when it is ours: a regular file inside the output folder (not a
symbolic link), at most `MAX_RESULTS_BYTES`, UTF-8 JSON whose ``schema`` and
``schema_version`` are those this version writes, and whose structure passes
`RESULTS_SCHEMA` (a JSON Schema, checked by the small validator `validate`). Messages name
the file and the field, never the foreign bytes. Figures named in it are embedded only when
they lie inside the output folder's ``figures/`` with no symbolic link on the way.
"""

from __future__ import annotations

import json
import math
import os
import re
from pathlib import Path, PurePosixPath

from .errors import SurveyError
from .manifest import plain_inside, safe_rel
from .results import SCHEMA, SCHEMA_VERSION

__all__ = [
    "MAX_RESULTS_BYTES",
    "RESULTS_SCHEMA",
    "checked_figures",
    "load_schema_file",
    "minimal_results_schema",
    "read_results",
    "validate",
]

MAX_RESULTS_BYTES = 64 * 1024 * 1024
"""Largest results.json read back [bytes]."""


def minimal_results_schema() -> dict:
    """The JSON Schema of what the reports read from a results dict (structure only)."""
    objects = {"type": "array", "items": {"type": "object"}}
    text_or_null = {"type": ["string", "null"], "maxLength": 4096}
    return {
        "type": "object",
        "required": ["schema", "schema_version", "survey", "thermograms", "elements", "defects"],
        "properties": {
            "schema": {"const": SCHEMA},
            "schema_version": {"const": SCHEMA_VERSION},
            "tool_version": {"type": ["string", "null"]},
            "survey": {"type": "object", "properties": {
                "site": {"type": ["object", "null"]}, "conditions": {"type": ["object", "null"]},
                "camera": {"type": ["object", "null"]}, "analysis": {"type": ["object", "null"]}}},
            "checks": objects,
            "frsi_limit": {"type": ["object", "null"]},
            "thermograms": {"type": "array", "items": {
                "type": "object", "required": ["id"],
                "properties": {"id": {"type": "string"},
                               "figures": {"type": ["object", "null"],
                                           "additionalProperties": text_or_null},
                               "checks": objects}}},
            "elements": objects,
            "defects": objects,
            "heat_loss": {"type": ["object", "null"]},
            "heat_loss_after": {"type": ["object", "null"]},
            "measures": {"type": ["array", "null"], "items": {"type": "object"}},
            "package": {"type": ["object", "null"]},
            "series": {"type": "array", "items": {
                "type": "object", "properties": {"figure": text_or_null, "checks": objects}}},
            "failures": objects,
            "notes": {"type": "array", "items": {"type": "string"}},
        },
    }


def load_schema_file(path: str | Path) -> dict:
    """A JSON Schema file (such as ``envelope/schema/results.schema.json``) as a dict."""
    return json.loads(Path(path).read_text(encoding="utf-8"))


RESULTS_SCHEMA: dict = minimal_results_schema()
# To check against the shipped schema file instead, this one line becomes:
# RESULTS_SCHEMA = load_schema_file(Path(__file__).parent / "schema" / "results.schema.json")


# --------------------------------------------------------------------------------------
# a small JSON Schema validator (the keywords of draft 2020-12 that describe structure)
# --------------------------------------------------------------------------------------

_TYPES = {
    "object": lambda v: isinstance(v, dict),
    "array": lambda v: isinstance(v, list),
    "string": lambda v: isinstance(v, str),
    "boolean": lambda v: isinstance(v, bool),
    "null": lambda v: v is None,
    "number": lambda v: isinstance(v, int | float) and not isinstance(v, bool),
    "integer": lambda v: (isinstance(v, int) and not isinstance(v, bool))
    or (isinstance(v, float) and math.isfinite(v) and v.is_integer()),
}


def _where(path: str) -> str:
    return path or "(top level)"


def _resolve_ref(ref: str, root: dict) -> dict:
    if not ref.startswith("#"):
        raise ValueError(f"only local $ref are supported, not {ref!r}")
    node = root
    for part in [p for p in ref[1:].split("/") if p]:
        node = node[part.replace("~1", "/").replace("~0", "~")]
    return node


def _errors(v, schema, root, path, depth):
    """First structural error of `v` against `schema` as ``(path, expectation)``, or None."""
    if depth > 64:
        return path, "a shallower structure"
    if schema is True or schema == {}:
        return None
    if schema is False:
        return path, "nothing here"
    if "$ref" in schema:
        err = _errors(v, _resolve_ref(schema["$ref"], root), root, path, depth + 1)
        if err:
            return err
    t = schema.get("type")
    if t is not None:
        types = [t] if isinstance(t, str) else list(t)
        if not any(_TYPES[x](v) for x in types):
            return path, " or ".join(types)
    if "const" in schema and (v != schema["const"]
                              or isinstance(v, bool) != isinstance(schema["const"], bool)):
        return path, f"the value {json.dumps(schema['const'])}"
    if "enum" in schema and v not in schema["enum"]:
        return path, "one of " + ", ".join(json.dumps(x) for x in schema["enum"])
    if isinstance(v, str):
        if len(v) > schema.get("maxLength", math.inf) or len(v) < schema.get("minLength", 0):
            return path, "a string of allowed length"
        if "pattern" in schema and not re.search(schema["pattern"], v):
            return path, "a string of the allowed form"
    if _TYPES["number"](v):
        if v < schema.get("minimum", -math.inf) or v > schema.get("maximum", math.inf) \
                or v <= schema.get("exclusiveMinimum", -math.inf) \
                or v >= schema.get("exclusiveMaximum", math.inf):
            return path, "a number in the allowed range"
    if isinstance(v, list):
        if len(v) > schema.get("maxItems", math.inf) or len(v) < schema.get("minItems", 0):
            return path, "a list of allowed length"
        prefix = schema.get("prefixItems", [])
        for i, item in enumerate(v):
            sub = prefix[i] if i < len(prefix) else schema.get("items")
            if sub is not None:
                err = _errors(item, sub, root, f"{path}[{i}]", depth + 1)
                if err:
                    return err
    if isinstance(v, dict):
        for key in schema.get("required", []):
            if key not in v:
                return (f"{path}.{key}" if path else key), "this key (missing)"
        props = schema.get("properties", {})
        patterns = schema.get("patternProperties", {})
        extra = schema.get("additionalProperties", True)
        for key, item in v.items():
            sub_path = f"{path}.{key}" if path else str(key)
            matched = False
            if key in props:
                matched = True
                err = _errors(item, props[key], root, sub_path, depth + 1)
                if err:
                    return err
            for pat, sub in patterns.items():
                if re.search(pat, key):
                    matched = True
                    err = _errors(item, sub, root, sub_path, depth + 1)
                    if err:
                        return err
            if not matched and extra is not True:
                err = _errors(item, extra, root, sub_path, depth + 1)
                if err:
                    return err
    for sub in schema.get("allOf", []):
        err = _errors(v, sub, root, path, depth + 1)
        if err:
            return err
    if "anyOf" in schema and all(_errors(v, s, root, path, depth + 1) for s in schema["anyOf"]):
        return path, "one of the allowed forms"
    if "oneOf" in schema and sum(_errors(v, s, root, path, depth + 1) is None
                                 for s in schema["oneOf"]) != 1:
        return path, "exactly one of the allowed forms"
    if "not" in schema and _errors(v, schema["not"], root, path, depth + 1) is None:
        return path, "another form"
    return None


def validate(instance, schema: dict, file: str = "results.json") -> None:
    """Raise `SurveyError` naming the first field of `instance` that `schema` refuses.

    Supports the structural keywords of JSON Schema (``type``, ``const``, ``enum``,
    ``required``, ``properties``, ``patternProperties``, ``additionalProperties``,
    ``items``, ``prefixItems``, length and range limits, ``pattern``, ``allOf``/``anyOf``/
    ``oneOf``/``not``, local ``$ref``); annotations and unknown keywords are ignored, as the
    specification asks. The message names the field and what was expected, never the value.
    """
    err = _errors(instance, schema, schema, "", 0)
    if err:
        raise SurveyError(f"expected {err[1]}", file, _where(err[0]))


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
    validate(doc, RESULTS_SCHEMA, name)
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
