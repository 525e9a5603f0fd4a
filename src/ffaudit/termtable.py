"""The resolved terms of one molecule, stored compactly: a read-only sequence of :class:`Resolution`.

A molecule has about 200 terms, and most of them share their outcome with many other terms of the library
(the fast path resolves each distinct tuple once). Building a :class:`Term` and a :class:`Resolution` object
per term, and then a dict and JSON text per term, cost more than all the rest of an audit. A
:class:`TermTable` keeps per term only its atoms and a key into a table of :class:`SharedOutcome`, plus
the resolutions made for single terms (terms with an unclassified atom, failed estimates), and for rule
estimates a key into the resolver's :class:`SharedEstimate` (terms with the same tuple and estimate signature
share everything but the atom numbers their provenance names). Objects are built only when someone iterates
or indexes the table; the totals an audit needs (counts by kind and tier, the
lowest score, the missing terms) and the listed terms (dicts, or JSON text byte-identical to encoding those
dicts) come from the shared outcomes directly.

The reference path wraps its tuple of resolutions with :meth:`TermTable.of`, so both paths answer alike;
two tables are equal when their resolutions are, whatever their storage.
"""

from __future__ import annotations

import bisect
import itertools
import re
from collections import Counter
from collections.abc import Iterable, Iterator, Mapping, Sequence
from typing import Any, cast, overload

from ffaudit.paramset.canonical import UNASSIGNED
from ffaudit.paramset.model import Entry, ParameterSet
from ffaudit.resolve.driver import Resolution, SharedEstimate
from ffaudit.resolve.estimate import assumed_types
from ffaudit.score import RESOLVED_FROM_SET, TIERS
from ffaudit.termdict import resolution_dict
from ffaudit.terms import Term

PROBLEM_TIERS = frozenset(TIERS) - {"exact"}
"""The tiers ``--terms problems`` lists."""

OWN = -1
"""The key of a term whose resolution is its own (kept in the table's ``own`` mapping)."""

ESTIMATED = -2
"""The key of a term resolved by a shared rule estimate (kept in the table's ``estimated`` mapping)."""


def _compact(obj: Any) -> str:
    from ffaudit.report.jsonl import dump_compact

    return dump_compact(obj)


class SharedOutcome:
    """What every term with one (kind, classes, qualifiers) tuple shares: all of its resolution but the atoms.

    Holds the output of such terms once per parameter set (the dict after ``kind`` and ``atoms``, and its
    JSON text). Raises ``ValueError`` from :meth:`of` for a resolution with per-term details (an estimate).
    """

    __slots__ = (
        "kind",
        "classes",
        "order",
        "ring",
        "tier",
        "entry",
        "score",
        "reason",
        "cause",
        "substitutions",
        "kind_tier",
        "unreviewed",
        "_output",
        "_template",
    )

    def __init__(
        self,
        kind: str,
        classes: tuple[str, ...],
        order: str | None,
        ring: bool | None,
        tier: str,
        entry: Entry | None,
        score: float,
        reason: str | None,
        cause: str | None,
        substitutions: tuple[tuple[int, str, str], ...],
    ) -> None:
        self.kind = kind
        self.classes = classes
        self.order = order
        self.ring = ring
        self.tier = tier
        self.entry = entry
        self.score = score
        self.reason = reason
        self.cause = cause
        self.substitutions = substitutions
        self.kind_tier = (kind, tier)
        self.unreviewed = unreviewed_entry(tier, entry)
        self._output: tuple[ParameterSet, dict[str, Any], str, str] | None = None
        self._template: tuple[ParameterSet, dict[str, Any]] | None = None

    @classmethod
    def of(cls, resolution: Resolution) -> SharedOutcome:
        """The shared part of ``resolution``; ``ValueError`` when it carries per-term details."""
        if resolution.details:
            raise ValueError("a resolution with per-term details cannot be shared")
        t = resolution.term
        r = resolution
        return cls(
            t.kind, t.classes, t.bond_order, t.in_ring, r.tier, r.entry, r.score, r.reason,
            r.cause, r.substitutions,
        )  # fmt: skip

    def resolution(self, atoms: tuple[int, ...]) -> Resolution:
        """The resolution of the term on ``atoms``."""
        term = Term(self.kind, atoms, self.classes, self.order, self.ring)
        return Resolution(
            term, self.tier, self.entry, self.score, self.reason, self.cause, self.substitutions
        )

    def output(self, pset: ParameterSet, atoms: tuple[int, ...]) -> tuple[dict[str, Any], str, str]:
        """The term dict after ``kind`` and ``atoms``, and the JSON text before and after the atoms.

        Made from a real :func:`resolution_dict` (of the term on ``atoms``) once per parameter set, so the
        output cannot differ from the reference's.
        """
        cached = self._output
        if cached is not None and cached[0] is pset:
            return cached[1], cached[2], cached[3]
        full = resolution_dict(self.resolution(atoms), pset)
        tail = {k: v for k, v in full.items() if k not in ("kind", "atoms")}
        before = '{"kind":' + _compact(self.kind) + ',"atoms":['
        after = "]," + _compact(tail)[1:]
        self._output = (pset, tail, before, after)
        return tail, before, after

    def term_template(self, pset: ParameterSet, atoms: tuple[int, ...]) -> dict[str, Any]:
        """The whole term dict with ``atoms`` set to None: a term's dict is a copy of it with its atoms put in
        (``dict.copy`` keeps the key order and is several times cheaper than building the dict key by
        key). Made once per parameter set; nested values are shared: never mutate them."""
        cached = self._template
        if cached is not None and cached[0] is pset:
            return cached[1]
        template = {"kind": self.kind, "atoms": None, **self.output(pset, atoms)[0]}
        self._template = (pset, template)
        return template


def unreviewed_entry(tier: str, entry: Entry | None) -> bool:
    """True for a term resolved from a set entry the set itself marks ``estimated: true`` (not reviewed)."""
    return entry is not None and entry.estimated and tier in RESOLVED_FROM_SET


class SharedTotals:
    """The totals of the terms of one molecule that have a shared outcome, made for many molecules at once
    (the fast path counts them for a whole batch with numpy; see ``ffaudit.engine.batch``).

    ``counts``: terms per (kind, tier); ``unreviewed``: terms resolved from set entries marked estimated;
    ``missing``: (kind, classes, terms) per missing tuple, in the order of each tuple's first term;
    ``low``: the lowest score and the position of the first term that has it (None without such terms).
    """

    __slots__ = ("counts", "unreviewed", "missing", "low")

    def __init__(
        self,
        counts: dict[tuple[str, str], int],
        unreviewed: int,
        missing: list[tuple[str, tuple[str, ...], int]],
        low: tuple[float, int | None],
    ) -> None:
        self.counts = counts
        self.unreviewed = unreviewed
        self.missing = missing
        self.low = low


_ATOM_TEXT: dict[tuple[int, ...], str] = {}
_ATOM_TEXT_LIMIT = 200_000


def _atom_text(atoms: tuple[int, ...]) -> str:
    """``0,1,2`` for ``(0, 1, 2)``: the inside of the JSON list (cached: small tuples recur in every molecule)."""
    text = _ATOM_TEXT.get(atoms)
    if text is None:
        text = ",".join(map(str, atoms))
        if len(_ATOM_TEXT) >= _ATOM_TEXT_LIMIT:
            _ATOM_TEXT.clear()
        _ATOM_TEXT[atoms] = text
    return text


_SENTINEL = -(10**15)
"""Atom numbers ``_SENTINEL - k`` stand for atom ``k`` while an estimate's JSON template is made: no real
atom index or value (6 significant digits) prints as ``-100000000000000k``."""
_SLOT = re.compile(r"-10{14}([0-9])")


def estimate_json(shared: SharedEstimate, pset: ParameterSet, atoms: tuple[int, ...]) -> str:
    """The compact JSON of the term dict of the estimate ``shared`` on ``atoms``: byte-identical to encoding
    :func:`resolution_dict` of its resolution. The first term of an estimate is encoded directly; from the
    second on, a template made once per estimate and set (from a real resolution on stand-in atoms, split
    where the atom numbers go) is filled in, so estimates used once cost no template."""
    template = shared.template
    if template is None or template[0] is not pset:
        shared.template = (pset, None, None)
        return _compact(estimate_dict(shared, pset, atoms))
    if template[1] is None:
        stand_in = tuple(_SENTINEL - k for k in range(len(atoms)))
        text = _compact(estimate_dict(shared, pset, stand_in))
        pieces = _SLOT.split(text)  # literal, slot, literal, slot, ..., literal
        template = (pset, pieces[0::2], [int(k) for k in pieces[1::2]])
        shared.template = template
    literals, slots = template[1], template[2]
    parts = [literals[0]]
    for slot, literal in zip(slots, literals[1:], strict=True):
        parts.append(str(atoms[slot]))
        parts.append(literal)
    return "".join(parts)


def named_classes(term: Term, elements: Sequence[str]) -> tuple[str, ...]:
    """The term's classes with each unassigned ``?`` followed by the atom's element (``?P``)."""
    return tuple(
        f"{UNASSIGNED}{elements[atom]}" if c == UNASSIGNED else c
        for c, atom in zip(term.classes, term.atoms, strict=True)
    )


def estimate_dict(
    shared: SharedEstimate, pset: ParameterSet, atoms: tuple[int, ...]
) -> dict[str, Any]:
    """The term dict of the estimate ``shared`` on ``atoms``: equal to :func:`resolution_dict` of its
    resolution. Made from a template (a real resolution's dict, once per estimate and set) in which only
    what names atoms is replaced: the atoms, the provenance's ``assumed`` list and, for unclassified atoms,
    the reason. Nested values are shared with the template: never mutate them."""
    template = shared.dict_template
    if template is None or template[0] is not pset:
        first = resolution_dict(shared.resolution(atoms), pset)
        shared.dict_template = (pset, first)
        return dict(first)
    out = dict(template[1])
    out["atoms"] = list(atoms)
    provenance = dict(out["provenance"])
    inputs = dict(provenance["inputs"])
    inputs["assumed"] = assumed_types(atoms, shared.typings)
    provenance["inputs"] = inputs
    out["provenance"] = provenance
    out["reason"] = shared.reason_of(atoms)
    return out


class _Slices:
    """Rows kept as a list of array slices, with their running ends to find the slice of a row."""

    __slots__ = ("_parts", "_ends")

    def __init__(self, parts: Sequence[Any]) -> None:
        self._parts = [p for p in parts if len(p)]
        self._ends = list(itertools.accumulate(len(p) for p in self._parts))

    def __len__(self) -> int:
        return self._ends[-1] if self._ends else 0

    def _checked(self, index: int) -> int:
        """``index`` made non-negative; ``IndexError`` when it is out of range."""
        if index < 0:
            index += len(self)
        if not 0 <= index < len(self):
            raise IndexError("term index out of range")
        return index

    def _row(self, index: int) -> Any:
        """Row ``index`` (non-negative, in range) of its slice."""
        part = bisect.bisect_right(self._ends, index)
        start = self._ends[part - 1] if part else 0
        return self._parts[part][index - start]


class AtomRows(_Slices, Sequence[tuple[int, ...]]):
    """The atom tuples of a molecule's terms, kept as the rows of integer arrays (one array per term kind,
    in term order) and turned into tuples only when asked: a run that lists no terms never makes them.
    One row is converted on its own; :meth:`materialise` converts all at once (and keeps the list)."""

    __slots__ = ("_list",)

    def __init__(self, parts: Sequence[Any]) -> None:
        super().__init__(parts)
        self._list: list[tuple[int, ...]] | None = None

    def lists(self) -> list[list[int]]:
        """Every row as a new list of ints, in order (not kept: the caller owns the lists)."""
        out: list[list[int]] = []
        for p in self._parts:
            out += p.tolist()
        return out

    def materialise(self) -> list[tuple[int, ...]]:
        """Every row as a tuple of ints, in order (made on first call, then kept)."""
        if self._list is None:
            out: list[tuple[int, ...]] = []
            for p in self._parts:
                out += map(tuple, p.tolist())
            self._list = out
        return self._list

    @overload
    def __getitem__(self, index: int) -> tuple[int, ...]: ...

    @overload
    def __getitem__(self, index: slice) -> list[tuple[int, ...]]: ...

    def __getitem__(self, index: int | slice) -> tuple[int, ...] | list[tuple[int, ...]]:
        if self._list is not None or isinstance(index, slice):
            return self.materialise()[index]
        return tuple(self._row(self._checked(index)).tolist())


class KeyRows(_Slices, Sequence[int]):
    """The keys of a molecule's terms, kept as slices of integer arrays (one per term kind, in term order)
    plus the positions whose key was replaced (by :data:`OWN` or :data:`ESTIMATED`), and turned into a
    list of ints only when asked: a run that lists no terms never makes it. :meth:`materialise` converts
    all at once (and keeps the list)."""

    __slots__ = ("_replaced", "_list")

    def __init__(self, parts: Sequence[Any], replaced: Mapping[int, int]) -> None:
        super().__init__(parts)
        self._replaced = replaced
        self._list: list[int] | None = None

    def materialise(self) -> list[int]:
        """Every key, in term order (made on first call, then kept)."""
        if self._list is None:
            out: list[int] = []
            for p in self._parts:
                out += p.tolist()
            for i, key in self._replaced.items():
                out[i] = key
            self._list = out
        return self._list

    @overload
    def __getitem__(self, index: int) -> int: ...

    @overload
    def __getitem__(self, index: slice) -> list[int]: ...

    def __getitem__(self, index: int | slice) -> int | list[int]:
        if self._list is not None or isinstance(index, slice):
            return self.materialise()[index]
        index = self._checked(index)
        key = self._replaced.get(index)
        return int(self._row(index)) if key is None else key

    def __iter__(self) -> Iterator[int]:
        return iter(self.materialise())

    def index(self, value: Any, start: int = 0, stop: int | None = None) -> int:
        keys = self.materialise()
        return keys.index(value, start) if stop is None else keys.index(value, start, stop)


def _key_list(keys: Sequence[int]) -> Sequence[int]:
    """``keys`` as a plain sequence for loops over many terms."""
    return keys.materialise() if isinstance(keys, KeyRows) else keys


def _atom_list(atoms: Sequence[tuple[int, ...] | None]) -> Sequence[tuple[int, ...] | None]:
    """``atoms`` as a plain sequence for loops over many terms."""
    return atoms.materialise() if isinstance(atoms, AtomRows) else atoms


class TermTable(Sequence[Resolution]):
    """The resolutions of one molecule's terms, in term order (see the module docstring).

    ``atoms[i]`` and ``keys[i]`` describe term ``i``: ``shared[keys[i]]`` is its outcome; or ``keys[i]`` is
    :data:`ESTIMATED` and ``estimated[i]`` its shared estimate; or ``keys[i]`` is :data:`OWN` and ``own[i]``
    is its resolution (``atoms[i]`` is then unused). The table never changes; ``shared`` may be a larger
    mapping (the fast path's, shared by many tables) that only grows. ``totals``, when given, are the
    totals of the terms with a shared outcome, counted beforehand (:class:`SharedTotals`); they must be
    those of ``keys``, which is not checked. Raises ``ValueError`` when the lengths of ``atoms`` and
    ``keys`` differ.
    """

    __slots__ = (
        "_atoms", "_keys", "_shared", "_own", "_estimated", "_totals", "_items", "_counts",
        "_key_counts", "_missing", "_low", "_unreviewed",
    )  # fmt: skip

    def __init__(
        self,
        atoms: Sequence[tuple[int, ...] | None],
        keys: Sequence[int],
        shared: Mapping[int, SharedOutcome],
        own: Mapping[int, Resolution],
        estimated: Mapping[int, SharedEstimate] | None = None,
        totals: SharedTotals | None = None,
    ) -> None:
        if len(atoms) != len(keys):
            raise ValueError(f"{len(atoms)} atom tuples for {len(keys)} keys")
        self._atoms = atoms
        self._keys = keys
        self._shared = shared
        self._own = own
        self._estimated: Mapping[int, SharedEstimate] = estimated or {}
        self._totals = totals
        self._items: tuple[Resolution, ...] | None = None
        self._counts: Counter[tuple[str, str]] | None = None
        self._key_counts: Counter[int] | None = None
        self._missing: list[tuple[str, tuple[str, ...], int]] | None = None
        # (lowest score, the position of the first term that has it)
        self._low: tuple[float, int | None] | None = None
        self._unreviewed: int | None = None

    @classmethod
    def of(cls, resolutions: Iterable[Resolution]) -> TermTable:
        """A table holding ``resolutions`` as they are (every term its own)."""
        items = tuple(resolutions)
        table = cls((None,) * len(items), (OWN,) * len(items), {}, dict(enumerate(items)))
        table._items = items
        return table

    # --- the sequence -----------------------------------------------------------------------------

    def _item(self, i: int) -> Resolution:
        key = self._keys[i]
        if key == OWN:
            return self._own[i]
        atoms = self._atoms[i]
        assert atoms is not None
        if key == ESTIMATED:
            return self._estimated[i].resolution(atoms)
        return self._shared[key].resolution(atoms)

    def resolutions(self) -> tuple[Resolution, ...]:
        """Every resolution, in term order (built on first call, then kept)."""
        if self._items is None:
            _atom_list(self._atoms)  # one conversion instead of one per term
            _key_list(self._keys)
            self._items = tuple(self._item(i) for i in range(len(self._keys)))
        return self._items

    def __len__(self) -> int:
        return len(self._keys)

    @overload
    def __getitem__(self, index: int) -> Resolution: ...

    @overload
    def __getitem__(self, index: slice) -> tuple[Resolution, ...]: ...

    def __getitem__(self, index: int | slice) -> Resolution | tuple[Resolution, ...]:
        return self.resolutions()[index]

    def __iter__(self) -> Iterator[Resolution]:
        return iter(self.resolutions())

    def __eq__(self, other: object) -> bool:
        if isinstance(other, TermTable):
            return self.resolutions() == other.resolutions()
        if isinstance(other, tuple):
            return self.resolutions() == other
        return NotImplemented

    __hash__ = None  # type: ignore[assignment]

    def __repr__(self) -> str:
        return f"TermTable({self.resolutions()!r})"

    def __reduce__(self) -> tuple[Any, ...]:
        return (TermTable.of, (self.resolutions(),))

    # --- totals without objects -------------------------------------------------------------------

    def _keys_used(self) -> Counter[int]:
        """Terms per key, in the order of each key's first term (made on first call, then kept)."""
        if self._key_counts is None:
            self._key_counts = Counter(_key_list(self._keys))
        return self._key_counts

    def _shared_totals(self) -> SharedTotals:
        """The totals of the terms with a shared outcome: the given ones, or one pass over the keys used."""
        if self._totals is not None:
            return self._totals
        shared = self._shared
        counts: dict[tuple[str, str], int] = {}
        missing: list[tuple[str, tuple[str, ...], int]] = []
        unreviewed = 0
        low = float("inf")
        low_key: int | None = None
        for key, n in self._keys_used().items():
            if key < 0:
                continue
            o = shared[key]
            kind_tier = o.kind_tier
            counts[kind_tier] = counts.get(kind_tier, 0) + n
            if o.score < low:  # the first key to reach the lowest score has the earliest term
                low, low_key = o.score, key
            if o.tier == "missing":
                missing.append((o.kind, o.classes, n))
            if o.unreviewed:
                unreviewed += n
        position = None if low_key is None else self._keys.index(low_key)
        return SharedTotals(counts, unreviewed, missing, (low, position))

    def _scan(self) -> None:
        """The totals for :meth:`tier_counts`, :meth:`missing_tuples`, :meth:`lowest` and
        :meth:`unreviewed`: those of the shared outcomes plus the estimated and own terms."""
        totals = self._shared_totals()
        counts = dict(totals.counts)
        unreviewed = totals.unreviewed
        for e, n in Counter(self._estimated.values()).items():
            counts[e.kind, e.tier] = counts.get((e.kind, e.tier), 0) + n
            if unreviewed_entry(e.tier, e.entry):
                unreviewed += n
        for r in self._own.values():
            kind_tier = (r.term.kind, r.tier)
            counts[kind_tier] = counts.get(kind_tier, 0) + 1
            if unreviewed_entry(r.tier, r.entry):
                unreviewed += 1
        self._counts = Counter(counts)
        self._missing = totals.missing
        self._low = totals.low
        self._unreviewed = unreviewed

    def tier_counts(self) -> Counter[tuple[str, str]]:
        """Number of terms per (kind, tier) (made on first call, then kept; do not change it)."""
        if self._counts is None:
            self._scan()
        assert self._counts is not None
        return self._counts

    def unreviewed(self) -> int:
        """Number of terms resolved from set entries the set marks ``estimated: true``."""
        if self._unreviewed is None:
            self._scan()
        assert self._unreviewed is not None
        return self._unreviewed

    def lowest(self) -> Resolution | None:
        """The resolution with the lowest score, the first in term order on ties; None without terms."""
        found = self._lowest()
        return None if found is None else self._item(found[1])

    def lowest_term(self) -> tuple[float, Term] | None:
        """The lowest score and the term that has it (the first in term order on ties), as :meth:`lowest`
        gives them, without building that term's resolution (an estimate's provenance details); None
        without terms."""
        found = self._lowest()
        if found is None:
            return None
        score, i = found
        key = self._keys[i]
        if key == OWN:
            return score, self._own[i].term
        atoms = self._atoms[i]
        assert atoms is not None
        of: SharedOutcome | SharedEstimate = (
            self._estimated[i] if key == ESTIMATED else self._shared[key]
        )
        return score, Term(of.kind, atoms, of.classes, of.order, of.ring)

    def _lowest(self) -> tuple[float, int] | None:
        """The lowest score and the position of its first term; None without terms."""
        if not self._keys:
            return None
        if self._low is None:
            self._scan()
        assert self._low is not None
        low, low_position = self._low
        others = list(self._own.items()) + list(self._estimated.items())
        if others:
            low = min(low, min(r.score for _, r in others))
        candidates = [i for i, r in others if r.score == low]
        if low_position is not None and self._shared[self._keys[low_position]].score == low:
            candidates.append(low_position)
        return low, min(candidates)

    def positions(self, tiers: Iterable[str] | None = None) -> list[int]:
        """Term positions, in order, of the terms whose tier is in ``tiers`` (all when None)."""
        n = len(self._keys)
        if tiers is None:
            return list(range(n))
        wanted = frozenset(tiers)
        hits = sum(count for (_, tier), count in self.tier_counts().items() if tier in wanted)
        if hits == 0:
            return []
        if hits == n:
            return list(range(n))
        shared = self._shared
        keys = _key_list(self._keys)
        used = self._key_counts if self._key_counts is not None else set(keys)
        keep = {k for k in used if k >= 0 and shared[k].tier in wanted}
        if "estimate" in wanted:
            keep.add(ESTIMATED)
        # the positions of the kept keys, picked in C (own terms have the key OWN, never kept here)
        picked = list(itertools.compress(range(n), map(keep.__contains__, keys)))
        own = [i for i, r in self._own.items() if r.tier in wanted]
        return sorted(picked + own) if own else picked

    def picked(self, positions: Iterable[int]) -> list[Resolution]:
        """The resolutions at ``positions`` (built for these terms only)."""
        return [self._item(i) for i in positions]

    def missing_tuples(self, elements: Sequence[str]) -> Counter[tuple[str, tuple[str, ...]]]:
        """Missing terms per (kind, classes), each unassigned ``?`` followed by its atom's element
        (``?P``); ``elements`` are the molecule's, by atom index. Shared outcomes never have a ``?`` (a term
        with an unclassified atom is its own), so they are counted without looking at their terms."""
        if self._missing is None:
            self._scan()
        assert self._missing is not None
        out: Counter[tuple[str, tuple[str, ...]]] = Counter()
        for kind, classes, n in self._missing:
            out[kind, classes] += n
        for r in self._own.values():
            if r.tier == "missing":
                out[r.term.kind, named_classes(r.term, elements)] += 1
        return out

    # --- output -----------------------------------------------------------------------------------

    def _listed(self, terms: str) -> Sequence[int]:
        if terms == "all":
            return range(len(self._keys))
        if terms == "problems":
            return self.positions(PROBLEM_TIERS)
        return ()

    def _outputs(
        self, pset: ParameterSet, positions: Sequence[int]
    ) -> dict[int, tuple[dict[str, Any], str, str]]:
        """The shared output of every key used at ``positions`` (made once per key and set)."""
        if not positions:
            return {}
        atoms, keys, shared = _atom_list(self._atoms), _key_list(self._keys), self._shared
        out: dict[int, tuple[dict[str, Any], str, str]] = {}
        for i in positions:
            key = keys[i]
            if key >= 0 and key not in out:
                a = atoms[i]
                assert a is not None
                out[key] = shared[key].output(pset, a)
        return out

    def listed(
        self, terms: str
    ) -> list[tuple[SharedOutcome | SharedEstimate | Resolution, tuple[int, ...]]]:
        """The listed terms (``terms``: all, problems, none), in order, as (their shared outcome, shared
        estimate or own resolution, atoms): what an output builds on without a dict per term."""
        positions = self._listed(terms)
        out: list[tuple[SharedOutcome | SharedEstimate | Resolution, tuple[int, ...]]] = []
        if not positions:
            return out
        atoms, keys = _atom_list(self._atoms), _key_list(self._keys)
        shared, own = self._shared, self._own
        for i in positions:
            key = keys[i]
            if key == OWN:
                out.append((own[i], own[i].term.atoms))
                continue
            a = atoms[i]
            assert a is not None
            out.append((self._estimated[i] if key == ESTIMATED else shared[key], a))
        return out

    def term_dicts(self, pset: ParameterSet, terms: str = "all") -> list[dict[str, Any]]:
        """The listed term dicts (``terms``: all, problems or none), as :func:`resolution_dict` makes them.

        A term with a shared outcome gets a copy of that outcome's template with its atoms put in; nested
        values are shared between such dicts: never mutate them.
        """
        positions = self._listed(terms)
        if not positions:
            return []
        keys = _key_list(self._keys)
        atoms = self._atoms
        # the atoms of every term but the own ones (whose atoms are in their resolution)
        rows: Sequence[Any]
        if isinstance(atoms, AtomRows):  # fresh lists, one per term: the dicts take them as they are
            rows, fresh = atoms.lists(), True
        else:
            rows, fresh = cast("Sequence[Any]", atoms), False  # None only at own terms' positions
        shared, own = self._shared, self._own
        templates: dict[int, dict[str, Any]] = {}  # this call's, saving a method call per term
        get = templates.get
        out: list[dict[str, Any]] = []
        append = out.append
        for i in positions:
            key = keys[i]
            if key >= 0:
                template = get(key)
                if template is None:
                    template = templates[key] = shared[key].term_template(pset, tuple(rows[i]))
                d = template.copy()
                d["atoms"] = rows[i] if fresh else list(rows[i])
                append(d)
            elif key == OWN:
                append(resolution_dict(own[i], pset))
            else:
                append(estimate_dict(self._estimated[i], pset, tuple(rows[i])))
        return out

    def terms_json(self, pset: ParameterSet, terms: str = "all") -> str:
        """The JSON list of the listed term dicts, byte-identical to compact-encoding :meth:`term_dicts`.

        Raises ``ValueError`` for a NaN or infinite value, as the encoder does.
        """
        positions = self._listed(terms)
        if not positions:
            return "[]"
        outputs = self._outputs(pset, positions)
        before = {k: v[1] for k, v in outputs.items()}
        after = {k: v[2] for k, v in outputs.items()}
        atoms, keys, own, estimated = (
            _atom_list(self._atoms),
            _key_list(self._keys),
            self._own,
            self._estimated,
        )
        texts = _ATOM_TEXT
        parts = [
            before[keys[i]] + (texts.get(atoms[i]) or _atom_text(atoms[i])) + after[keys[i]]  # type: ignore[arg-type]
            if keys[i] >= 0
            else estimate_json(estimated[i], pset, atoms[i])  # type: ignore[arg-type]
            if keys[i] == ESTIMATED
            else _compact(resolution_dict(own[i], pset))
            for i in positions
        ]
        return "[" + ",".join(parts) + "]"
