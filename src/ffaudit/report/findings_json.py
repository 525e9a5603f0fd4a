"""``--format json`` for findings (``ffaudit lint``; usable by any command that yields findings).

One document, described by ``schemas/lint-report.schema.json``::

    {"format": "ffaudit-findings", "format_version": 1, "command": "lint",
     "tool": {"name": "ffaudit", "version": "..."}, "sources": [...], "parameter_sets": [...],
     "reference": {...} | null, "strict": false, "result": "pass" | "fail",
     "summary": {"findings": N, "error": n, "warning": n, "info": n, "worst": "error" | ... | null},
     "rules": [{"id", "family", "severity", "status", "reason", "summary"}, ...],
     "notes": [...], "findings": [{...}, ...]}

Each finding is :meth:`ffaudit.findings.Finding.to_dict` (``code``, ``severity``, ``message``, ``rule``,
``path``, ``line``, ``column``, ``doc_path``, ``hint``, ...; absent fields are left out), in the order
given. Written with two-space indentation and sorted rule lists, no timestamps: the same run gives the
same bytes.
"""

from __future__ import annotations

import json
from typing import Any, TextIO

from ffaudit.report.findings_report import FindingsReport

FORMAT_NAME = "ffaudit-findings"
FORMAT_VERSION = 1
"""Increased when a change would break a reader of the previous version."""
SCHEMA_NAME = "lint-report"


def findings_document(report: FindingsReport) -> dict[str, Any]:
    """The JSON document of ``report`` as plain data."""
    counts = report.counts()
    worst = report.worst
    return {
        "format": FORMAT_NAME,
        "format_version": FORMAT_VERSION,
        "command": report.command,
        "tool": {"name": "ffaudit", "version": report.tool_version},
        "sources": list(report.sources),
        "parameter_sets": [dict(p) for p in report.parameter_sets],
        "reference": dict(report.reference) if report.reference is not None else None,
        "strict": report.strict,
        "result": "fail" if report.failed else "pass",
        "summary": {
            "findings": len(report.findings),
            **counts,
            "worst": worst.label if worst is not None else None,
        },
        "rules": [
            {
                "id": r.id,
                "family": r.family,
                "severity": r.severity.label,
                "status": r.status,
                "reason": r.reason,
                "summary": r.summary,
            }
            for r in report.rules
        ],
        "notes": list(report.notes),
        "findings": [f.to_dict() for f in report.findings],
    }


def write_findings_json(out: TextIO, report: FindingsReport) -> None:
    """Write the JSON document of ``report`` to ``out``.

    Raises ``TypeError`` / ``ValueError`` (from :func:`json.dumps`) only if a finding carries a value
    that is not plain JSON, which findings built by ffaudit never do.
    """
    out.write(json.dumps(findings_document(report), indent=2, ensure_ascii=False) + "\n")
