"""Dihedral about an sp3-sp3 single bond without a threefold term.

About a single bond between two sp3 atoms (ethane-like: three staggered minima per turn) torsion
parameters carry an n = 3 term in common practice; an entry for such a bond with only other
periodicities usually means a term was lost or the central classes are not what was meant. The central
classes' hybridisation is their ``hybridisation:`` descriptor, else inferred from small probe molecules;
entries with a wildcard or unknown hybridisation in the centre, or a central ``order:`` other than
single, are not checked. Reported as information: this is common practice, not physics, and fits to
special cases (e.g. a gauche effect) may legitimately use n = 1 and 2 only. No tolerance.

Passing:

    dihedrals:
      - classes: ["*", c4, c4, "*"]
        terms: [{periodicity: 3, phase: 0, k: 0.15}]

Failing:

    dihedrals:
      - classes: ["*", c4, c4, "*"]
        terms: [{periodicity: 2, phase: 180, k: 0.15}]
"""

from __future__ import annotations

from collections.abc import Iterator, Mapping
from typing import Any

from ffaudit.findings import Finding, Severity
from ffaudit.lint.classinfo import context_info
from ffaudit.lint.context import LintContext

ID = "torsion-sp3-threefold"
SEVERITY = Severity.INFO
FAMILY = "torsion"
OPTIONS: dict[str, Any] = {}
NEEDS_REFERENCE = False
NEEDS_SET = True


def check(ctx: LintContext, options: Mapping[str, Any]) -> Iterator[Finding]:
    """Yield an info finding per sp3-sp3 single-bond dihedral entry with no n = 3 term."""
    assert ctx.pset is not None
    info = context_info(ctx)
    for entry in ctx.pset.entries("dihedral").values():
        b, c = entry.classes[1], entry.classes[2]
        if entry.bond_order not in (None, "single"):
            continue
        if info.hybridisation(b) != "sp3" or info.hybridisation(c) != "sp3":
            continue
        if any(t.periodicity == 3 for t in entry.fourier):
            continue
        present = ", ".join(str(t.periodicity) for t in entry.fourier) or "none"
        yield ctx.entry_finding(
            ID,
            entry,
            f"dihedral {'-'.join(entry.classes)} is about an sp3-sp3 single bond ({b}-{c}) but has no "
            f"threefold (n = 3) term (periodicities: {present}); common practice gives such bonds one",
            "terms",
            severity=Severity.INFO,
            hint="add a {periodicity: 3, phase: 0} term, or check the central classes",
        )
