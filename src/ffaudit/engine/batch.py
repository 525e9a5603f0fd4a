"""The batched fast path: audits of many records at once, identical to :meth:`AuditContext.audit_record`.

:class:`FastAuditor` takes records in groups (default 50), joins their molecules into one RDKit molecule
(:mod:`ffaudit.molbatch`), matches each class rule once per group (:mod:`ffaudit.perceive.batch`), enumerates the
terms of the whole group with numpy (:mod:`ffaudit.terms_batch`) and resolves each distinct (kind, classes,
qualifiers) tuple once per batch (what the set tiers give depends on the tuple alone). It then builds, record
by record in input order, the same :class:`MoleculeAudit` the reference (``AuditContext.audit_record``)
builds: same classes, terms, resolutions, findings, status; the same ``to_dict`` output. It shares the
context's :class:`~ffaudit.resolve.driver.Resolver`; rule estimates are asked for term by term, in the
reference's order.

Where the reference would do something the batch cannot reproduce, the record goes the reference's way
(``context.audit_record``): a record without a molecule, a molecule whose valences were never computed or that
has no ring information, and any record whose batch step raises. A batch that fails as a whole (RDKit raises,
a pattern has too many matches) is audited record by record with the reference, so one bad record costs the
others nothing but time. Molecules whose hydrogens are not all plain one-bond hydrogens, and every molecule
when a class rule cannot be used without added hydrogens, are joined with their hydrogens added (the explicit
layout, slower but needing no rule translation).

Engines call :func:`audit_records` (or :meth:`FastAuditor.audit_records`) on a chunk's records.

Failure: nothing here raises for a bad record; every record gets exactly one audit, in input order.
"""

from __future__ import annotations

import gc
import itertools
import weakref
from collections.abc import Iterable, Iterator, Sequence
from dataclasses import dataclass
from typing import Any, cast

import numpy as np
from numpy.typing import NDArray
from rdkit import Chem, rdBase

from ffaudit.audit import AuditContext, MoleculeAudit, assemble_audit, with_proposals
from ffaudit.engine.keystore import KeyStore
from ffaudit.findings import Finding
from ffaudit.molbatch import (
    BondCodes,
    HydrogenGraph,
    MolBatch,
    MoleculeFacts,
    hydrogens_are_plain,
    join_molecules,
    read_facts,
)
from ffaudit.paramset.canonical import UNASSIGNED
from ffaudit.paramset.model import KINDS
from ffaudit.perceive.batch import BatchRules
from ffaudit.perceive.classes import Assignment
from ffaudit.perceive.propose import ProposedClass
from ffaudit.read.record import Record
from ffaudit.resolve.driver import Resolution, SharedEstimate
from ffaudit.resolve.estimate import AddedHydrogenTypes, MoleculeTypes
from ffaudit.terms import Term
from ffaudit.terms_batch import NO_QUALIFIER, KindTerms, enumerate_batch
from ffaudit.termtable import (
    ESTIMATED,
    OWN,
    AtomRows,
    KeyRows,
    SharedOutcome,
    SharedTotals,
    TermTable,
)

IntArray = NDArray[np.int64]

DEFAULT_BATCH_SIZE = 50
"""Molecules joined into one RDKit molecule (about 50 measured best; see benchmarks/bench_fast_path.py)."""

DEFAULT_BATCH_ATOMS = 4000
"""A batch is closed before it exceeds this many atoms (a huge molecule forms a batch of its own)."""

LAYOUTS = ("auto", "explicit")
"""``auto``: the heavy layout where the set's rules allow it; ``explicit``: always add hydrogens first."""

_SYMBOLS = tuple(Chem.GetPeriodicTable().GetElementSymbol(z) for z in range(119))


_PACK_BITS = 62
"""Bits of the int64 into which :meth:`FastAuditor._totals` packs (molecule, score rank, term position)."""


class _UseReference(Exception):
    """This record goes the reference's way."""


@dataclass(frozen=True)
class _KeyInfo:
    kind: str
    classes: tuple[str, ...]
    order: str | None
    ring: bool | None
    unassigned: bool


@dataclass
class _KindRows:
    kind: str
    bounds: list[int]  # the rows of molecule m: bounds[m] .. bounds[m + 1]
    atoms: IntArray  # (n_terms, atoms per term): each molecule's own atom indices
    keys: IntArray  # the key of each row
    singles: list[int]  # rows of the terms resolved one by one (estimates, unclassified atoms), in order
    single_keys: list[int]  # their keys
    single_atoms: list[list[int]]  # their atoms
    single_bounds: list[int]  # the singles of molecule m: single_bounds[m] .. single_bounds[m + 1]
    molecule: IntArray  # the molecule of each row
    dense: IntArray  # the dense number of each row's key (the auditor's KeyStore)


@dataclass
class _Done:
    """The batch step's results for one group of molecules."""

    batch: MolBatch
    graph: HydrogenGraph
    atom_rule: list[int]
    rows: list[_KindRows]
    fragments: list[int]
    totals: list[SharedTotals]  # per molecule: the totals of its terms with a shared outcome


@dataclass
class _Item:
    position: int
    record: Record
    facts: MoleculeFacts
    molh: Chem.Mol | None


class FastAuditor:
    """Batched audits for one :class:`AuditContext` (see the module docstring).

    ``batch_size``: molecules per joined molecule; ``max_batch_atoms``: atom cap per batch; ``layout``: one of
    :data:`LAYOUTS`. Raises ``ValueError`` for a bad argument.
    """

    def __init__(
        self,
        context: AuditContext,
        batch_size: int = DEFAULT_BATCH_SIZE,
        max_batch_atoms: int = DEFAULT_BATCH_ATOMS,
        layout: str = "auto",
    ) -> None:
        if batch_size < 1 or max_batch_atoms < 1:
            raise ValueError("batch_size and max_batch_atoms must be at least 1")
        if layout not in LAYOUTS:
            raise ValueError(f"unknown layout {layout!r} (expected one of {', '.join(LAYOUTS)})")
        self.context = context
        self.batch_size = batch_size
        self.max_batch_atoms = max_batch_atoms
        self.layout = layout
        self._setup()

    def _setup(self) -> None:
        context = self.context
        self.batch_rules = BatchRules(context.rules)
        self.heavy = self.layout == "auto" and self.batch_rules.heavy_steps is not None
        rules = context.rules.rules
        ids = sorted({r.class_id for r in rules} | {UNASSIGNED})
        self._ids = ids
        rank = {cid: i for i, cid in enumerate(ids)}
        # index -1 (no rule) picks the last entry, the rank of "?"
        self._rank_of_rule = np.array(
            [rank[r.class_id] for r in rules] + [rank[UNASSIGNED]], np.int64
        )
        self._unassigned_rank = rank[UNASSIGNED]
        self._rank_bits = max(1, len(ids).bit_length())
        self._bond_codes = BondCodes()
        self._key_info: dict[int, _KeyInfo] = {}
        self._outcomes: dict[int, SharedOutcome | None] = {}
        self._store = KeyStore()  # every key's dense number and what the per-batch totals read of it
        self._assignments: dict[tuple[int, int], Assignment] = {}
        self._findings: dict[tuple[int, str], Finding] = {}
        self._estimate = "estimate" in context.resolver.tiers
        self._usable = 4 * self._rank_bits + 3 + 8 + 2 <= 62
        self._header_ok = context.pset.header.out_of_plane_centres in ("none", "trigonal", "planar")

    def __getstate__(self) -> dict[str, Any]:
        return {
            "context": self.context,
            "batch_size": self.batch_size,
            "max_batch_atoms": self.max_batch_atoms,
            "layout": self.layout,
        }

    def __setstate__(self, state: dict[str, Any]) -> None:
        self.__dict__.update(state)
        self._setup()

    # --- public -----------------------------------------------------------------------------------

    def audit_records(self, records: Iterable[Record]) -> Iterator[MoleculeAudit]:
        """One audit per record, in input order, records taken ``batch_size`` at a time."""
        iterator = iter(records)
        while True:
            chunk = list(itertools.islice(iterator, self.batch_size))
            if not chunk:
                return
            yield from self.audit_batch(chunk)

    def audit_batch(self, records: Sequence[Record]) -> list[MoleculeAudit]:
        """Audits of ``records`` (any number; joined ``batch_size`` at a time), in the same order.

        The cyclic garbage collector is paused while the audits are built: they are hundreds of thousands of
        small acyclic objects, and collections triggered by their allocation would scan every live object
        again and again (measured: half the time of building them). It is switched back on before returning,
        also on error. RDKit's log is silenced meanwhile (its messages about records that go the reference's
        way would otherwise reach stderr; the audits carry the reasons).
        """
        paused = gc.isenabled()
        if paused:
            gc.disable()
        try:
            with rdBase.BlockLogs():
                return self._audit_batch(records)
        finally:
            if paused:
                gc.enable()

    def _audit_batch(self, records: Sequence[Record]) -> list[MoleculeAudit]:
        context = self.context
        results: list[MoleculeAudit | None] = [None] * len(records)
        if not (self._usable and self._header_ok):
            return [context.audit_record(r) for r in records]
        heavy: list[_Item] = []
        explicit: list[_Item] = []
        for position, record in enumerate(records):
            item = self._prepare(position, record)
            if item is None:
                continue
            (explicit if item.molh is not None else heavy).append(item)
        done: dict[int, tuple[_Done, int] | None] = {}
        for group in (heavy, explicit):
            for batch_items in self._batches(group):
                outcome = self._run_batch(batch_items)
                for m, item in enumerate(batch_items):
                    done[item.position] = None if outcome is None else (outcome, m)
        for position, record in enumerate(records):
            if position not in done:
                results[position] = context.audit_record(record)
                continue
            entry = done[position]
            item_result = None
            if entry is not None:
                try:
                    item_result = self._finish(record, entry[0], entry[1])
                except Exception:  # the reference reproduces whatever happens to this record
                    item_result = None
            results[position] = (
                item_result if item_result is not None else context.audit_record(record)
            )
        return [r for r in results if r is not None]

    # --- steps ------------------------------------------------------------------------------------

    def _prepare(self, position: int, record: Record) -> _Item | None:
        """The record's facts for the batch, or None when it goes the reference's way."""
        mol = record.mol
        if mol is None:
            return None
        try:
            if mol.NeedsUpdatePropertyCache():
                raise _UseReference
            mol.GetRingInfo().NumRings()  # raises when the molecule has no ring information
            facts = read_facts(mol, hydrogens_added=False)
            if self.heavy and hydrogens_are_plain(facts):
                return _Item(position, record, facts, None)
            molh = Chem.AddHs(mol)
            return _Item(position, record, read_facts(molh, hydrogens_added=True), molh)
        except Exception:
            return None

    def _batches(self, items: list[_Item]) -> Iterator[list[_Item]]:
        current: list[_Item] = []
        atoms = 0
        for item in items:
            n = item.facts.n_atoms + sum(item.facts.new_h)
            if current and (len(current) >= self.batch_size or atoms + n > self.max_batch_atoms):
                yield current
                current, atoms = [], 0
            current.append(item)
            atoms += n
        if current:
            yield current

    def _run_batch(self, items: list[_Item]) -> _Done | None:
        try:
            return self._compute(items)
        except Exception:  # every record of the batch then goes the reference's way
            return None

    def _compute(self, items: list[_Item]) -> _Done:
        explicit = items[0].molh is not None
        batch = join_molecules(
            [item.facts for item in items],
            added_h=explicit,
            bond_codes=self._bond_codes,
            copy_ring_info=self.batch_rules.needs_ring_info,
        )
        rule_of, h_rule_of = self.batch_rules.classify(batch)
        graph = batch.hydrogen_graph()
        source = graph.source
        atom_rule = np.empty(graph.n_atoms, dtype=np.int64)
        from_joined = source >= 0
        atom_rule[from_joined] = rule_of[source[from_joined]]
        added = ~from_joined
        atom_rule[added] = h_rule_of[-1 - source[added]]
        if not explicit:
            neighbour = batch.hydrogen_neighbour()
            joined_h = from_joined & (graph.z == 1)
            atom_rule[joined_h] = h_rule_of[neighbour[source[joined_h]]]
        rank = self._rank_of_rule[atom_rule]
        kinds = enumerate_batch(graph, rank, self.context.pset.header, self.context.kinds)
        rows = [self._rows(kt, graph, batch.n_mols) for kt in kinds]
        return _Done(
            batch,
            graph,
            atom_rule.tolist(),
            rows,
            batch.fragments_per_molecule().tolist(),
            self._totals(rows, batch.n_mols),
        )

    def _rows(self, kt: KindTerms, graph: HydrogenGraph, n_mols: int) -> _KindRows:
        kind_index = KINDS.index(kt.kind)
        n = len(kt)
        bounds = kt.bounds(n_mols)
        if n == 0:
            none = [0] * (n_mols + 1)
            empty = np.zeros(0, np.int64)
            return _KindRows(
                kt.kind,
                bounds.tolist(),
                np.zeros((0, 1), np.int64),
                empty,
                [],
                [],
                [],
                none,
                empty,
                empty,
            )
        local = kt.atoms - graph.starts[kt.molecule][:, None]
        bits = self._rank_bits
        key = np.full(n, kind_index, dtype=np.int64)
        for c in range(4):
            column = kt.ranks[:, c] if c < kt.ranks.shape[1] else np.zeros(n, dtype=np.int64)
            key = (key << bits) | column
        key = (key << 8) | (kt.code + 1)
        key = (key << 2) | (kt.ring + 1)
        distinct, first, inverse = np.unique(key, return_index=True, return_inverse=True)
        # each new tuple is resolved once, for the whole batch (outcomes depend on the tuple alone); None
        # marks the tuples whose terms are resolved one by one
        store = self._store
        numbers = store.numbers(distinct)
        new = np.flatnonzero(numbers < 0)
        if len(new):
            keys = distinct[new].tolist()
            found_outcomes = [
                self._outcome(kt, local, k, row)
                for k, row in zip(keys, first[new].tolist(), strict=True)
            ]
            numbers[new] = store.add(keys, found_outcomes)
        inverse = inverse.reshape(-1)
        *_, one_by_one = store.columns()
        single = one_by_one[numbers]
        if single.any():
            rows = np.flatnonzero(single[inverse])
            singles, single_atoms = rows.tolist(), local[rows].tolist()
            single_keys = key[rows].tolist()
            single_bounds = np.searchsorted(rows, bounds).tolist()
        else:
            singles, single_atoms, single_bounds = [], [], [0] * (n_mols + 1)
            single_keys = []
        return _KindRows(
            kt.kind,
            bounds.tolist(),
            local,
            key,
            singles,
            single_keys,
            single_atoms,
            single_bounds,
            kt.molecule,
            numbers[inverse],
        )

    def _outcome(self, kt: KindTerms, local: IntArray, key: int, row: int) -> SharedOutcome | None:
        """The shared outcome of a key not seen before (resolved on the terms of ``row``), or None when its
        terms are resolved one by one (an unclassified atom, or a missing tuple to estimate term by
        term); noted in ``_key_info`` and ``_outcomes``."""
        info = self._key_info[key] = self._describe(kt, row)
        outcome: SharedOutcome | None = None
        if not info.unassigned:  # the reference never shares those: the reason names the atoms
            atoms = tuple(local[row].tolist())
            term = Term(kt.kind, atoms, info.classes, info.order, info.ring)
            found = self.context.resolver.resolve(term, None)
            if not (found.tier == "missing" and self._estimate):
                outcome = SharedOutcome.of(found)
        self._outcomes[key] = outcome
        return outcome

    def _totals(self, rows: list[_KindRows], n_mols: int) -> list[SharedTotals]:
        """Per molecule of the batch, the totals of its terms that have a shared outcome (the terms resolved
        one by one are left out): counted for the whole batch with numpy, equal to what
        :class:`TermTable` counts term by term."""
        molecules, numbers, positions = [], [], []
        offset = np.zeros(n_mols, np.int64)  # terms of each molecule in the kinds before
        for r in rows:
            if not len(r.dense):
                continue
            bounds = np.asarray(r.bounds, np.int64)
            molecules.append(r.molecule)
            numbers.append(r.dense)
            positions.append(np.arange(len(r.dense)) - bounds[r.molecule] + offset[r.molecule])
            offset += np.diff(bounds)
        empty = SharedTotals({}, 0, [], (float("inf"), None))
        if not molecules:
            return [empty] * n_mols
        store = self._store
        kt_of, rank_of, missing_of, unreviewed_of, single_of = store.columns()
        mol = np.concatenate(molecules)
        number = np.concatenate(numbers)
        position = np.concatenate(positions)
        keep = ~single_of[number]
        mol, number, position = mol[keep], number[keep], position[keep]
        if not len(mol):
            return [empty] * n_mols
        kind_tiers = store.kind_tiers
        n_kt = len(kind_tiers)
        table = np.bincount(mol * n_kt + kt_of[number], minlength=n_mols * n_kt)
        counts: list[dict[tuple[str, str], int]] = [{} for _ in range(n_mols)]
        cells = np.flatnonzero(table)
        for cell, n in zip(cells.tolist(), table[cells].tolist(), strict=True):
            counts[cell // n_kt][kind_tiers[cell % n_kt]] = n
        # the lowest score of each molecule, and the first term that has it: the smallest (molecule, score
        # rank, position), packed into one integer per term and sorted once
        rank = rank_of[number]
        p_bits = max(1, int(position.max()).bit_length())
        r_bits = max(1, len(store.scores).bit_length())
        low: list[tuple[float, int | None]] = [(float("inf"), None)] * n_mols
        scores = store.scores
        if p_bits + r_bits + max(1, n_mols.bit_length()) <= _PACK_BITS:
            packed = np.sort((mol << (r_bits + p_bits)) | (rank << p_bits) | position)
            head = packed >> (r_bits + p_bits)
            first = packed[np.flatnonzero(np.r_[True, head[1:] != head[:-1]])].tolist()
            r_mask, p_mask = (1 << r_bits) - 1, (1 << p_bits) - 1
            for value in first:
                m, r, p = value >> (r_bits + p_bits), (value >> p_bits) & r_mask, value & p_mask
                low[m] = (scores[r], p)
        else:  # too many terms or molecules to pack
            order = np.lexsort((position, rank, mol))
            at = order[np.flatnonzero(np.r_[True, mol[order][1:] != mol[order][:-1]])]
            for m, r, p in zip(
                mol[at].tolist(), rank[at].tolist(), position[at].tolist(), strict=True
            ):
                low[m] = (scores[r], p)
        unreviewed = [0] * n_mols
        flagged = unreviewed_of[number]
        if flagged.any():
            unreviewed = np.bincount(mol[flagged], minlength=n_mols).tolist()
        missing: list[list[tuple[str, tuple[str, ...], int]]] = [[] for _ in range(n_mols)]
        absent = missing_of[number]
        if absent.any():
            mm, mn, mp = mol[absent], number[absent], position[absent]
            _, at, n_terms = np.unique(
                mm * len(single_of) + mn, return_index=True, return_counts=True
            )
            by_first = np.lexsort((mp[at], mm[at]))  # each molecule's tuples in order of first term
            for m, d, n in zip(
                mm[at][by_first].tolist(),
                mn[at][by_first].tolist(),
                n_terms[by_first].tolist(),
                strict=True,
            ):
                kind, classes = store.missing_tuples[d]
                missing[m].append((kind, classes, n))
        return [
            SharedTotals(counts[m], unreviewed[m], missing[m], low[m]) for m in range(n_mols)
        ]

    def _describe(self, kt: KindTerms, row: int) -> _KeyInfo:
        ranks = kt.ranks[row].tolist()
        classes = tuple(self._ids[r] for r in ranks)
        code = int(kt.code[row])
        ring = int(kt.ring[row])
        order = None if code == NO_QUALIFIER else self._bond_codes.names[code]
        in_ring = None if ring == NO_QUALIFIER else bool(ring)
        return _KeyInfo(kt.kind, classes, order, in_ring, self._unassigned_rank in ranks)

    # --- the audit of one record --------------------------------------------------------------------

    def _finish(self, record: Record, done: _Done, m: int) -> MoleculeAudit:
        context = self.context
        resolver = context.resolver
        batch, graph = done.batch, done.graph
        item_facts = batch.facts[m]
        lo, hi = int(graph.starts[m]), int(graph.starts[m + 1])
        mol = record.mol
        assert mol is not None
        molh_cache: list[Chem.Mol] = []

        def molh() -> Chem.Mol:
            if not molh_cache:
                molh_cache.append(item_facts.mol if batch.added_h else Chem.AddHs(mol))
            return molh_cache[0]

        smiles = _smiles(mol)
        z_local = graph.z[lo:hi].tolist()
        if 0 in z_local:
            elements = tuple(a.GetSymbol() for a in molh().GetAtoms())
        else:
            elements = tuple(map(_SYMBOLS.__getitem__, z_local))
        # classes: one Assignment object per (atom index, rule), kept (the same pairs recur in every batch)
        atom_rules = done.atom_rule[lo:hi]
        cache = self._assignments
        assignments = [
            cache.get(pair) or self._assignment(*pair) for pair in enumerate(atom_rules)
        ]
        findings: list[Finding] = []
        if min(atom_rules, default=0) < 0:
            findings = [
                self._unclassified(local, elements[local])
                for local, rule_index in enumerate(atom_rules)
                if rule_index < 0
            ]
        # terms and resolutions, in the reference's order
        types_cache: list[MoleculeTypes | None] = []

        def types() -> MoleculeTypes | None:
            if not types_cache:
                found: MoleculeTypes | None = None
                if self._estimate:  # in a heavy batch, the typing of Chem.AddHs(mol) without the copy
                    found = (
                        MoleculeTypes(item_facts.mol)
                        if batch.added_h
                        else AddedHydrogenTypes(mol, item_facts.new_h)
                    )
                types_cache.append(found)
            return types_cache[0]

        # terms: the tuples were resolved per batch (_rows); estimates and terms with an unclassified atom
        # are resolved here, term by term
        outcomes = self._outcomes
        infos = self._key_info
        atom_parts: list[IntArray] = []
        key_parts: list[IntArray] = []
        replaced: dict[int, int] = {}
        n_terms = 0
        own: dict[int, Resolution] = {}
        estimated: dict[int, SharedEstimate] = {}
        for rows in done.rows:
            start, end = rows.bounds[m], rows.bounds[m + 1]
            if start == end:
                continue
            offset = n_terms - start  # term row r of the batch is term offset + r of this molecule
            n_terms += end - start
            atom_parts.append(rows.atoms[start:end])
            key_parts.append(rows.keys[start:end])
            first, last = rows.single_bounds[m], rows.single_bounds[m + 1]
            if first == last:
                continue
            for row, key, atoms in zip(
                rows.singles[first:last],
                rows.single_keys[first:last],
                rows.single_atoms[first:last],
                strict=True,
            ):
                i = offset + row
                info = infos[key]
                term = Term(rows.kind, tuple(atoms), info.classes, info.order, info.ring)
                found = (
                    resolver.estimate(term, cast("MoleculeTypes", types()))
                    if self._estimate
                    else resolver.resolve(term, None)
                )
                if isinstance(found, SharedEstimate):
                    estimated[i] = found
                    replaced[i] = ESTIMATED
                else:
                    own[i] = found
                    replaced[i] = OWN
        # every key not replaced by OWN or ESTIMATED has a shared outcome
        resolved = TermTable(
            AtomRows(atom_parts),
            KeyRows(key_parts, replaced),
            cast("dict[int, SharedOutcome]", outcomes),
            own,
            estimated,
            done.totals[m],
        )
        proposed: tuple[ProposedClass, ...] = ()
        if findings:  # only unclassified-atom findings here
            findings, proposed = with_proposals(molh(), findings)
        return assemble_audit(
            record,
            smiles=smiles,
            assignments=tuple(assignments),
            resolutions=resolved,
            findings=findings,
            fragments=done.fragments[m],
            elements=elements,
            proposed=proposed,
        )

    def _assignment(self, atom: int, rule_index: int) -> Assignment:
        """The class assignment of ``atom`` by rule ``rule_index`` (-1: no rule matched), made once."""
        if rule_index < 0:
            assignment = Assignment(atom, None, None, None)
        else:
            rule = self.context.rules.rules[rule_index]
            assignment = Assignment(
                atom, rule.class_id, f"{rule.class_id}/{rule.number}", rule.location
            )
        self._assignments[atom, rule_index] = assignment
        return assignment

    def _unclassified(self, atom: int, element: str) -> Finding:
        """The finding :meth:`ClassRules.perceive` makes for an atom no rule matches (kept per atom and
        element: the same atoms recur across molecules)."""
        key = (atom, element)
        finding = self._findings.get(key)
        if finding is None:
            finding = self.context.rules.unclassified_finding(atom, element)
            self._findings[key] = finding
        return finding


def _smiles(mol: Chem.Mol) -> str:
    """The audit's SMILES, as the reference writes it (``RemoveHs`` skipped when there are no hydrogen atoms:
    it would change nothing)."""
    if mol.GetNumHeavyAtoms() == mol.GetNumAtoms():
        return str(Chem.MolToSmiles(mol))
    try:
        return str(Chem.MolToSmiles(Chem.RemoveHs(mol)))
    except Exception:
        return str(Chem.MolToSmiles(mol))


_AUDITORS: weakref.WeakKeyDictionary[AuditContext, FastAuditor] = weakref.WeakKeyDictionary()


def fast_auditor(context: AuditContext) -> FastAuditor:
    """The :class:`FastAuditor` of ``context`` (made on first use, kept while the context lives)."""
    auditor = _AUDITORS.get(context)
    if auditor is None:
        auditor = FastAuditor(context)
        _AUDITORS[context] = auditor
    return auditor


def audit_records(context: AuditContext, records: Iterable[Record]) -> Iterator[MoleculeAudit]:
    """The batched equivalent of ``(context.audit_record(r) for r in records)``: the same audits, in order.

    This is the call an engine makes per chunk.
    """
    return fast_auditor(context).audit_records(records)
