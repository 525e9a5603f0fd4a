"""The lookup index: every table of a set keyed by canonical tuple and qualifiers, built once per set."""

from __future__ import annotations

from collections.abc import Iterator, Mapping

from ffaudit.paramset.canonical import canonical_classes
from ffaudit.paramset.model import Entry, ParameterSet, TableKey


def qualifier_variants(
    bond_order: str | None, in_ring: bool | None
) -> Iterator[tuple[str | None, bool | None]]:
    """Qualifier combinations to try, most specific first: (order, ring), (order, any), (any, ring), any."""
    seen: set[tuple[str | None, bool | None]] = set()
    for variant in ((bond_order, in_ring), (bond_order, None), (None, in_ring), (None, None)):
        if variant not in seen:
            seen.add(variant)
            yield variant


class TableIndex:
    """Read-only view of a set's tables for the resolution tiers."""

    def __init__(self, pset: ParameterSet) -> None:
        self.pset = pset
        self.tables: Mapping[str, Mapping[TableKey, Entry]] = pset.tables
        self.parents: dict[str, tuple[str, ...]] = {
            c.id: pset.parent_chain(c.id) for c in pset.classes
        }
        # the class tuples of each table, qualifiers left out: most tuples the tiers ask about are absent,
        # and one set look-up tells so instead of one per qualifier combination
        self._tuples: dict[str, frozenset[tuple[str, ...]]] = {
            kind: frozenset(classes for classes, _, _ in table)
            for kind, table in self.tables.items()
        }

    def get(
        self, kind: str, classes: tuple[str, ...], bond_order: str | None, in_ring: bool | None
    ) -> Entry | None:
        """The entry for an already-canonical tuple, trying qualifiers from most to least specific."""
        tuples = self._tuples.get(kind)
        if tuples is None or classes not in tuples:
            return None
        table = self.tables[kind]
        for order, ring in qualifier_variants(bond_order, in_ring):
            entry = table.get((classes, order, ring))
            if entry is not None:
                return entry
        return None

    def get_any_order(
        self, kind: str, classes: tuple[str, ...], bond_order: str | None, in_ring: bool | None
    ) -> Entry | None:
        canonical, _ = canonical_classes(kind, classes)
        return self.get(kind, canonical, bond_order, in_ring)
