"""The worklist: which class tuples to parameterise first, and how far each step gets a library.

Input is the stream of molecule dicts of the output contract (one ``ffaudit audit --format jsonl`` line each,
see ``schemas/audit-molecule.schema.json``); nothing here needs the molecules themselves.

Definitions (the same in the code, the JSON output and the table):

- A *tuple* is ``(kind, classes, order)``: the term kind, its canonical class tuple and, for the kinds whose
  parameters are qualified by a bond order (bond, dihedral, charge increment), the bond order of the term's
  (central) bond. One new entry with exactly these classes and this ``order:`` resolves every term of the
  tuple, whatever its ring qualifier (see :func:`ffaudit.resolve.index.qualifier_variants`). The order is
  read from the term dict's ``order`` key, which audit output carries for bonds and dihedrals; results
  written before it did have ``order`` null (tuples that differ only in bond order are then counted
  together, and a note says so).
- A molecule is *blocked* by the distinct tuples of its terms in the *blocking tiers*: ``missing``, and with
  ``include_estimated`` also ``analogy`` and ``estimate`` (values that are not parameters of the set). A
  molecule with no blocker is *complete*: every term has a value (default), or every term has a parameter
  of the set (``include_estimated``).
- A position whose atom has no class (``?``) is named by the atom's element (``?P``). No parameter can fix
  such a tuple: the atom needs a class rule first, and once it has one its tuples are new ones. These tuples
  are *not fixable*; they are listed under environments without parameters, never ranked.
- A blocked molecule is *coverable* when every one of its blockers is fixable, so that adding one entry per
  blocker makes it complete; otherwise it *needs a class* first. Unreadable records can never be covered.
  The share that can be covered is (complete + coverable) / records, over every record read.

Rankings (deterministic; ties end with the tuple's sort key: kind in report order, classes, order):

- *alone*: by the number of molecules for which the tuple is the only blocker, then by the number of
  molecules it blocks;
- *greedy* (the worklist order): repeatedly the fixable tuple that completes the most molecules given the
  tuples already picked, ties by the number of molecules it blocks, then by key. The number of complete
  molecules after each pick is the coverage curve; after every fixable tuple is picked it equals the
  coverable total (tuples that only occur in molecules needing a class come last and add nothing).

The counts assume that each new entry resolves exactly its own tuple. A parent-class or wildcard entry can
resolve more (a lower bound, then), and a new entry can also turn another missing term into an analogy
estimate; neither is predicted here.
"""

from __future__ import annotations

import heapq
import json
import os
import re
from collections import Counter
from collections.abc import Iterable, Iterator, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

from ffaudit.errors import InputFileError
from ffaudit.paramset.canonical import UNASSIGNED, canonical_classes
from ffaudit.paramset.model import KINDS, ParameterSet
from ffaudit.score import RESOLVED_FROM_SET, TIERS

FORMAT_NAME = "ffaudit-worklist"
FORMAT_VERSION = 1
"""Increased when a change would break a reader of the previous version."""

ORDERED_KINDS: frozenset[str] = frozenset({"bond", "dihedral", "charge_increment"})
"""Kinds whose terms carry a bond order (of the bond, or of a dihedral's central bond)."""

ESTIMATED_TIERS: tuple[str, ...] = tuple(
    t for t in TIERS if t not in RESOLVED_FROM_SET and t != "missing"
)
"""Tiers whose value is an estimate, not a parameter of the set (analogy, estimate)."""

DEFAULT_CANDIDATES = 8
"""Molecules kept per tuple as fragment sources: the smallest (by atom count, then input position)."""

RESULTS_EXTENSIONS: tuple[str, ...] = (".jsonl", ".json", ".jsonl.gz", ".json.gz")
"""File names read as audit results rather than as a structure library."""

MAX_RESULT_LINE_CHARS = 64 << 20
"""Longest JSONL line read (64 MiB of characters); a molecule with every term listed can be long."""

TupleKey = tuple[str, tuple[str, ...], str | None]
"""(kind, canonical classes with ``?El`` for atoms without a class, bond order or None)."""

_STATUSES = ("covered", "estimated", "incomplete", "unreadable")
_UNCLASSIFIED_MESSAGE = re.compile(r"atom (\d+) \(([A-Za-z*]+)\)")
_NO_CLASS_HINT = "the set has no class for element"
_HAS_CLASS_HINT = "classes for "


def blocking_tiers(include_estimated: bool) -> frozenset[str]:
    """The tiers that block a molecule: ``missing``, plus ``analogy`` and ``estimate`` when asked."""
    return frozenset({"missing", *(ESTIMATED_TIERS if include_estimated else ())})


def is_fixable(key: TupleKey) -> bool:
    """True when one new parameter can fix the tuple (no position lacks a class)."""
    return not any(c.startswith(UNASSIGNED) for c in key[1])


def tuple_sort_key(key: TupleKey) -> tuple[int, tuple[str, ...], str]:
    """Deterministic order of tuples: kind in report order, then classes, then bond order."""
    kind, classes, order = key
    rank = KINDS.index(kind) if kind in KINDS else len(KINDS)
    return rank, classes, order or ""


def tuple_label(key: TupleKey) -> str:
    """``bond c3-n3 (double)`` for people."""
    kind, classes, order = key
    return f"{kind} {'-'.join(classes)}" + (f" ({order})" if order else "")


def tuple_elements(key: TupleKey, class_elements: Mapping[str, str]) -> tuple[str | None, ...]:
    """Element of each position: from ``?El`` names, else from the class table (None when unknown)."""
    return tuple(
        c[len(UNASSIGNED) :] or None if c.startswith(UNASSIGNED) else class_elements.get(c)
        for c in key[1]
    )


def class_elements_of(pset: ParameterSet) -> dict[str, str]:
    """Class id -> element symbol, for the element counts of a worklist."""
    return {c.id: c.element for c in pset.classes}


@dataclass(frozen=True)
class MoleculeRef:
    """Enough of a molecule to name it and to rebuild it from its SMILES (fragment sources)."""

    index: int
    name: str
    smiles: str | None
    atoms: int
    source: Mapping[str, Any]

    def order_key(self) -> tuple[int, int]:
        return self.atoms, self.index

    def to_dict(self) -> dict[str, Any]:
        return {"index": self.index, "name": self.name, "source": dict(self.source)}


@dataclass
class _TupleStats:
    key: TupleKey
    molecules: int = 0
    terms: int = 0
    alone: int = 0
    tiers: Counter[str] = field(default_factory=Counter)
    candidates: list[MoleculeRef] = field(default_factory=list)


@dataclass(frozen=True)
class WorklistTuple:
    """One tuple of the worklist with its counts; ``rank`` and the greedy fields are None when unranked."""

    key: TupleKey
    elements: tuple[str | None, ...]
    molecules: int
    """Molecules this tuple blocks."""
    terms: int
    """Terms of this tuple over the library."""
    alone: int
    """Molecules for which this tuple is the only blocker."""
    tiers: Mapping[str, int]
    """Terms of this tuple per blocking tier."""
    candidates: tuple[MoleculeRef, ...]
    """The smallest molecules containing the tuple (fragment sources), smallest first."""
    rank: int | None = None
    """Position in the greedy order, from 1."""
    alone_rank: int | None = None
    completes: int | None = None
    """Molecules that became complete when the greedy order picked this tuple."""
    covered_after: int | None = None
    """Complete molecules after fitting this tuple and every tuple ranked before it."""

    @property
    def kind(self) -> str:
        return self.key[0]

    @property
    def classes(self) -> tuple[str, ...]:
        return self.key[1]

    @property
    def order(self) -> str | None:
        return self.key[2]

    @property
    def label(self) -> str:
        return tuple_label(self.key)

    @property
    def fixable(self) -> bool:
        return is_fixable(self.key)

    def to_dict(self, records: int) -> dict[str, Any]:
        out: dict[str, Any] = {
            "rank": self.rank,
            "alone_rank": self.alone_rank,
            "kind": self.kind,
            "classes": list(self.classes),
            "order": self.order,
            "label": self.label,
            "elements": list(self.elements),
            "molecules": self.molecules,
            "alone": self.alone,
            "terms": self.terms,
            "tiers": dict(self.tiers),
            "completes": self.completes,
            "covered_after": self.covered_after,
            "covered_share_after": None
            if self.covered_after is None
            else share(self.covered_after, records),
            "examples": [ref.to_dict() for ref in self.candidates[:3]],
        }
        return out


@dataclass(frozen=True)
class ElementGap:
    """Atoms of one element that no class rule matched."""

    element: str
    atoms: int
    molecules: int
    set_has_class: bool | None
    """Whether the set has any class for the element (None when the input does not say)."""

    def to_dict(self) -> dict[str, Any]:
        return {
            "element": self.element,
            "atoms": self.atoms,
            "molecules": self.molecules,
            "set_has_class": self.set_has_class,
        }


@dataclass(frozen=True)
class Worklist:
    """The computed worklist. Molecule counts add up: records = unreadable + complete + coverable + needs_class."""

    include_estimated: bool
    records: int
    unreadable: int
    complete: int
    coverable: int
    needs_class: int
    tuples: tuple[WorklistTuple, ...]
    """Fixable tuples in greedy order (every one of them)."""
    without_parameters: tuple[WorklistTuple, ...]
    """Tuples with an atom without a class, most molecules first."""
    unclassified: tuple[ElementGap, ...]
    by_kind: Mapping[str, Mapping[str, int]]
    by_element: Mapping[str, Mapping[str, int]]
    by_class: Mapping[str, Mapping[str, int]]
    orders_unknown: int
    """Blocking terms of an ordered kind whose bond order the input did not give."""
    unknown_classes: tuple[str, ...]
    """Classes of blocking tuples with no known element (not in the class table given)."""

    @property
    def blocked(self) -> int:
        return self.coverable + self.needs_class

    @property
    def can_be_covered(self) -> int:
        return self.complete + self.coverable

    @property
    def curve(self) -> tuple[int, ...]:
        """Complete molecules after fitting the first k tuples, k = 0 .. len(tuples)."""
        return (self.complete,) + tuple(t.covered_after or 0 for t in self.tuples)

    def by_alone(self) -> list[WorklistTuple]:
        """The fixable tuples in the *alone* ranking."""
        return sorted(self.tuples, key=lambda t: t.alone_rank or 0)

    def notes(self) -> list[str]:
        """What a reader of the numbers must know."""
        notes = [
            (
                "complete means every term has a parameter of the set; analogy and estimate values count "
                "as blockers"
                if self.include_estimated
                else "complete means every term has a value; analogy and rule estimates count as values "
                "(use include-estimated to rank them too)"
            ),
            "counts assume each new entry resolves exactly its own tuple; a parent-class or wildcard entry "
            "may resolve more",
        ]
        if self.needs_class:
            notes.append(
                f"{self.needs_class} molecules have atoms without a class: no parameter covers them until "
                "the set has class rules for those atoms"
            )
        if self.orders_unknown:
            notes.append(
                f"{self.orders_unknown} blocking bond/dihedral terms carry no bond order (results written "
                "before ffaudit recorded it): tuples differing only in bond order are counted together; give the "
                "library instead of results to separate them"
            )
        if self.unknown_classes:
            notes.append(
                "classes not in the parameter set given, so without an element: "
                + ", ".join(self.unknown_classes)
                + " (were the results made with another set?)"
            )
        return notes

    def to_dict(self, top: int | None = None) -> dict[str, Any]:
        """The worklist as plain JSON (``schemas/worklist.schema.json`` without the run header)."""
        records = self.records
        listed = self.tuples if top is None else self.tuples[:top]
        return {
            "include_estimated": self.include_estimated,
            "blocking_tiers": sorted(blocking_tiers(self.include_estimated), key=TIERS.index),
            "molecules": {
                "records": records,
                "unreadable": self.unreadable,
                "complete": self.complete,
                "blocked": self.blocked,
                "coverable": self.coverable,
                "needs_class": self.needs_class,
                "can_be_covered": self.can_be_covered,
                "complete_share": share(self.complete, records),
                "can_be_covered_share": share(self.can_be_covered, records),
            },
            "tuples_total": len(self.tuples),
            "tuples": [t.to_dict(records) for t in listed],
            "coverage_curve": [
                {"tuples": k, "complete": n, "share": share(n, records)}
                for k, n in enumerate(self.curve)
            ],
            "by_kind": {k: dict(v) for k, v in self.by_kind.items()},
            "by_element": {k: dict(v) for k, v in self.by_element.items()},
            "by_class": {k: dict(v) for k, v in self.by_class.items()},
            "without_parameters": {
                "elements": [g.to_dict() for g in self.unclassified],
                "tuples": [t.to_dict(records) for t in self.without_parameters],
            },
            "notes": self.notes(),
        }


def share(part: int, total: int) -> float:
    """``part / total`` rounded to 6 decimals; 0.0 for an empty library."""
    return round(part / total, 6) if total else 0.0


class WorklistBuilder:
    """Accumulates molecule dicts one at a time (memory grows with the blocked molecules' tuple sets only).

    ``class_elements`` (class id -> element, :func:`class_elements_of`) gives the element counts; classes
    not in it are listed in :attr:`Worklist.unknown_classes`.
    """

    def __init__(
        self,
        include_estimated: bool = False,
        class_elements: Mapping[str, str] | None = None,
        candidates: int = DEFAULT_CANDIDATES,
    ) -> None:
        self.include_estimated = include_estimated
        self.blocking = blocking_tiers(include_estimated)
        self.class_elements = dict(class_elements or {})
        self.max_candidates = max(0, candidates)
        self.records = 0
        self.unreadable = 0
        self.complete = 0
        self.orders_unknown = 0
        self._ids: dict[TupleKey, int] = {}
        self._stats: list[_TupleStats] = []
        self._blocked: list[tuple[int, ...]] = []
        self._gap_atoms: Counter[str] = Counter()
        self._gap_molecules: Counter[str] = Counter()
        self._gap_has_class: dict[str, bool] = {}
        self._agg_terms: dict[str, Counter[str]] = {
            "kind": Counter(),
            "element": Counter(),
            "class": Counter(),
        }
        self._agg_molecules: dict[str, Counter[str]] = {
            "kind": Counter(),
            "element": Counter(),
            "class": Counter(),
        }

    def add(self, molecule: Mapping[str, Any], where: str = "<molecule>") -> None:
        """Take one molecule dict into account.

        Raises :class:`ffaudit.errors.InputFileError` naming ``where`` when the dict lacks what the worklist
        needs, or when its ``terms`` list leaves out blocking terms that its ``counts`` show (results written
        with ``--terms none``).
        """
        _check_molecule(molecule, where)
        self.records += 1
        if molecule["status"] == "unreadable":
            self.unreadable += 1
            return
        _check_terms_listed(molecule, self.blocking, where)
        elements = _unclassified_elements(molecule)
        self._count_gaps(molecule, elements)
        term_counts: Counter[TupleKey] = Counter()
        tiers: dict[TupleKey, Counter[str]] = {}
        for number, term in enumerate(molecule["terms"]):
            if term["tier"] not in self.blocking:
                continue
            key = self._key(term, elements, f"{where}: terms[{number}]")
            term_counts[key] += 1
            tiers.setdefault(key, Counter())[term["tier"]] += 1
        if not term_counts:
            self.complete += 1
            return
        ref = MoleculeRef(
            index=int(molecule["index"]),
            name=str(molecule.get("name", "")),
            smiles=molecule.get("smiles"),
            atoms=int(molecule.get("atoms", 0)),
            source=dict(molecule.get("source") or {}),
        )
        ids = []
        for key in sorted(term_counts, key=tuple_sort_key):
            ids.append(self._id(key))
            stats = self._stats[ids[-1]]
            stats.molecules += 1
            stats.terms += term_counts[key]
            stats.tiers.update(tiers[key])
            self._offer(stats, ref)
        if len(ids) == 1:
            self._stats[ids[0]].alone += 1
        self._blocked.append(tuple(ids))
        self._aggregate(term_counts)

    def finish(self) -> Worklist:
        """Rank the tuples and return the worklist."""
        keys = [s.key for s in self._stats]
        fixable = [is_fixable(k) for k in keys]
        greedy = _greedy(
            self._blocked, [s.molecules for s in self._stats], keys, fixable, self.complete
        )
        alone_order = sorted(
            (i for i, ok in enumerate(fixable) if ok),
            key=lambda i: (
                -self._stats[i].alone,
                -self._stats[i].molecules,
                tuple_sort_key(keys[i]),
            ),
        )
        alone_rank = {i: n for n, i in enumerate(alone_order, start=1)}
        ranked = [
            self._tuple(i, rank=n, alone_rank=alone_rank[i], completes=done, covered_after=after)
            for n, (i, done, after) in enumerate(greedy, start=1)
        ]
        unfixable = sorted(
            (i for i, ok in enumerate(fixable) if not ok),
            key=lambda i: (-self._stats[i].molecules, tuple_sort_key(keys[i])),
        )
        needs_class = sum(1 for ids in self._blocked if not all(fixable[i] for i in ids))
        unknown = sorted(
            {
                c
                for k in keys
                for c in k[1]
                if not c.startswith(UNASSIGNED) and c not in self.class_elements
            }
        )
        return Worklist(
            include_estimated=self.include_estimated,
            records=self.records,
            unreadable=self.unreadable,
            complete=self.complete,
            coverable=len(self._blocked) - needs_class,
            needs_class=needs_class,
            tuples=tuple(ranked),
            without_parameters=tuple(self._tuple(i) for i in unfixable),
            unclassified=tuple(
                ElementGap(
                    el, self._gap_atoms[el], self._gap_molecules[el], self._gap_has_class.get(el)
                )
                for el in sorted(self._gap_atoms)
            ),
            by_kind=self._table("kind", sorted_kinds=True),
            by_element=self._table("element"),
            by_class=self._table("class"),
            orders_unknown=self.orders_unknown,
            unknown_classes=tuple(unknown),
        )

    # -- helpers ---------------------------------------------------------------------------------------

    def _key(self, term: Mapping[str, Any], elements: Mapping[int, str], where: str) -> TupleKey:
        kind = term["kind"]
        classes = list(term["classes"])
        atoms = list(term["atoms"])
        for position, name in enumerate(classes):
            if name == UNASSIGNED:
                atom = atoms[position] if position < len(atoms) else None
                classes[position] = (
                    UNASSIGNED + elements.get(atom, "") if atom is not None else UNASSIGNED
                )
        try:
            canonical, _ = canonical_classes(kind, classes)
        except (ValueError, IndexError) as exc:
            raise InputFileError(f"{where}: cannot read the term ({exc})") from exc
        order: str | None = None
        if kind in ORDERED_KINDS:
            order = term.get("order")
            if order is None:
                self.orders_unknown += 1
        return kind, canonical, order

    def _id(self, key: TupleKey) -> int:
        found = self._ids.get(key)
        if found is None:
            found = self._ids[key] = len(self._stats)
            self._stats.append(_TupleStats(key))
        return found

    def _offer(self, stats: _TupleStats, ref: MoleculeRef) -> None:
        if not self.max_candidates or ref.smiles is None:
            return
        kept = stats.candidates
        if len(kept) < self.max_candidates:
            kept.append(ref)
            kept.sort(key=MoleculeRef.order_key)
        elif ref.order_key() < kept[-1].order_key():
            kept[-1] = ref
            kept.sort(key=MoleculeRef.order_key)

    def _count_gaps(self, molecule: Mapping[str, Any], elements: Mapping[int, str]) -> None:
        seen: set[str] = set()
        for atom, cls in enumerate(molecule["atom_classes"]):
            if cls is None:
                element = elements.get(atom, UNASSIGNED)
                self._gap_atoms[element] += 1
                seen.add(element)
        for element in seen:
            self._gap_molecules[element] += 1
        for finding in molecule.get("findings") or ():
            if not isinstance(finding, Mapping) or finding.get("code") != "unclassified-atom":
                continue
            hint = str(finding.get("hint") or "")
            match = _UNCLASSIFIED_MESSAGE.search(str(finding.get("message", "")))
            if match is None:
                continue
            element = match.group(2)
            if hint.startswith(_NO_CLASS_HINT):
                self._gap_has_class[element] = False
            elif hint.startswith(_HAS_CLASS_HINT):
                self._gap_has_class[element] = True
        if self.class_elements:
            known = set(self.class_elements.values())
            for element in seen:
                self._gap_has_class.setdefault(element, element in known)

    def _aggregate(self, term_counts: Mapping[TupleKey, int]) -> None:
        touched: dict[str, set[str]] = {"kind": set(), "element": set(), "class": set()}
        for key, n in term_counts.items():
            labels = {
                "kind": {key[0]},
                "element": {e for e in tuple_elements(key, self.class_elements) if e},
                "class": set(key[1]),
            }
            for axis, names in labels.items():
                for name in names:
                    self._agg_terms[axis][name] += n
                touched[axis] |= names
        for axis, names in touched.items():
            for name in names:
                self._agg_molecules[axis][name] += 1

    def _table(self, axis: str, sorted_kinds: bool = False) -> dict[str, dict[str, int]]:
        tuples: Counter[str] = Counter()
        for stats in self._stats:
            key = stats.key
            if axis == "kind":
                names = {key[0]}
            elif axis == "element":
                names = {e for e in tuple_elements(key, self.class_elements) if e}
            else:
                names = set(key[1])
            for name in names:
                tuples[name] += 1
        if sorted_kinds:
            order = sorted(tuples, key=lambda k: (KINDS.index(k) if k in KINDS else len(KINDS), k))
        else:
            order = sorted(tuples, key=lambda k: (-self._agg_molecules[axis][k], k))
        return {
            name: {
                "tuples": tuples[name],
                "terms": self._agg_terms[axis][name],
                "molecules": self._agg_molecules[axis][name],
            }
            for name in order
        }

    def _tuple(self, i: int, **ranks: Any) -> WorklistTuple:
        stats = self._stats[i]
        return WorklistTuple(
            key=stats.key,
            elements=tuple_elements(stats.key, self.class_elements),
            molecules=stats.molecules,
            terms=stats.terms,
            alone=stats.alone,
            tiers={t: stats.tiers[t] for t in TIERS if stats.tiers[t]},
            candidates=tuple(stats.candidates),
            **ranks,
        )


def _greedy(
    blocked: Sequence[tuple[int, ...]],
    molecules: Sequence[int],
    keys: Sequence[TupleKey],
    fixable: Sequence[bool],
    complete: int,
) -> list[tuple[int, int, int]]:
    """The greedy order over the fixable tuples: (tuple id, molecules completed, complete after), in order.

    Lazy max-heap: a tuple's "completes" count only grows, so a stale heap entry is recognised by a count
    that differs from the current one and skipped.
    """
    members: list[list[int]] = [[] for _ in keys]
    remaining = [len(ids) for ids in blocked]
    completes = [0] * len(keys)
    for m, ids in enumerate(blocked):
        for i in ids:
            members[i].append(m)
        if len(ids) == 1 and fixable[ids[0]]:
            completes[ids[0]] += 1
    heap = [
        (-completes[i], -molecules[i], tuple_sort_key(keys[i]), i)
        for i in range(len(keys))
        if fixable[i]
    ]
    heapq.heapify(heap)
    picked = [False] * len(keys)
    covered = complete
    order: list[tuple[int, int, int]] = []
    while heap:
        neg, _, _, i = heapq.heappop(heap)
        if picked[i] or -neg != completes[i]:
            continue
        picked[i] = True
        done = 0
        for m in members[i]:
            remaining[m] -= 1
            if remaining[m] == 0:
                done += 1
            elif remaining[m] == 1:
                last = next(u for u in blocked[m] if not picked[u])
                if fixable[last]:
                    completes[last] += 1
                    heapq.heappush(
                        heap, (-completes[last], -molecules[last], tuple_sort_key(keys[last]), last)
                    )
        covered += done
        order.append((i, done, covered))
    return order


def build_worklist(
    molecules: Iterable[Mapping[str, Any] | tuple[str, Mapping[str, Any]]],
    include_estimated: bool = False,
    class_elements: Mapping[str, str] | None = None,
    candidates: int = DEFAULT_CANDIDATES,
) -> Worklist:
    """The worklist of a stream of molecule dicts (or ``(where, dict)`` pairs, as :func:`iter_results` yields).

    Raises :class:`ffaudit.errors.InputFileError` as :meth:`WorklistBuilder.add`.
    """
    builder = WorklistBuilder(include_estimated, class_elements, candidates)
    for number, item in enumerate(molecules):
        if isinstance(item, tuple):
            where, molecule = item
        else:
            where, molecule = f"molecule {number}", item
        builder.add(molecule, where)
    return builder.finish()


def audit_to_molecule(audit: Any, pset: ParameterSet) -> dict[str, Any]:
    """The molecule dict of a :class:`ffaudit.audit.MoleculeAudit` with the terms not resolved exactly,
    as ``audit --terms problems`` writes it (each bond-ordered term carries ``order``)."""
    return dict(audit.to_dict(pset, "problems"))


def is_results_path(path: str) -> bool:
    """True when ``path`` names audit results (``.jsonl`` / ``.json``, optionally ``.gz``)."""
    return path.lower().endswith(RESULTS_EXTENSIONS)


def iter_results(path: str, fmt: str | None = None) -> Iterator[tuple[str, dict[str, Any]]]:
    """Yield ``("FILE:LINE", molecule)`` for each molecule of an audit results file.

    ``fmt`` is ``jsonl`` or ``json``; by default it comes from the name (``.json`` or ``.json.gz`` is
    ``json``, anything else ``jsonl``). JSONL (optionally gzipped; ``-`` is standard input) is read line by
    line, blank lines skipped; JSON is the ``--format json`` report document, read whole (``where`` is then
    ``FILE: molecules[N]``).

    Raises :class:`ffaudit.errors.InputFileError` naming the file (and line) when it cannot be opened, a
    line is not a JSON object, or a ``.json`` file is not an audit report.
    """
    from ffaudit.read.source import iter_lines, open_input

    if fmt is None:
        fmt = "json" if path.lower().removesuffix(".gz").endswith(".json") else "jsonl"
    with open_input(path) as stream:
        if fmt == "json":
            yield from _iter_report(stream.read(), path)
            return
        for line in iter_lines(stream, path, max_chars=MAX_RESULT_LINE_CHARS):
            where = f"{path}:{line.number}"
            if line.overlong:
                raise InputFileError(f"{where}: line too long ({line.length} characters)")
            text = line.text.strip()
            if not text:
                continue
            try:
                molecule = json.loads(text)
            except json.JSONDecodeError as exc:
                hint = (
                    "; this looks like a --format json report: name it .json, or write JSONL with --format jsonl"
                    if '"format":"ffaudit-audit"' in text[:200]
                    else ""
                )
                raise InputFileError(
                    f"{where}:{exc.colno}: not a JSON object ({exc.msg}){hint}"
                ) from exc
            if not isinstance(molecule, dict):
                raise InputFileError(
                    f"{where}: expected a JSON object (one molecule), found {type(molecule).__name__}"
                )
            yield where, molecule


def _iter_report(data: bytes, path: str) -> Iterator[tuple[str, dict[str, Any]]]:
    try:
        document = json.loads(data.decode("utf-8"))
    except UnicodeDecodeError as exc:
        raise InputFileError(f"{path}: not UTF-8 text ({exc.reason} at byte {exc.start})") from exc
    except json.JSONDecodeError as exc:
        raise InputFileError(f"{path}:{exc.lineno}:{exc.colno}: not JSON ({exc.msg})") from exc
    if not isinstance(document, dict) or document.get("format") != "ffaudit-audit":
        raise InputFileError(
            f'{path}: not an ffaudit audit report (expected an object with "format": "ffaudit-audit")'
        )
    molecules = document.get("molecules")
    if not isinstance(molecules, list):
        raise InputFileError(f"{path}: the report has no molecules list")
    for number, molecule in enumerate(molecules):
        where = f"{os.fspath(path)}: molecules[{number}]"
        if not isinstance(molecule, dict):
            raise InputFileError(f"{where}: expected a JSON object")
        yield where, molecule


_REQUIRED: tuple[tuple[str, type | tuple[type, ...]], ...] = (
    ("index", int),
    ("status", str),
    ("atom_classes", list),
    ("counts", dict),
    ("terms", list),
)


def _check_molecule(molecule: Mapping[str, Any], where: str) -> None:
    for key, kind in _REQUIRED:
        if key not in molecule:
            raise InputFileError(
                f"{where}: the molecule has no {key!r} (is this ffaudit audit output?)"
            )
        if not isinstance(molecule[key], kind) or isinstance(molecule[key], bool):
            raise InputFileError(
                f"{where}: {key!r} has the wrong type ({type(molecule[key]).__name__})"
            )
    if molecule["status"] not in _STATUSES:
        raise InputFileError(f"{where}: unknown status {molecule['status']!r}")
    for number, term in enumerate(molecule["terms"]):
        ok = (
            isinstance(term, Mapping)
            and isinstance(term.get("kind"), str)
            and isinstance(term.get("tier"), str)
            and isinstance(term.get("classes"), list)
            and isinstance(term.get("atoms"), list)
            and len(term["classes"]) == len(term["atoms"])
            and all(isinstance(c, str) for c in term["classes"])
        )
        if not ok:
            raise InputFileError(
                f"{where}: terms[{number}] is not a term (kind, tier, atoms and classes expected)"
            )


def _check_terms_listed(molecule: Mapping[str, Any], blocking: frozenset[str], where: str) -> None:
    listed: Counter[tuple[str, str]] = Counter((t["kind"], t["tier"]) for t in molecule["terms"])
    for kind, tiers in molecule["counts"].items():
        if not isinstance(tiers, Mapping):
            continue
        for tier in blocking:
            counted = int(tiers.get(tier, 0) or 0)
            if listed[(kind, tier)] < counted:
                name = molecule.get("name", "")
                raise InputFileError(
                    f"{where}: molecule {molecule['index']} ({name}) counts {counted} {kind} terms of tier "
                    f"{tier} but lists {listed[(kind, tier)]}: the results were written without the terms "
                    "the worklist needs (--terms none). Audit again with --terms problems (or all), or give "
                    "the library itself"
                )


def _unclassified_elements(molecule: Mapping[str, Any]) -> dict[int, str]:
    """Atom index -> element for atoms without a class, from ``proposed_classes`` and the findings."""
    elements: dict[int, str] = {}
    for proposal in molecule.get("proposed_classes") or ():
        if isinstance(proposal, Mapping) and isinstance(proposal.get("atom"), int):
            elements[proposal["atom"]] = str(proposal.get("element", ""))
    for finding in molecule.get("findings") or ():
        if isinstance(finding, Mapping) and finding.get("code") == "unclassified-atom":
            match = _UNCLASSIFIED_MESSAGE.search(str(finding.get("message", "")))
            if match is not None:
                elements.setdefault(int(match.group(1)), match.group(2))
    return elements
