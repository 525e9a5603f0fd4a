"""Two entries of one table are the same entry under tuple symmetry, or a class id is defined twice.

Tuples are canonical: ``[a, b]`` and ``[b, a]`` are the same bond, an angle equals its reverse about the
apex, a dihedral equals its reverse, an out-of-plane tuple keeps its centre and its outer three in any
order. Two entries with the same canonical tuple and the same ``order:``/``ring:`` qualifiers in one file
(``duplicate-entry``), or two classes with the same ``id`` in one file (``duplicate-class``), leave it to
chance which one is meant. Errors; the rule cannot be disabled. Across layered files a repeated key is an
intended override, not a duplicate.

Passing:

    bonds:
      - classes: [c4, h_c]
        k: 660.0
        r0: 1.09
      - classes: [c4, c4]
        k: 600.0
        r0: 1.53

Failing:

    bonds:
      - classes: [c4, h_c]
        k: 660.0
        r0: 1.09
      - classes: [h_c, c4]       # the same bond written the other way round
        k: 640.0
        r0: 1.10
"""

from __future__ import annotations

from collections.abc import Iterator, Mapping
from typing import Any

from ffaudit.findings import Finding, Severity
from ffaudit.lint.context import LintContext
from ffaudit.lint.loaded import load_findings_with

ID = "duplicate-entry"
SEVERITY = Severity.ERROR
FAMILY = "structure"
OPTIONS: dict[str, Any] = {}
NEEDS_REFERENCE = False
NEEDS_SET = False
LOAD_CODES = frozenset({"duplicate-entry", "duplicate-class"})


def check(ctx: LintContext, options: Mapping[str, Any]) -> Iterator[Finding]:
    """The loader's duplicate findings, at the second entry or class (the message names the first)."""
    yield from load_findings_with(ctx, LOAD_CODES)
