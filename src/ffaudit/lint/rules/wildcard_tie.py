"""Two wildcard entries of equal specificity match the same tuple, so sort order decides between them.

The wildcard tier takes the entry with the fewest ``*``; between two with as many, it takes the one
whose canonical tuple sorts first, which is deterministic but says nothing about which parameter fits.
``["*", c4, c4, o2]`` and ``[h_c, c4, c4, "*"]`` both match the dihedral h_c-c4-c4-o2 with one wildcard
each. The rule computes, for every pair of wildcard entries of a table with the same number of ``*``
and compatible qualifiers (``order:``/``ring:`` equal or absent on one side), the tuples both match, and
reports the pair unless an entry already covers exactly those tuples (the full tuple, or a pattern with
fewer wildcards). Out-of-plane tuples match whatever the order of their outer three. The finding is at
the later entry and names both lines and the entry the lookup takes.

Passing:

    dihedrals:
      - classes: ["*", c4, c4, o2]
        terms: [{periodicity: 3, phase: 0, k: 0.16}]
      - classes: [h_c, c4, c4, "*"]
        terms: [{periodicity: 3, phase: 0, k: 0.15}]
      - classes: [h_c, c4, c4, o2]          # decides the tuple both match
        terms: [{periodicity: 3, phase: 0, k: 0.17}]

Failing:

    dihedrals:
      - classes: ["*", c4, c4, o2]
        terms: [{periodicity: 3, phase: 0, k: 0.16}]
      - classes: [h_c, c4, c4, "*"]         # both match h_c-c4-c4-o2
        terms: [{periodicity: 3, phase: 0, k: 0.15}]
"""

from __future__ import annotations

from collections import Counter
from collections.abc import Iterator, Mapping, Sequence
from typing import Any

from ffaudit.findings import Finding, Severity
from ffaudit.lint.context import LintContext
from ffaudit.paramset.canonical import canonical_classes
from ffaudit.paramset.model import TABLE_NAMES, WILDCARD, Entry

ID = "wildcard-tie"
SEVERITY = Severity.WARNING
FAMILY = "structure"
OPTIONS: dict[str, Any] = {}
NEEDS_REFERENCE = False
NEEDS_SET = True

Pattern = tuple[str, ...]


def overlap(kind: str, first: Pattern, second: Pattern) -> list[Pattern]:
    """Canonical patterns whose matches are exactly the tuples both ``first`` and ``second`` match.

    Empty when no tuple matches both. Dihedrals are compared in both directions; out-of-plane patterns
    keep their centre and compare their outer three as multisets. Other kinds allow no wildcards, so two
    different tuples never overlap.
    """
    if kind == "dihedral":
        found: list[Pattern] = []
        for other in (second, second[::-1]):
            merged: list[str] = []
            for a, b in zip(first, other, strict=True):
                if a == WILDCARD:
                    merged.append(b)
                elif b == WILDCARD or a == b:
                    merged.append(a)
                else:
                    break
            else:
                canonical, _ = canonical_classes(kind, merged)
                if canonical not in found:
                    found.append(canonical)
        return found
    if kind == "out_of_plane":
        if first[0] != second[0] or WILDCARD in (first[0], second[0]):
            return []
        ours: Counter[str] = Counter(c for c in first[1:] if c != WILDCARD)
        theirs: Counter[str] = Counter(c for c in second[1:] if c != WILDCARD)
        union = ours | theirs
        size = sum(union.values())
        if size > 3:
            return []
        outer = sorted(union.elements()) + [WILDCARD] * (3 - size)
        canonical, _ = canonical_classes(kind, (first[0], *outer))
        return [canonical]
    return [first] if first == second else []


def _qualifiers(a: Entry, b: Entry) -> tuple[str | None, bool | None] | None:
    """The combined qualifiers of two entries, or None when no term can satisfy both."""
    if a.bond_order is not None and b.bond_order is not None and a.bond_order != b.bond_order:
        return None
    if a.in_ring is not None and b.in_ring is not None and a.in_ring != b.in_ring:
        return None
    order = a.bond_order if a.bond_order is not None else b.bond_order
    ring = a.in_ring if a.in_ring is not None else b.in_ring
    return order, ring


def _covered(
    table: Mapping[Any, Entry], pattern: Pattern, order: str | None, ring: bool | None
) -> bool:
    """True when an entry keyed by ``pattern`` applies to every term with these qualifiers."""
    for o in {order, None}:
        for r in {ring, None}:
            if (pattern, o, r) in table:
                return True
    return False


def _text(pattern: Sequence[str]) -> str:
    return "[" + ", ".join(pattern) + "]"


def _where(entry: Entry, ctx: LintContext) -> str:
    loc = entry.location
    return f"line {loc.line}" if loc.path == ctx.path else f"{loc.path}:{loc.line}"


def check(ctx: LintContext, options: Mapping[str, Any]) -> Iterator[Finding]:
    """One warning per pair of equally specific wildcard entries that overlap, at the later entry."""
    assert ctx.pset is not None
    file_order = {path: i for i, path in enumerate(ctx.pset.paths)}

    def position(entry: Entry) -> tuple[int, int, int]:
        loc = entry.location
        return (file_order.get(loc.path, len(file_order)), loc.line, loc.column)

    for kind in TABLE_NAMES:
        table = ctx.pset.entries(kind)
        groups: dict[int, list[Entry]] = {}
        for entry in table.values():
            if entry.wildcards:
                groups.setdefault(entry.wildcards, []).append(entry)
        for count, entries in sorted(groups.items()):
            entries.sort(key=position)
            for j, later in enumerate(entries):
                for earlier in entries[:j]:
                    if earlier.classes == later.classes:
                        continue  # same tuple, other qualifiers: decided by qualifier order
                    qualifiers = _qualifiers(earlier, later)
                    if qualifiers is None:
                        continue
                    for shared in overlap(kind, earlier.classes, later.classes):
                        if _covered(table, shared, *qualifiers):
                            continue
                        taken = min(earlier, later, key=lambda e: e.classes)
                        star = "wildcard" if count == 1 else "wildcards"
                        yield ctx.entry_finding(
                            ID,
                            later,
                            f"{kind} entries {_text(earlier.classes)} ({_where(earlier, ctx)}) and "
                            f"{_text(later.classes)} ({_where(later, ctx)}) both match "
                            f"{_text(shared)} with {count} {star} each; the lookup takes "
                            f"{_text(taken.classes)} only because its tuple sorts first",
                            "classes",
                            hint=f"add an entry for {_text(shared)} to decide, or make one of them "
                            "more specific",
                        )
