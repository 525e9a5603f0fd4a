"""Parent links form a cycle.

A parent is the more general class a lookup falls back to; following ``parent:`` from a class must end at
a class without one. A loop (``a -> b -> a``) would make the parent tier go round forever and says the
hierarchy is wrong, so it is an error (``parent-cycle``, reported once per loop at the class that closes
it); the rule cannot be disabled.

Passing:

    classes:
      - {id: c4, element: C, smarts: ["[CX4]"], parent: c}
      - {id: c, element: C, smarts: ["[#6]"]}

Failing:

    classes:
      - {id: c4, element: C, smarts: ["[CX4]"], parent: c}
      - {id: c, element: C, smarts: ["[#6]"], parent: c4}
"""

from __future__ import annotations

from collections.abc import Iterator, Mapping
from typing import Any

from ffaudit.findings import Finding, Severity
from ffaudit.lint.context import LintContext
from ffaudit.lint.loaded import load_findings_with

ID = "parent-cycle"
SEVERITY = Severity.ERROR
FAMILY = "structure"
OPTIONS: dict[str, Any] = {}
NEEDS_REFERENCE = False
NEEDS_SET = False
LOAD_CODES = frozenset({"parent-cycle"})


def check(ctx: LintContext, options: Mapping[str, Any]) -> Iterator[Finding]:
    """The loader's parent-cycle findings, at the ``parent:`` that closes each loop."""
    yield from load_findings_with(ctx, LOAD_CODES)
