"""A mapping has the same key twice.

Plain YAML readers silently keep the last value of a repeated key, so a set that says ``k:`` twice means
different things to different programs; ffaudit's reader keeps the first and reports the second
(``duplicate-key``, naming both lines). Always an error; the rule cannot be disabled.

Passing:

    bonds:
      - classes: [c4, c4]
        k: 600.0
        r0: 1.53

Failing:

    bonds:
      - classes: [c4, c4]
        k: 600.0
        k: 650.0        # second k: which one is meant?
        r0: 1.53
"""

from __future__ import annotations

from collections.abc import Iterator, Mapping
from typing import Any

from ffaudit.findings import Finding, Severity
from ffaudit.lint.context import LintContext
from ffaudit.lint.loaded import load_findings_with

ID = "yaml-duplicate-key"
SEVERITY = Severity.ERROR
FAMILY = "structure"
OPTIONS: dict[str, Any] = {}
NEEDS_REFERENCE = False
NEEDS_SET = False
LOAD_CODES = frozenset({"duplicate-key"})


def check(ctx: LintContext, options: Mapping[str, Any]) -> Iterator[Finding]:
    """The loader's duplicate-key findings, at the repeated key."""
    yield from load_findings_with(ctx, LOAD_CODES)
