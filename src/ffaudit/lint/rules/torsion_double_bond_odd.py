"""Dihedral about a double bond with odd periodicities only.

Rotating a double bond by 180 degrees swaps cis and trans substituents around a planar centre; the
torsion energy about it must have minima at 0 and 180 degrees, which a Fourier series with only odd
periodicities (n = 1, 3, 5) cannot give: it prefers one of the two and has a maximum at the other planar
arrangement, or makes the twisted form a minimum. Even terms (n = 2) carry the barrier of a double bond.

Which entries are about a double bond: every entry whose central ``order:`` is ``double``, and every
entry that the reference library's dihedral terms resolved to when the central bond was double in
every one of those terms (RDKit's bond orders of the reference molecules; terms resolved by the exact,
wildcard or parent tiers count, analogy borrows an entry for other classes and does not). Entries resolved by no
reference term are judged by their qualifier only. Mixed series (an even term plus an n = 1 term to
tell cis from trans) pass; option ``any_odd: true`` flags those too. No tolerance.

Passing:

    dihedrals:
      - classes: ["*", c3, c3, "*"]
        order: double
        terms: [{periodicity: 2, phase: 180, k: 4.9}]

Failing:

    dihedrals:
      - classes: ["*", c3, c3, "*"]
        order: double
        terms: [{periodicity: 3, phase: 0, k: 4.9}]
"""

from __future__ import annotations

from collections.abc import Iterator, Mapping
from typing import Any

from ffaudit.findings import Finding, Severity
from ffaudit.lint.context import LintContext
from ffaudit.paramset.model import Entry, SourceLocation, TableKey

ID = "torsion-double-bond-odd"
SEVERITY = Severity.WARNING
FAMILY = "torsion"
OPTIONS: dict[str, Any] = {"any_odd": False}
NEEDS_REFERENCE = True
NEEDS_SET = True

_EntryId = tuple[TableKey, SourceLocation]

MATCHING_TIERS = frozenset({"exact", "wildcard", "parent"})
"""Tiers where the entry matched the term's own classes (analogy borrows an entry for another tuple)."""


def _entry_id(entry: Entry) -> _EntryId:
    return (entry.key, entry.location)


def central_orders(ctx: LintContext) -> dict[_EntryId, set[str | None]]:
    """Per dihedral entry (key, location): the central bond orders of the reference terms resolved by it."""
    seen: dict[_EntryId, set[str | None]] = {}
    for audit in ctx.reference or ():
        for resolution in audit.resolutions:
            entry = resolution.entry
            if resolution.term.kind != "dihedral" or entry is None or entry.kind != "dihedral":
                continue
            if resolution.tier not in MATCHING_TIERS:
                continue
            seen.setdefault(_entry_id(entry), set()).add(resolution.term.bond_order)
    return seen


def check(ctx: LintContext, options: Mapping[str, Any]) -> Iterator[Finding]:
    """Yield a warning per double-bond dihedral entry whose terms are all odd (or any odd, by option)."""
    assert ctx.pset is not None
    any_odd = bool(options.get("any_odd", OPTIONS["any_odd"]))
    orders = central_orders(ctx)
    for entry in ctx.pset.entries("dihedral").values():
        used = orders.get(_entry_id(entry), set())
        by_reference = bool(used) and used == {"double"}
        if entry.bond_order != "double" and not by_reference:
            continue
        odd = [t.periodicity for t in entry.fourier if t.periodicity % 2 == 1]
        if not odd or (not any_odd and len(odd) < len(entry.fourier)):
            continue
        why = (
            "its order qualifier is double"
            if entry.bond_order == "double"
            else "the central bond is double in every reference term it resolved"
        )
        yield ctx.entry_finding(
            ID,
            entry,
            f"dihedral {'-'.join(entry.classes)} is about a double bond ({why}) but has odd "
            f"periodicities ({', '.join(map(str, odd))})"
            + ("" if len(odd) < len(entry.fourier) else " only")
            + ": a double-bond torsion must be periodic in 180 degrees",
            "terms",
            hint="use an even periodicity (n = 2, phase 180) for the double-bond barrier",
        )
