"""An entry that no molecule of the reference library uses.

Needs a reference library (``--reference``). Every term of every reference molecule is resolved with
the set; an entry that resolves none of them (exactly, through a wildcard or through a parent class) is
not exercised by the library, so a change to it would go unnoticed by ``ffaudit compare`` on that
library. Information only: sets carry entries for chemistry beyond any one library. The message says
when the entry served as the donor of analogy estimates. Nothing is reported when the library has no
readable molecule.

Passing:

    # reference library (SMILES): CC
    bonds:
      - classes: [c4, c4]
        k: 600.0
        r0: 1.53
      - classes: [c4, h_c]
        k: 660.0
        r0: 1.09

Failing:

    # reference library (SMILES): CC
    bonds:
      - classes: [c4, c4]
        k: 600.0
        r0: 1.53
      - classes: [c4, h_c]
        k: 660.0
        r0: 1.09
      - classes: [c4, o2]        # ethane has no C-O bond
        k: 700.0
        r0: 1.43
"""

from __future__ import annotations

from collections import Counter
from collections.abc import Iterator, Mapping
from typing import Any

from ffaudit.findings import Finding, Severity
from ffaudit.lint.context import LintContext
from ffaudit.paramset.model import KINDS
from ffaudit.score import RESOLVED_FROM_SET

ID = "unused-entry"
SEVERITY = Severity.INFO
FAMILY = "structure"
OPTIONS: dict[str, Any] = {}
NEEDS_REFERENCE = True
NEEDS_SET = True


def check(ctx: LintContext, options: Mapping[str, Any]) -> Iterator[Finding]:
    """One info finding per entry that resolves no term of the reference library."""
    assert ctx.pset is not None and ctx.reference is not None
    used: set[tuple[str, Any]] = set()
    donors: Counter[tuple[str, Any]] = Counter()
    readable = 0
    for audit in ctx.reference:
        if audit.status == "unreadable":
            continue
        readable += 1
        for r in audit.resolutions:
            if r.entry is None:
                continue
            key = (r.entry.kind, r.entry.key)
            if r.tier in RESOLVED_FROM_SET:
                used.add(key)
            elif r.tier == "analogy":
                donors[key] += 1
    if readable == 0:
        return
    noun = "molecule" if readable == 1 else "molecules"
    for kind in KINDS:
        for table_key, entry in ctx.pset.entries(kind).items():
            if (kind, table_key) in used:
                continue
            text = ", ".join(entry.classes)
            message = f"{kind} [{text}] is used by no molecule of the reference library ({readable} {noun})"
            if donors[(kind, table_key)]:
                message += (
                    f"; it was the analogy donor of {donors[(kind, table_key)]} estimated terms"
                )
            yield ctx.entry_finding(
                ID,
                entry,
                message,
                hint="add a molecule that needs it to the reference library, or remove the entry",
            )
