"""SARIF 2.1.0 for findings located in parameter files (``lint`` and ``compare``), for code-scanning CI.

One log with one run: ``tool.driver`` is ffaudit (name, version, one rule object per rule with
``shortDescription``, ``fullDescription``, ``defaultConfiguration.level`` and, when known, ``helpUri``);
each finding is a result with ``ruleId``/``ruleIndex``, ``level`` (``error``, ``warning``, ``note`` for
info), ``message.text`` (message and fix hint), a physical location (the file as a relative URI when it
lies under the base directory, ``region.startLine``/``startColumn`` when known; columns count Unicode
code points, as the run's ``columnKind`` says), and a ``partialFingerprints`` entry computed from the
finding's stable identity so CI can follow a finding across runs. Findings about a molecule without a
file position get a logical location naming the record instead.

Deterministic: no timestamps, no absolute paths unless a file lies outside the base directory, keys in a
fixed order. Valid against the official schema (``sarif-schema-2.1.0.json``, tested).
"""

from __future__ import annotations

import hashlib
import json
import os
from collections.abc import Iterable, Mapping, Sequence
from pathlib import Path, PurePath
from typing import Any, TextIO
from urllib.parse import quote

from ffaudit import __version__
from ffaudit.findings import Finding, Severity, format_doc_path
from ffaudit.report.findings_report import FindingsReport, RuleDescription

SARIF_VERSION = "2.1.0"
SARIF_SCHEMA = (
    "https://docs.oasis-open.org/sarif/sarif/v2.1.0/errata01/os/schemas/sarif-schema-2.1.0.json"
)
LEVELS: dict[Severity, str] = {
    Severity.ERROR: "error",
    Severity.WARNING: "warning",
    Severity.INFO: "note",
}
FINGERPRINT = "ffauditIdentity/v1"

RulesArg = Sequence[RuleDescription] | Mapping[str, tuple[str, Severity]] | None


def artifact_uri(path: str, base: str | os.PathLike[str] | None = None) -> str:
    """The URI of ``path`` for ``artifactLocation.uri``: relative (forward slashes, percent-encoded)
    when ``path`` is relative or lies under ``base`` (default: the current directory), else a ``file:``
    URI. Names that are not file paths (``embedded:generic-organic``) are kept as written."""
    if path.startswith("embedded:"):
        return path
    pure = PurePath(path)
    if pure.is_absolute():
        root = Path(base if base is not None else os.getcwd()).resolve()
        try:
            relative = Path(path).resolve().relative_to(root)
        except ValueError:
            return Path(path).resolve().as_uri()
        return quote(relative.as_posix())
    return quote(Path(os.path.normpath(path)).as_posix())


def _rule_list(findings: Sequence[Finding], rules: RulesArg) -> list[RuleDescription]:
    listed: list[RuleDescription] = []
    if isinstance(rules, Mapping):
        listed = [
            RuleDescription(id=rid, summary=summary, severity=severity)
            for rid, (summary, severity) in rules.items()
        ]
    elif rules is not None:
        listed = [r for r in rules if r.status == "run"]
    known = {r.id for r in listed}
    extra: dict[str, Finding] = {}
    for f in findings:
        rid = f.rule or f.code
        if rid not in known and rid not in extra:
            extra[rid] = f
    listed += [
        RuleDescription(id=rid, summary=f"ffaudit finding {rid}", severity=f.severity)
        for rid, f in sorted(extra.items())
    ]
    return listed


def _rule_object(rule: RuleDescription) -> dict[str, Any]:
    obj: dict[str, Any] = {
        "id": rule.id,
        "shortDescription": {"text": rule.summary or rule.id},
        "fullDescription": {"text": rule.description or rule.summary or rule.id},
        "defaultConfiguration": {"level": LEVELS[rule.severity]},
    }
    if rule.help_uri:
        obj["helpUri"] = rule.help_uri
    if rule.family:
        obj["properties"] = {"tags": [rule.family]}
    return obj


def _fingerprint(finding: Finding) -> str:
    identity = json.dumps([repr(part) for part in finding.identity()], ensure_ascii=True)
    return hashlib.sha256(identity.encode("utf-8")).hexdigest()[:32]


def _result(finding: Finding, index: int, base: str | os.PathLike[str] | None) -> dict[str, Any]:
    # a finding whose code is not its rule's id (a loader code such as unknown-class reported by a
    # structure rule) says so in the message, as the table does: code-scanning shows only the text
    prefix = f"[{finding.code}] " if finding.rule and finding.code != finding.rule else ""
    text = prefix + finding.message + (f" (hint: {finding.hint})" if finding.hint else "")
    result: dict[str, Any] = {
        "ruleId": finding.rule or finding.code,
        "ruleIndex": index,
        "level": LEVELS[finding.severity],
        "message": {"text": text},
    }
    if finding.path is not None:
        physical: dict[str, Any] = {"artifactLocation": {"uri": artifact_uri(finding.path, base)}}
        if finding.line is not None:
            region: dict[str, Any] = {"startLine": finding.line}
            if finding.column is not None:
                region["startColumn"] = finding.column
            physical["region"] = region
        result["locations"] = [{"physicalLocation": physical}]
    elif finding.record is not None or finding.molecule is not None:
        result["locations"] = [
            {
                "logicalLocations": [
                    {"fullyQualifiedName": finding.location_text(), "kind": "object"}
                ]
            }
        ]
    result["partialFingerprints"] = {FINGERPRINT: _fingerprint(finding)}
    properties: dict[str, Any] = {"code": finding.code}
    if finding.doc_path:
        properties["documentPath"] = format_doc_path(finding.doc_path)
    if finding.hint:
        properties["hint"] = finding.hint
    result["properties"] = properties
    return result


def sarif_log(
    findings: Iterable[Finding] | FindingsReport,
    rules: RulesArg = None,
    *,
    base: str | os.PathLike[str] | None = None,
    tool_version: str = __version__,
) -> dict[str, Any]:
    """The SARIF log of ``findings`` as plain data.

    ``findings`` is a :class:`FindingsReport` (its rules are used) or any iterable of findings, with
    ``rules`` given as rule descriptions (only those with status ``run`` are listed) or, for callers that
    have no descriptions, a mapping ``rule id -> (summary, default severity)``. Rule ids found in the
    findings but not described are listed with a generic description. ``base`` is the directory
    relative URIs are computed from (default: the current directory).
    """
    if isinstance(findings, FindingsReport):
        rules = findings.rules if rules is None else rules
        tool_version = findings.tool_version
        items = list(findings.findings)
    else:
        items = list(findings)
    listed = _rule_list(items, rules)
    index = {r.id: i for i, r in enumerate(listed)}
    return {
        "$schema": SARIF_SCHEMA,
        "version": SARIF_VERSION,
        "runs": [
            {
                "tool": {
                    "driver": {
                        "name": "ffaudit",
                        "version": tool_version,
                        "rules": [_rule_object(r) for r in listed],
                    }
                },
                "columnKind": "unicodeCodePoints",
                "results": [_result(f, index[f.rule or f.code], base) for f in items],
            }
        ],
    }


def sarif_document(
    findings: Iterable[Finding] | FindingsReport,
    rules: RulesArg = None,
    *,
    base: str | os.PathLike[str] | None = None,
) -> dict[str, Any]:
    """The SARIF 2.1.0 document of ``findings`` described by ``rules`` (same as :func:`sarif_log`).

    The entry point for other commands (``compare``): pass the findings and either rule descriptions
    or a mapping ``rule id -> (summary, default severity)``; rules not described are listed from the
    findings. Raises nothing for valid findings; a ``rules`` value of another type is a ``TypeError``.
    """
    if rules is not None and not isinstance(rules, Mapping | Sequence):
        raise TypeError(f"rules must be rule descriptions or a mapping, not {type(rules).__name__}")
    return sarif_log(findings, rules, base=base)


def write_sarif(
    out: TextIO,
    findings: Iterable[Finding] | FindingsReport,
    rules: RulesArg = None,
    *,
    base: str | os.PathLike[str] | None = None,
) -> None:
    """Write the SARIF log of ``findings`` (see :func:`sarif_log`) to ``out``, indented, one final newline."""
    out.write(
        json.dumps(sarif_log(findings, rules, base=base), indent=2, ensure_ascii=False) + "\n"
    )
