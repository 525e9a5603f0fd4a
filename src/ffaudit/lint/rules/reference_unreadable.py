"""A record of the reference library cannot be read, so the rules that use the library miss it.

Needs a reference library (``--reference``). A record that does not parse or sanitise (or that the audit
cannot process) is reported at its file and line with the reader's reason, as a warning: the rules
that need the library (``unused-class``, ``unused-entry``, ``shadowed-class``) then judge the set
without that molecule. The examples are lines of a SMILES reference file, not of the set.

Passing:

    CCO ethanol
    c1ccccc1 benzene

Failing:

    CCO ethanol
    C1CC ring-never-closed
"""

from __future__ import annotations

from collections.abc import Iterator, Mapping
from typing import Any

from ffaudit.findings import Finding, Severity
from ffaudit.lint.context import LintContext

ID = "reference-unreadable"
SEVERITY = Severity.WARNING
FAMILY = "structure"
OPTIONS: dict[str, Any] = {}
NEEDS_REFERENCE = True
NEEDS_SET = True
EXAMPLE_LANGUAGE = "text"


def check(ctx: LintContext, options: Mapping[str, Any]) -> Iterator[Finding]:
    """One warning per unreadable reference record, at the record's first line."""
    assert ctx.reference is not None
    for audit in ctx.reference:
        if audit.status != "unreadable":
            continue
        record = audit.record
        name = f" ({record.name})" if record.name else ""
        yield Finding(
            code=ID,
            severity=SEVERITY,
            message=f"reference record {record.record}{name} cannot be read: {audit.reason}",
            path=record.path,
            line=record.line,
            column=1,
            molecule=record.name or None,
            record=record.record,
            rule=ID,
            hint="fix or remove the record; the reference-library rules ignore it",
        )
