"""The file cannot be loaded: YAML, schema or semantic errors found by the loader.

Every problem the loader finds (YAML syntax, duplicate keys, unsafe tags, schema violations, unknown class or
source keys, parent cycles, invalid SMARTS, wildcards in the wrong place, entries duplicated under tuple
symmetry, missing conventions) is reported here with the loader's own code in the message, at its file line
and document path. All of them are errors: a set that does not load cannot be audited.

Passing:

    classes:
      - {id: c4, element: C, smarts: ["[CX4]"]}
    bonds:
      - {classes: [c4, c4], k: 600.0, r0: 1.53}

Failing:

    classes:
      - {id: c4, element: C, smarts: ["[CX4]"]}
    bonds:
      - {classes: [c4, n9], k: 600.0, r0: 1.53}
"""

from __future__ import annotations

from collections.abc import Iterator, Mapping
from typing import Any

from ffaudit.findings import Finding, Severity
from ffaudit.lint.context import LintContext

ID = "load-error"
SEVERITY = Severity.ERROR
FAMILY = "structure"
OPTIONS: dict[str, Any] = {}
NEEDS_REFERENCE = False
NEEDS_SET = False


def check(ctx: LintContext, options: Mapping[str, Any]) -> Iterator[Finding]:
    for finding in ctx.extra.get("load_findings", ()):
        yield finding.with_(
            message=f"[{finding.code}] {finding.message}", code=ID, rule=ID, cause=finding.code
        )
