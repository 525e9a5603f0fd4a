"""A class rule's SMARTS cannot be parsed, or cannot match an atom of the class's element.

Every pattern must parse with RDKit (``invalid-smarts``, quoting RDKit's reason); the first atom of each
pattern is the classified atom, so it must be able to be the declared ``element:``
(``smarts-element``: ``[OX2]`` on a carbon class can never assign it), and ``element:`` must be an
element symbol (``unknown-element``). Patterns whose first atom is a negation or a recursive SMARTS are
not checked for the element. All are errors; the rule cannot be disabled.

Passing:

    classes:
      - {id: c4, element: C, smarts: ["[CX4]"]}

Failing:

    classes:
      - {id: c4, element: C, smarts: ["[CX4"]}      # bracket never closed
      - {id: o2, element: C, smarts: ["[OX2]"]}     # an oxygen pattern on a carbon class
"""

from __future__ import annotations

from collections.abc import Iterator, Mapping
from typing import Any

from ffaudit.findings import Finding, Severity
from ffaudit.lint.context import LintContext
from ffaudit.lint.loaded import load_findings_with

ID = "invalid-smarts"
SEVERITY = Severity.ERROR
FAMILY = "structure"
OPTIONS: dict[str, Any] = {}
NEEDS_REFERENCE = False
NEEDS_SET = False
LOAD_CODES = frozenset({"invalid-smarts", "smarts-element", "unknown-element"})


def check(ctx: LintContext, options: Mapping[str, Any]) -> Iterator[Finding]:
    """The loader's SMARTS and element findings, at the pattern or ``element:``."""
    yield from load_findings_with(ctx, LOAD_CODES)
