"""Dihedral term periodicity that is not an integer from 1 to 6.

A Fourier torsion term k (1 + cos(n phi - phase)) is periodic in 360 degrees only for integer n, and
n = 1..6 covers every symmetry of a bond between atoms of up to six neighbours; larger n are noise in
a fit. No tolerance: the bound is exact. (The schema may already refuse such values; this rule still
checks, so a set loaded by a laxer schema or built in code is covered.)

Passing:

    dihedrals:
      - classes: ["*", c4, c4, "*"]
        terms: [{periodicity: 3, phase: 0, k: 0.15}]

Failing:

    dihedrals:
      - classes: ["*", c4, c4, "*"]
        terms: [{periodicity: 7, phase: 0, k: 0.15}]
"""

from __future__ import annotations

from collections.abc import Iterator, Mapping
from typing import Any

from ffaudit.findings import Finding, Severity
from ffaudit.lint.context import LintContext
from ffaudit.lint.locate import sub_finding

ID = "torsion-periodicity"
SEVERITY = Severity.ERROR
FAMILY = "torsion"
OPTIONS: dict[str, Any] = {}
NEEDS_REFERENCE = False
NEEDS_SET = True


def check(ctx: LintContext, options: Mapping[str, Any]) -> Iterator[Finding]:
    """Yield an error per dihedral term whose periodicity is not an integer in 1..6."""
    assert ctx.pset is not None
    for entry in ctx.pset.entries("dihedral").values():
        for j, term in enumerate(entry.fourier):
            n = term.periodicity
            if isinstance(n, int) and not isinstance(n, bool) and 1 <= n <= 6:
                continue
            yield sub_finding(
                ctx,
                ID,
                entry,
                ("terms", j, "periodicity"),
                f"dihedral {'-'.join(entry.classes)} term {j + 1}: periodicity {n!r} is not an integer "
                f"from 1 to 6",
                severity=Severity.ERROR,
                hint="use a whole number of minima per turn, 1 to 6",
            )
