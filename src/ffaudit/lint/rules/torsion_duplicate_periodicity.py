"""Two terms of one dihedral entry with the same periodicity.

Two terms k1 (1 + cos(n phi - p1)) + k2 (1 + cos(n phi - p2)) with the same n add up to a single term
of that n (with another amplitude and phase, plus a constant), so a repeated periodicity is either a
copy-and-paste slip or a term meant for another n. No tolerance: periodicities are integers.

Passing:

    dihedrals:
      - classes: ["*", c4, c4, "*"]
        terms:
          - {periodicity: 1, phase: 0, k: 0.2}
          - {periodicity: 3, phase: 0, k: 0.15}

Failing:

    dihedrals:
      - classes: ["*", c4, c4, "*"]
        terms:
          - {periodicity: 3, phase: 0, k: 0.2}
          - {periodicity: 3, phase: 0, k: 0.15}
"""

from __future__ import annotations

from collections.abc import Iterator, Mapping
from typing import Any

from ffaudit.findings import Finding, Severity
from ffaudit.lint.context import LintContext
from ffaudit.lint.locate import sub_finding

ID = "torsion-duplicate-periodicity"
SEVERITY = Severity.WARNING
FAMILY = "torsion"
OPTIONS: dict[str, Any] = {}
NEEDS_REFERENCE = False
NEEDS_SET = True


def check(ctx: LintContext, options: Mapping[str, Any]) -> Iterator[Finding]:
    """Yield a warning at each repeated term (the second and later of a periodicity)."""
    assert ctx.pset is not None
    for entry in ctx.pset.entries("dihedral").values():
        first: dict[int, int] = {}
        for j, term in enumerate(entry.fourier):
            if term.periodicity not in first:
                first[term.periodicity] = j
                continue
            yield sub_finding(
                ctx,
                ID,
                entry,
                ("terms", j, "periodicity"),
                f"dihedral {'-'.join(entry.classes)}: term {j + 1} repeats periodicity "
                f"{term.periodicity} of term {first[term.periodicity] + 1}",
                hint="merge the two terms, or correct the periodicity of one",
            )
