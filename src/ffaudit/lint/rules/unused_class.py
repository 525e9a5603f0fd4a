"""A class is never assigned on the reference library: no atom there has its environment.

Needs a reference library (``--reference``): the molecules a set is meant to cover, audited with the
set. A class none of whose patterns matches any atom of the library is either dead weight or, more
often, a sign that the library lacks a molecule with that environment, so nothing checks the class's
parameters; the message says when the class is the parent of others (their lookups may still fall back
to it). Classes whose patterns do match but whose atoms are all taken by earlier rules are reported by
``shadowed-class`` instead. Nothing is reported when the library has no readable molecule.
Info, like ``unused-entry``: what a class lacks is a molecule in the library, not a fix in the set, so it
does not fail ``--strict``.

Passing:

    # reference library (SMILES): CCO
    classes:
      - {id: h_c, element: H, smarts: ["[#1][#6]"]}
      - {id: h_o, element: H, smarts: ["[#1][#8]"]}
      - {id: c4, element: C, smarts: ["[CX4]"]}
      - {id: o2, element: O, smarts: ["[OX2]"]}

Failing:

    # reference library (SMILES): CCO
    classes:
      - {id: h_c, element: H, smarts: ["[#1][#6]"]}
      - {id: h_o, element: H, smarts: ["[#1][#8]"]}
      - {id: c4, element: C, smarts: ["[CX4]"]}
      - {id: o2, element: O, smarts: ["[OX2]"]}
      - {id: n3, element: N, smarts: ["[NX3]"]}     # ethanol has no nitrogen
"""

from __future__ import annotations

from collections.abc import Iterator, Mapping
from typing import Any

from ffaudit.findings import Finding, Severity
from ffaudit.lint.classloc import class_finding
from ffaudit.lint.context import LintContext
from ffaudit.lint.refmatch import reference_stats

ID = "unused-class"
SEVERITY = Severity.INFO
FAMILY = "structure"
OPTIONS: dict[str, Any] = {}
NEEDS_REFERENCE = True
NEEDS_SET = True


def check(ctx: LintContext, options: Mapping[str, Any]) -> Iterator[Finding]:
    """One info finding per class that no atom of the reference library matches."""
    assert ctx.pset is not None
    stats = reference_stats(ctx)
    if stats.molecules == 0:
        return
    children: dict[str, list[str]] = {}
    for cls in ctx.pset.classes:
        if cls.parent is not None:
            children.setdefault(cls.parent, []).append(cls.id)
    noun = "molecule" if stats.molecules == 1 else "molecules"
    for cls in ctx.pset.classes:
        if stats.assigned.get(cls.id, 0) or stats.class_matched(cls.id):
            continue
        message = (
            f"class {cls.id!r} ({cls.element}) is never assigned on the reference library "
            f"({stats.molecules} {noun}): no atom there matches its patterns"
        )
        kids = children.get(cls.id)
        if kids:
            message += f"; it is the parent of {', '.join(kids)}, whose lookups may still use it"
        yield class_finding(
            ctx,
            ID,
            cls,
            message,
            hint="add a molecule with this environment to the reference library, or remove the class "
            "if nothing needs it",
        )
