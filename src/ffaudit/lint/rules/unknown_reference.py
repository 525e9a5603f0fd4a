"""A name that refers to nothing: an undefined class in a tuple or a parent, or an undefined source key.

Tuples (``classes:``, ``class:``), ``equivalent:`` and ``before:`` must name classes defined in the set or
an earlier layer (``unknown-class``); ``parent:`` must name a defined class (``unknown-parent``);
``source:`` of a class or entry must be a key under ``sources:`` (``unknown-source``). A misspelt class
makes an entry unreachable and a misspelt source loses the citation, so all are errors; the rule cannot
be disabled.

Passing:

    sources:
      crc-2005: {citation: "CRC Handbook of Chemistry and Physics, 86th edition"}
    bonds:
      - classes: [c4, h_c]
        k: 660.0
        r0: 1.09
        source: crc-2005

Failing:

    sources:
      crc-2005: {citation: "CRC Handbook of Chemistry and Physics, 86th edition"}
    bonds:
      - classes: [c4, hc]           # no class hc
        k: 660.0
        r0: 1.09
        source: crc2005             # no source crc2005
"""

from __future__ import annotations

from collections.abc import Iterator, Mapping
from typing import Any

from ffaudit.findings import Finding, Severity
from ffaudit.lint.context import LintContext
from ffaudit.lint.loaded import load_findings_with

ID = "unknown-reference"
SEVERITY = Severity.ERROR
FAMILY = "structure"
OPTIONS: dict[str, Any] = {}
NEEDS_REFERENCE = False
NEEDS_SET = False
LOAD_CODES = frozenset({"unknown-class", "unknown-parent", "unknown-source"})


def check(ctx: LintContext, options: Mapping[str, Any]) -> Iterator[Finding]:
    """The loader's findings about names that refer to no class or source, at the name."""
    yield from load_findings_with(ctx, LOAD_CODES)
