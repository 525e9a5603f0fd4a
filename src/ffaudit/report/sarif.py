"""SARIF 2.1.0 for findings located in parameter files (lint and compare). Deterministic: no timestamps."""

from __future__ import annotations

import json
from collections.abc import Iterable, Mapping
from typing import Any, TextIO

from ffaudit import __version__
from ffaudit.findings import Finding, Severity

SARIF_SCHEMA = "https://json.schemastore.org/sarif-2.1.0.json"
_LEVEL = {Severity.ERROR: "error", Severity.WARNING: "warning", Severity.INFO: "note"}


def sarif_document(
    findings: Iterable[Finding], rules: Mapping[str, tuple[str, Severity]] | None = None
) -> dict[str, Any]:
    """One SARIF log with one run. ``rules`` maps rule id -> (summary, default severity)."""
    items = list(findings)
    rule_meta = dict(rules or {})
    for f in items:
        rule_meta.setdefault(f.rule or f.code, (f.code, f.severity))
    ids = sorted(rule_meta)
    results = []
    for f in items:
        rid = f.rule or f.code
        result: dict[str, Any] = {
            "ruleId": rid,
            "ruleIndex": ids.index(rid),
            "level": _LEVEL[f.severity],
            "message": {"text": f.message + (f" (hint: {f.hint})" if f.hint else "")},
        }
        if f.path:
            region: dict[str, Any] = {}
            if f.line:
                region["startLine"] = f.line
                if f.column:
                    region["startColumn"] = f.column
            location: dict[str, Any] = {"artifactLocation": {"uri": f.path}}
            if region:
                location["region"] = region
            result["locations"] = [{"physicalLocation": location}]
        results.append(result)
    return {
        "$schema": SARIF_SCHEMA,
        "version": "2.1.0",
        "runs": [
            {
                "tool": {
                    "driver": {
                        "name": "ffaudit",
                        "version": __version__,
                        "informationUri": "https://example.invalid/ffaudit",
                        "rules": [
                            {
                                "id": rid,
                                "shortDescription": {"text": rule_meta[rid][0]},
                                "defaultConfiguration": {"level": _LEVEL[rule_meta[rid][1]]},
                            }
                            for rid in ids
                        ],
                    }
                },
                "results": results,
            }
        ],
    }


def write_sarif(
    out: TextIO,
    findings: Iterable[Finding],
    rules: Mapping[str, tuple[str, Severity]] | None = None,
) -> None:
    json.dump(sarif_document(findings, rules), out, indent=2, ensure_ascii=False)
    out.write("\n")
