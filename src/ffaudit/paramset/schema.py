"""JSON Schema validation of a parameter-set document, as findings.

The schema is ``schemas/parameter-set.schema.json`` (JSON Schema 2020-12, shipped as package data).
:func:`iter_schema_findings` turns *every* error of the validator's ``iter_errors`` into a
:class:`~ffaudit.findings.Finding` with code ``schema``: the document path of the error, the line and column
of the nearest marked path (see :mod:`ffaudit.paramset.yamlload`), a message for people and a hint taken
from the schema's descriptions. :func:`best_schema_finding` gives the single most relevant one
(``jsonschema.exceptions.best_match``) for a summary line. Nothing here raises for a bad document. The
shipped schema is not checked against the 2020-12 metaschema at run time (that took 0.15 s of every run);
tests/test_paramset_load.py checks it.
"""

from __future__ import annotations

import functools
import json
from collections.abc import Iterator, Mapping
from importlib import resources
from typing import Any

from jsonschema import Draft202012Validator
from jsonschema.exceptions import ValidationError, best_match

from ffaudit.findings import DocPath, Finding, Severity, format_doc_path
from ffaudit.paramset.yamlload import Mark, locate

SCHEMA_FILE = "parameter-set.schema.json"

_TYPE_NAMES = {
    "number": "a number",
    "integer": "an integer",
    "string": "a string",
    "boolean": "true or false",
    "object": "a mapping",
    "array": "a list",
    "null": "nothing",
}


@functools.cache
def load_schema() -> dict[str, Any]:
    """The parameter-set schema as a dict (read once from the package)."""
    text = resources.files("ffaudit").joinpath("schemas", SCHEMA_FILE).read_text(encoding="utf-8")
    schema: dict[str, Any] = json.loads(text)
    return schema


@functools.cache
def _validator() -> Draft202012Validator:
    return Draft202012Validator(load_schema())


def iter_schema_findings(data: Any, marks: Mapping[DocPath, Mark], path: str) -> Iterator[Finding]:
    """Yield one ``schema`` finding per validation error of ``data``, in document order."""
    findings = [_to_finding(e, data, marks, path) for e in _validator().iter_errors(data)]
    findings.sort(
        key=lambda f: (f.line or 0, f.column or 0, format_doc_path(f.doc_path), f.message)
    )
    yield from findings


def best_schema_finding(data: Any, marks: Mapping[DocPath, Mark], path: str) -> Finding | None:
    """The most relevant schema error (``jsonschema.exceptions.best_match``), or None if valid.

    Validates ``data`` again: call it only when :func:`iter_schema_findings` found something."""
    error = best_match(_validator().iter_errors(data))
    return None if error is None else _to_finding(error, data, marks, path)


def _to_finding(
    error: ValidationError, data: Any, marks: Mapping[DocPath, Mark], path: str
) -> Finding:
    doc_path: DocPath = tuple(error.absolute_path)
    message, hint = _describe(error, data)
    if error.validator == "additionalProperties" and isinstance(error.instance, dict):
        allowed = (
            set(error.schema.get("properties", {})) if isinstance(error.schema, dict) else set()
        )
        extra = sorted(str(k) for k in error.instance if k not in allowed)
        if len(extra) == 1:
            doc_path = doc_path + (extra[0],)
    mark = locate(marks, doc_path) or (1, 1)
    return Finding(
        code="schema",
        severity=Severity.ERROR,
        message=message,
        path=path,
        line=mark[0],
        column=mark[1],
        doc_path=doc_path,
        hint=hint,
        cause=error.message,
    )


def _describe(error: ValidationError, data: Any) -> tuple[str, str | None]:
    """(message, hint) for people, from the error and the schema's descriptions."""
    validator = error.validator
    schema = error.schema if isinstance(error.schema, dict) else {}
    hint = _nearest_description(error)
    if validator == "required":
        missing = [n for n in error.validator_value if n not in (error.instance or {})]
        named = [n for n in missing if error.message.startswith(repr(n))]
        name = (named or missing or [str(error.validator_value)])[0]
        prop = schema.get("properties", {}).get(name, {})
        described = _resolve(prop).get("description") if isinstance(prop, dict) else None
        return f"missing required field {name!r}", described or hint
    if validator == "additionalProperties":
        allowed = sorted(schema.get("properties", {}))
        extra = sorted(str(k) for k in error.instance if k not in allowed)
        fields = ", ".join(repr(k) for k in extra)
        return f"unexpected field {fields}", "allowed here: " + ", ".join(allowed)
    if validator == "type":
        expected = error.validator_value
        names = [expected] if isinstance(expected, str) else list(expected)
        wanted = " or ".join(_TYPE_NAMES.get(n, n) for n in names)
        if error.instance is None and not error.absolute_path:
            return "the document is empty; expected a mapping with 'format' and 'header'", None
        found = _kind_of(error.instance)
        if isinstance(error.instance, bool) and "string" in names:
            hint = "YAML reads yes/no/on/off/true/false as booleans; quote the value"
        return f"expected {wanted}, found {found} {error.instance!r}", hint
    if validator == "not" and error.validator_value == {}:
        name = error.absolute_path[-1] if error.absolute_path else "?"
        return f"field {name!r} is not allowed here", hint
    if validator in ("minItems", "maxItems") and isinstance(error.instance, list):
        bound = "at least" if validator == "minItems" else "at most"
        return f"expected {bound} {error.validator_value} items, found {len(error.instance)}", hint
    if validator == "enum":
        options = ", ".join(repr(o) for o in error.validator_value)
        return f"{error.instance!r} is not one of {options}", hint
    return error.message, hint


def _kind_of(value: Any) -> str:
    if isinstance(value, bool):
        return "a boolean"
    if isinstance(value, (int, float)):
        return "a number"
    if isinstance(value, str):
        return "a string"
    if isinstance(value, list):
        return "a list"
    if isinstance(value, dict):
        return "a mapping"
    return "nothing" if value is None else type(value).__name__


def _resolve(node: Any) -> dict[str, Any]:
    """Follow local ``$ref`` s (``#/$defs/...``) until a schema node without one."""
    root = load_schema()
    seen = 0
    while isinstance(node, dict) and "$ref" in node and seen < 20:
        target: Any = root
        for part in str(node["$ref"]).lstrip("#/").split("/"):
            target = target[part]
        if "description" in node and isinstance(target, dict) and "description" not in target:
            target = {**target, "description": node["description"]}
        node = target
        seen += 1
    return node if isinstance(node, dict) else {}


def _nearest_description(error: ValidationError) -> str | None:
    """The description of the innermost schema node on the error's schema path that has one."""
    node: Any = load_schema()
    best: Any = None
    for key in error.absolute_schema_path:
        if isinstance(node, dict) and key not in node and "$ref" in node:
            node = _resolve(node)
        try:
            node = node[key]
        except (KeyError, IndexError, TypeError):
            break
        if isinstance(node, dict):
            described = node.get("description")
            if described is None and "$ref" in node:
                described = _resolve(node).get("description")
            if described is not None:
                best = described
    return str(best) if best is not None else None
