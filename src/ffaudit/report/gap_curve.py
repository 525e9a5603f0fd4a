"""The coverage curve of the report: how many molecules would be covered after parameterising k tuples.

A stand-in, kept minimal, until the worklist module offers its own curve. A molecule that is not covered
needs every class tuple ``(kind, classes)`` of its missing and estimated terms to become a parameter of the
set; an unassigned class ``?`` is named by its element (``?P``) where the results say it, since such a
tuple also needs a new class. The greedy order: at each step take the tuple that completes the most
molecules now (every other tuple they need is already taken); on a tie the tuple most molecules still need;
then the first in sort order. The curve starts at the molecules covered already and never counts
unreadable records as covered (they are in the denominator, the number of records).
"""

from __future__ import annotations

import heapq
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

GAP_TIERS: frozenset[str] = frozenset({"analogy", "estimate", "missing"})

TupleKey = tuple[str, tuple[str, ...]]


def tuple_key(term: Mapping[str, Any], elements: Mapping[int, str]) -> TupleKey:
    """``(kind, classes)`` of a term, each ``?`` followed by the atom's element when ``elements`` has it."""
    classes = tuple(
        f"?{elements.get(int(atom), '')}" if c in (None, "?") else str(c)
        for c, atom in zip(term.get("classes", ()), term.get("atoms", ()), strict=False)
    )
    return str(term.get("kind")), classes


def gap_tuples(molecule: Mapping[str, Any]) -> frozenset[TupleKey]:
    """The tuples a molecule still needs: those of its listed missing and estimated terms."""
    elements = {
        int(p["atom"]): str(p["element"])
        for p in molecule.get("proposed_classes") or ()
        if isinstance(p, Mapping) and "atom" in p and "element" in p
    }
    return frozenset(
        tuple_key(t, elements) for t in molecule.get("terms") or () if t.get("tier") in GAP_TIERS
    )


@dataclass(frozen=True)
class CurveStep:
    """One step of the curve: the tuple taken and the molecules covered once it is in the set."""

    key: TupleKey
    molecules_needing: int
    """Molecules not covered that need this tuple (when it is taken)."""
    covered: int
    """Molecules covered after this step (cumulative, including those covered from the start)."""


@dataclass
class CurveBuilder:
    """Collects the needs of the molecules one at a time; :meth:`steps` computes the greedy order."""

    records: int = 0
    covered: int = 0
    unresolvable: int = 0
    """Molecules not covered (and readable) whose results list no missing or estimated term."""
    _needs: list[tuple[int, ...]] = field(default_factory=list)
    _ids: dict[TupleKey, int] = field(default_factory=dict)

    def add(self, molecule: Mapping[str, Any]) -> None:
        self.records += 1
        status = molecule.get("status")
        if status == "covered":
            self.covered += 1
            return
        if status == "unreadable":
            return
        needs = gap_tuples(molecule)
        if not needs:
            self.unresolvable += 1
            return
        self._needs.append(tuple(sorted(self._ids.setdefault(k, len(self._ids)) for k in needs)))

    def steps(self, limit: int | None = None) -> list[CurveStep]:
        """The greedy steps (at most ``limit``), until every molecule with listed needs is covered."""
        keys = sorted(self._ids, key=lambda k: self._ids[k])
        order = sorted(range(len(keys)), key=lambda i: keys[i])
        rank = {i: r for r, i in enumerate(order)}  # sort-order tie break
        users: list[list[int]] = [[] for _ in keys]
        remaining = [len(n) for n in self._needs]
        for m, needs in enumerate(self._needs):
            for t in needs:
                users[t].append(m)
        needing = [len(u) for u in users]
        completes = [0] * len(keys)
        for needs in self._needs:
            if len(needs) == 1:
                completes[needs[0]] += 1
        taken = [False] * len(keys)
        # A heap with lazy updates: an entry is current while its "completes" count still holds (the
        # count only grows; "needing" does not change for a tuple not taken yet).
        heap = [(-completes[t], -needing[t], rank[t], t) for t in range(len(keys))]
        heapq.heapify(heap)
        covered = self.covered
        steps: list[CurveStep] = []
        wanted = len(keys) if limit is None else min(limit, len(keys))
        while heap and len(steps) < wanted:
            count, _, _, best = heapq.heappop(heap)
            if taken[best] or -count != completes[best]:
                continue
            taken[best] = True
            for m in users[best]:
                remaining[m] -= 1
                if remaining[m] == 0:
                    covered += 1
                elif remaining[m] == 1:
                    last = next(t for t in self._needs[m] if not taken[t])
                    completes[last] += 1
                    heapq.heappush(heap, (-completes[last], -needing[last], rank[last], last))
            steps.append(CurveStep(keys[best], needing[best], covered))
        return steps


def coverage_curve(molecules: Iterable[Mapping[str, Any]], limit: int | None = None) -> list[CurveStep]:
    """The greedy curve of ``molecules`` (see the module text)."""
    builder = CurveBuilder()
    for molecule in molecules:
        builder.add(molecule)
    return builder.steps(limit)


def curve_percentages(start: int, steps: Sequence[CurveStep], records: int) -> list[float]:
    """Percent of ``records`` covered at 0, 1, 2, ... tuples (0 for an empty library)."""
    if records == 0:
        return [0.0]
    return [100.0 * start / records] + [100.0 * s.covered / records for s in steps]
