"""Tier ``wildcard``: an entry with ``*`` at positions where the set allows them.

Allowed positions: the two ends of a dihedral, the three outer atoms of an out-of-plane tuple. The most
specific entry wins (fewest wildcards); among equally specific candidates the one with the smallest
canonical key wins, which is deterministic; such ties are reported by the lint command.
"""

from __future__ import annotations

import itertools
import weakref
from collections.abc import Iterator

from ffaudit.paramset.canonical import canonical_classes
from ffaudit.paramset.model import WILDCARD, WILDCARD_POSITIONS, Entry
from ffaudit.resolve.index import TableIndex
from ffaudit.terms import Term

_KEPT: dict[str, tuple[int, ...]] = {
    kind: tuple(i for i in range(4) if i not in positions)  # both kinds have four atoms
    for kind, positions in WILDCARD_POSITIONS.items()
}
"""The positions no wildcard pattern replaces."""

_CORES: weakref.WeakKeyDictionary[TableIndex, dict[str, frozenset[tuple[str, ...]]]] = (
    weakref.WeakKeyDictionary()
)


def wildcard_core(kind: str, classes: tuple[str, ...]) -> tuple[str, ...]:
    """The classes every wildcard pattern of ``classes`` keeps (the middle pair of a dihedral, the centre
    of an out-of-plane tuple), sorted: equal for a tuple and its canonical order, so a pattern can match an
    entry only if their cores are equal. Empty for kinds without wildcard positions."""
    return tuple(sorted(classes[i] for i in _KEPT.get(kind, ())))


def _cores(index: TableIndex) -> dict[str, frozenset[tuple[str, ...]]]:
    """The cores of each kind's entries with wildcards (made once per index)."""
    cores = _CORES.get(index)
    if cores is None:
        cores = {
            kind: frozenset(wildcard_core(kind, e.classes) for e in table.values() if e.wildcards)
            for kind, table in index.tables.items()
        }
        _CORES[index] = cores
    return cores


def wildcard_candidates(
    kind: str, classes: tuple[str, ...]
) -> Iterator[tuple[int, tuple[str, ...]]]:
    """Yield (number of wildcards, canonical tuple) for every wildcard pattern of ``classes``.

    Ordered by number of wildcards, then by tuple, without duplicates.
    """
    positions = WILDCARD_POSITIONS.get(kind, ())
    seen: set[tuple[str, ...]] = set()
    for count in range(1, len(positions) + 1):
        found: list[tuple[str, ...]] = []
        for chosen in itertools.combinations(positions, count):
            pattern = tuple(WILDCARD if i in chosen else c for i, c in enumerate(classes))
            canonical, _ = canonical_classes(kind, pattern)
            if canonical not in seen:
                seen.add(canonical)
                found.append(canonical)
        for canonical in sorted(found):
            yield count, canonical


def match_wildcard(index: TableIndex, term: Term) -> Entry | None:
    """Return the most specific wildcard entry matching the term, or None."""
    return match_wildcard_classes(index, term.kind, term.classes, term.bond_order, term.in_ring)


def match_wildcard_classes(
    index: TableIndex,
    kind: str,
    classes: tuple[str, ...],
    bond_order: str | None,
    in_ring: bool | None,
) -> Entry | None:
    """The most specific entry with wildcards matching ``classes`` (any order), or None; a tuple whose
    core (:func:`wildcard_core`) no such entry has is answered at once."""
    cores = _cores(index).get(kind)
    if not cores or wildcard_core(kind, classes) not in cores:
        return None  # no entry with wildcards keeps these classes
    for _, candidate in wildcard_candidates(kind, classes):
        entry = index.get(kind, candidate, bond_order, in_ring)
        if entry is not None:
            return entry
    return None
