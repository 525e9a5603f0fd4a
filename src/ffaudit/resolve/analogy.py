"""Tier ``analogy``: copy the value of the most similar parameterised tuple of the same term kind.

Similarity between two classes is a cost (0 = the same class), in this order of importance:

1. the element must be the same (no cross-element analogies: the cost is infinite);
2. classes the set declares ``equivalent`` cost :attr:`AnalogyWeights.equivalent` and nothing else;
3. otherwise a base cost, plus a penalty when the declared hybridisation differs (or is unknown on either
   side), when aromaticity differs, when formal charge differs; classes sharing an ancestor in the parent
   chains (siblings: the same neighbour pattern family) get a small discount.

A tuple's cost is the sum over its positions (the donor may be read in either canonical orientation; a donor
``*`` matches any class at no cost). The donor with the lowest cost wins, ties broken by the donor's key, and
only donors whose qualifiers are compatible with the term (same or unqualified) are considered. Donors costing
more than :attr:`AnalogyWeights.max_cost` are not used. The result names the donor and every substitution.
"""

from __future__ import annotations

from dataclasses import dataclass

from ffaudit.paramset.model import WILDCARD, Entry, EnvClass
from ffaudit.resolve.index import TableIndex
from ffaudit.terms import Term


@dataclass(frozen=True)
class AnalogyWeights:
    base: float = 0.2
    equivalent: float = 0.05
    hybridisation: float = 0.5
    unknown_hybridisation: float = 0.25
    aromatic: float = 0.3
    charge: float = 0.3
    sibling_discount: float = 0.1
    max_cost: float = 1.5


DEFAULT_WEIGHTS = AnalogyWeights()


_Donor = tuple[int, Entry, tuple[str, ...]]
"""(position in the table's order of orientations, entry, the entry's classes in this orientation)."""


@dataclass(frozen=True)
class AnalogyMatch:
    entry: Entry
    cost: float
    substitutions: tuple[tuple[int, str, str], ...]


def class_cost(
    a: EnvClass, b: EnvClass, index: TableIndex, w: AnalogyWeights = DEFAULT_WEIGHTS
) -> float | None:
    """Cost of using class ``b`` in place of ``a``; None when not allowed (different elements)."""
    if a.id == b.id:
        return 0.0
    if a.element != b.element:
        return None
    if b.id in a.equivalent or a.id in b.equivalent:
        return w.equivalent
    cost = w.base
    if a.hybridisation is None or b.hybridisation is None:
        cost += w.unknown_hybridisation
    elif a.hybridisation != b.hybridisation:
        cost += w.hybridisation
    if (a.aromatic or False) != (b.aromatic or False):
        cost += w.aromatic
    if (a.charge or 0) != (b.charge or 0):
        cost += w.charge
    ancestors_a = set(index.parents.get(a.id, ())) | {a.id}
    ancestors_b = set(index.parents.get(b.id, ())) | {b.id}
    if ancestors_a & ancestors_b:
        cost -= w.sibling_discount
    return round(cost, 6)


class AnalogyFinder:
    """Finds analogy donors for one set; class costs are cached."""

    def __init__(self, index: TableIndex, weights: AnalogyWeights = DEFAULT_WEIGHTS) -> None:
        self.index = index
        self.weights = weights
        self.classes = index.pset.class_index
        self._cost: dict[tuple[str, str], float | None] = {}
        self._donors: dict[str, dict[tuple[str, ...], list[_Donor]]] = {}
        self._candidates: dict[tuple[str, tuple[str, ...]], list[_Donor]] = {}

    def _class_cost(self, a: str, b: str) -> float | None:
        key = (a, b)
        if key not in self._cost:
            ca, cb = self.classes.get(a), self.classes.get(b)
            self._cost[key] = (
                None if ca is None or cb is None else class_cost(ca, cb, self.index, self.weights)
            )
        return self._cost[key]

    def find(self, term: Term) -> AnalogyMatch | None:
        """The cheapest compatible donor for ``term``, or None.

        Only donor orientations whose elements agree with the term's at every position (or that have ``*``
        there) are scored: any other costs infinity (:func:`class_cost`). They are looked up by element
        pattern and scored in the table's order, so ties go as they would over the whole table.
        """
        wanted = tuple(self._element_key(c) for c in term.classes)
        found = self._candidates.get((term.kind, wanted))
        if found is None:
            found = self._candidates[term.kind, wanted] = self._compatible(term.kind, wanted)
        best: tuple[float, tuple[str, ...], AnalogyMatch] | None = None
        for _, entry, orientation in found:
            if entry.bond_order not in (None, term.bond_order) or entry.in_ring not in (
                None,
                term.in_ring,
            ):
                continue
            match = self._score(term, entry, orientation)
            if match is None:
                continue
            rank = (match.cost, entry.classes)
            if best is None or rank < best[:2]:
                best = (match.cost, entry.classes, match)
        return None if best is None else best[2]

    def _compatible(self, kind: str, wanted: tuple[str, ...]) -> list[_Donor]:
        """The donor orientations of ``kind`` whose element pattern agrees with ``wanted`` (the term's
        elements) at every position or has ``*`` there, in table order (kept per kind and elements: many
        terms share them)."""
        by_pattern = self._donors.get(kind)
        if by_pattern is None:
            by_pattern = self._donors[kind] = self._index_donors(kind)
        patterns = {
            tuple(WILDCARD if mask >> i & 1 else key for i, key in enumerate(wanted))
            for mask in range(1 << len(wanted))
        }
        found: list[_Donor] = []
        for pattern in patterns:
            found += by_pattern.get(pattern, ())
        found.sort(key=lambda donor: donor[0])
        return found

    def _element_key(self, class_id: str) -> str:
        """The element of ``class_id``; for a class the set does not declare, a key only the same id has
        (such a class costs nothing against itself and cannot stand in for any other)."""
        if class_id == WILDCARD:
            return WILDCARD
        declared = self.classes.get(class_id)
        return declared.element if declared is not None else "\0" + class_id

    def _index_donors(self, kind: str) -> dict[tuple[str, ...], list[_Donor]]:
        """Every orientation of every entry of ``kind``, numbered in table order, by element pattern."""
        by_pattern: dict[tuple[str, ...], list[_Donor]] = {}
        number = 0
        for entry in (self.index.tables.get(kind) or {}).values():
            for orientation in _orientations(kind, entry.classes):
                pattern = tuple(self._element_key(c) for c in orientation)
                by_pattern.setdefault(pattern, []).append((number, entry, orientation))
                number += 1
        return by_pattern

    def _score(self, term: Term, entry: Entry, donor: tuple[str, ...]) -> AnalogyMatch | None:
        if len(donor) != len(term.classes):
            return None
        total = 0.0
        subs: list[tuple[int, str, str]] = []
        for i, (want, have) in enumerate(zip(term.classes, donor, strict=True)):
            if have == WILDCARD or want == have:
                continue
            cost = self._class_cost(want, have)
            if cost is None:
                return None
            total += cost
            subs.append((i, want, have))
            if total > self.weights.max_cost:
                return None
        if not subs:
            return None  # an exact or wildcard match: earlier tiers handle those
        return AnalogyMatch(entry, round(total, 6), tuple(subs))


def _orientations(kind: str, classes: tuple[str, ...]) -> tuple[tuple[str, ...], ...]:
    # Charge increments and stretch-bends are not symmetric under reversal (sign, k_ab/k_cb): a donor is
    # only read forwards so its values can be copied as they are.
    if kind in ("bond", "angle", "dihedral"):
        rev = classes[::-1]
        return (classes,) if rev == classes else (classes, rev)
    if kind == "out_of_plane":
        import itertools

        outer = sorted(set(itertools.permutations(classes[1:])))
        return tuple((classes[0],) + p for p in outer)
    return (classes,)
