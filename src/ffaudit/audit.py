"""The audit driver: one record in, one :class:`MoleculeAudit` out; a library in, a stream of them out.

Per record: add the missing hydrogens (RDKit ``AddHs``: atoms as read first, added hydrogens after), perceive
classes, enumerate terms, resolve each term, count, decide the status:

- ``covered``: every term has a value from the set (exact, wildcard or parent tier);
- ``estimated``: every term has a value, some only from an estimate (analogy or rule estimate);
- ``incomplete``: some term has no value;
- ``unreadable``: the record could not be parsed, sanitised or audited (the reason says which).

Nothing here raises for a bad record: it becomes an ``unreadable`` audit with the reason.
"""

from __future__ import annotations

import statistics
from array import array
from collections import Counter
from collections.abc import Iterable, Iterator, Mapping, Sequence
from dataclasses import dataclass, field
from functools import cached_property
from operator import attrgetter
from typing import Any, cast

from rdkit import Chem

from ffaudit.findings import Finding, Severity
from ffaudit.paramset.model import KINDS, ParameterSet
from ffaudit.perceive.classes import Assignment, ClassRules
from ffaudit.perceive.propose import ProposedClass, propose_class
from ffaudit.read.record import Record
from ffaudit.resolve.driver import Resolution, Resolver
from ffaudit.resolve.estimate import MoleculeTypes
from ffaudit.score import RESOLVED_FROM_SET, TIERS
from ffaudit.termdict import rounded, term_ref
from ffaudit.terms import Term, enumerate_terms
from ffaudit.termtable import TermTable

_CLASS_ID = attrgetter("class_id")
"""The class id of an :class:`Assignment` (None: the atom has no class)."""

STATUSES: tuple[str, ...] = ("covered", "estimated", "incomplete", "unreadable")
TERMS_MODES: tuple[str, ...] = ("all", "problems", "none")

CAUTIONS: tuple[str, ...] = (
    "A coverage check is not a validation of accuracy: a covered term can still carry a poor parameter "
    "for this molecule.",
    "Fallback (wildcard, parent) and estimated parameters must be reviewed before production simulations.",
)


def cautions_for(pset: ParameterSet) -> list[str]:
    """The cautions every report carries, plus the demonstration notice when the set is one."""
    notes = list(CAUTIONS)
    if pset.header.demonstration:
        notes.insert(
            0,
            f"The parameter set {pset.header.name!r} is a demonstration set derived from published rules; "
            "do not use it for production simulations.",
        )
    return notes


@dataclass
class TierCounts:
    """Term counts by kind and tier; ``+`` adds them, so library totals are ``sum()`` over molecules."""

    counts: dict[str, dict[str, int]] = field(default_factory=dict)

    def add(self, kind: str, tier: str, n: int = 1) -> None:
        per_kind = self.counts.get(kind)
        if per_kind is None:
            per_kind = self.counts[kind] = dict.fromkeys(TIERS, 0)
        per_kind[tier] += n

    def __add__(self, other: TierCounts) -> TierCounts:
        result = TierCounts({k: dict(v) for k, v in self.counts.items()})
        for kind, tiers in other.counts.items():
            for tier, n in tiers.items():
                result.add(kind, tier, n)
        return result

    def __radd__(self, other: int) -> TierCounts:  # lets sum() start from 0
        return self if other == 0 else NotImplemented

    def total(self, tier: str | None = None) -> int:
        return sum(
            n for tiers in self.counts.values() for t, n in tiers.items() if tier in (None, t)
        )

    def to_dict(self) -> dict[str, dict[str, int]]:
        return {kind: dict(self.counts[kind]) for kind in KINDS if kind in self.counts}


@dataclass(frozen=True)
class MoleculeAudit:
    """The audit of one record. ``to_dict`` gives the machine-output object of the output contract."""

    record: Record
    status: str
    reason: str | None
    smiles: str | None = None
    assignments: tuple[Assignment, ...] = ()
    resolutions: Sequence[Resolution] = ()
    findings: tuple[Finding, ...] = ()
    fragments: int = 0
    elements: tuple[str, ...] = ()
    proposed: tuple[ProposedClass, ...] = ()

    def __post_init__(self) -> None:
        # the reference path and hand-made audits give a plain sequence
        if not isinstance(self.resolutions, TermTable):
            object.__setattr__(self, "resolutions", TermTable.of(self.resolutions))

    @property
    def table(self) -> TermTable:
        """The resolutions as a :class:`TermTable` (always: ``__post_init__`` wraps any sequence)."""
        return cast(TermTable, self.resolutions)

    @property
    def counts(self) -> TierCounts:
        counts = TierCounts()
        for (kind, tier), n in self.table.tier_counts().items():
            counts.add(kind, tier, n)
        return counts

    @cached_property
    def score_resolution(self) -> Resolution | None:
        """The term that sets the molecule's score (the lowest; first in term order on ties)."""
        return self.table.lowest()

    @cached_property
    def _score_term(self) -> tuple[float, Term] | None:
        """The score and the term of :attr:`score_resolution`, found without building its resolution."""
        return self.table.lowest_term()

    @property
    def score(self) -> float | None:
        worst = self._score_term
        return None if worst is None else worst[0]

    def head(self) -> dict[str, Any]:
        """The molecule dict without its ``terms`` (which come last); a new dict at each call."""
        rec = self.record
        worst = self._score_term
        out: dict[str, Any] = {
            "index": rec.index,
            "source": rec.source_dict(),
            "name": rec.name,
            "smiles": self.smiles,
            "status": self.status,
            "reason": self.reason,
            "score": None if worst is None else worst[0],
            "score_term": None if worst is None else term_ref(worst[1]),
            "atoms": len(self.assignments),
            "fragments": self.fragments,
            "atom_classes": list(map(_CLASS_ID, self.assignments)),
            "counts": self.counts.to_dict(),
            "findings": [f.to_dict() for f in self.findings],
        }
        if self.proposed:
            out["proposed_classes"] = [p.to_dict() for p in self.proposed]
        if rec.meta:
            out["meta"] = dict(rec.meta)
        return out

    def to_dict(self, pset: ParameterSet, terms: str = "all") -> dict[str, Any]:
        """The molecule object of the output contract; ``terms`` (all, problems, none) picks the listed terms."""
        out = self.head()
        out["terms"] = self.table.term_dicts(pset, terms)
        return out

    def to_json(
        self, pset: ParameterSet, terms: str = "all", head: Mapping[str, Any] | None = None
    ) -> str:
        """One-line JSON text of :meth:`to_dict`, byte for byte as the JSONL encoder writes it, made without
        building the term dicts; ``head``, when given, is this audit's :meth:`head` (made already for
        another output). Raises ``ValueError`` for a NaN or infinite value."""
        from ffaudit.report.jsonl import dump_compact

        text = dump_compact(self.head() if head is None else head)
        return text[:-1] + ',"terms":' + self.table.terms_json(pset, terms) + "}"


def estimated_entry_finding(resolutions: Sequence[Resolution]) -> Finding | None:
    """The warning for terms resolved from entries the set itself marks ``estimated: true``; None if none."""
    unreviewed = _table(resolutions).unreviewed()
    if not unreviewed:
        return None
    return Finding(
        code="estimated-entry",
        severity=Severity.WARNING,
        message=f"{unreviewed} terms use entries the set marks as estimated (not reviewed)",
        cause="estimated-entry",
        hint="review the entries marked 'estimated: true' before production simulations",
    )


def with_proposals(
    molh: Chem.Mol, findings: Sequence[Finding]
) -> tuple[list[Finding], tuple[ProposedClass, ...]]:
    """A proposed class for each unclassified atom of ``molh`` (explicit hydrogens), and ``findings`` with
    the proposal added to those atoms' hints (both audit paths call this)."""
    proposed = tuple(
        propose_class(molh, f.atoms[0]) for f in findings if f.code == "unclassified-atom"
    )
    if not proposed:
        return list(findings), proposed
    by_atom = {p.atom: p for p in proposed}
    return [
        f.with_(
            hint=f"{f.hint}; proposed class {by_atom[f.atoms[0]].id}: {by_atom[f.atoms[0]].smarts}"
        )
        if f.code == "unclassified-atom"
        else f
        for f in findings
    ], proposed


def assemble_audit(
    record: Record,
    *,
    smiles: str | None,
    assignments: tuple[Assignment, ...],
    resolutions: Sequence[Resolution],
    findings: Iterable[Finding],
    fragments: int,
    elements: tuple[str, ...],
    proposed: tuple[ProposedClass, ...],
) -> MoleculeAudit:
    """The audit of an audited record from its parts (both audit paths end here): adds the
    estimated-entry warning, stamps every finding with the molecule and record, decides the status."""
    table = _table(resolutions)
    notes = list(findings)
    unreviewed = estimated_entry_finding(table)
    if unreviewed is not None:
        notes.append(unreviewed)
    notes = [f.with_(molecule=record.name, record=record.record) for f in notes]
    status, reason = decide_status(table, notes)
    return MoleculeAudit(
        record=record,
        status=status,
        reason=reason,
        smiles=smiles,
        assignments=assignments,
        resolutions=table,
        findings=tuple(notes),
        fragments=fragments,
        elements=elements,
        proposed=proposed,
    )


class AuditContext:
    """Everything compiled once per parameter set: class rules, lookup index, which kinds to enumerate.

    Picklable, so one context can be shipped to each worker process.
    """

    def __init__(
        self,
        pset: ParameterSet,
        tiers: Iterable[str] = ("wildcard", "parent", "analogy", "estimate"),
    ) -> None:
        self.pset = pset
        self.rules = ClassRules(pset)
        self.resolver = Resolver(pset, tiers=frozenset(tiers))
        optional = ("charge_increment", "stretch_bend")
        self.kinds = tuple(k for k in KINDS if k not in optional or pset.entries(k))

    def audit_record(self, record: Record) -> MoleculeAudit:
        """Audit one record; any failure becomes an ``unreadable`` audit with the reason."""
        if record.mol is None:
            return MoleculeAudit(record, "unreadable", record.error or "unreadable record")
        try:
            return self._audit(record, record.mol)
        except Exception as exc:  # a molecule RDKit can read but not process must not stop the run
            return MoleculeAudit(record, "unreadable", f"audit failed: {type(exc).__name__}: {exc}")

    def _audit(self, record: Record, mol: Chem.Mol) -> MoleculeAudit:
        try:
            smiles = Chem.MolToSmiles(Chem.RemoveHs(mol))
        except Exception:
            smiles = Chem.MolToSmiles(mol)
        molh = Chem.AddHs(mol)
        assignments, findings = self.rules.perceive(molh)
        class_ids = [a.class_id for a in assignments]
        terms = enumerate_terms(molh, class_ids, self.pset.header, self.kinds)
        types = MoleculeTypes(molh) if "estimate" in self.resolver.tiers else None
        resolutions = tuple(self.resolver.resolve(t, types) for t in terms)
        findings, proposed = with_proposals(molh, findings)
        return assemble_audit(
            record,
            smiles=smiles,
            assignments=tuple(assignments),
            resolutions=resolutions,
            findings=findings,
            fragments=len(Chem.GetMolFrags(molh)),
            elements=tuple(a.GetSymbol() for a in molh.GetAtoms()),
            proposed=proposed,
        )


def decide_status(
    resolutions: Sequence[Resolution], findings: Sequence[Finding]
) -> tuple[str, str | None]:
    """Status and reason from a molecule's resolutions (pure function)."""
    counts = _table(resolutions).tier_counts()
    missing: Counter[str] = Counter()
    for (kind, tier), n in counts.items():
        if tier == "missing":
            missing[kind] += n
    if missing:
        parts = [
            f"{n} {kind}" for kind, n in sorted(missing.items(), key=lambda kv: KINDS.index(kv[0]))
        ]
        reason = f"{sum(missing.values())} terms without a parameter ({', '.join(parts)})"
        unclassified = [f for f in findings if f.code == "unclassified-atom"]
        if unclassified:
            reason += f"; {len(unclassified)} atoms without a class"
        return "incomplete", reason
    estimated = sum(n for (_, tier), n in counts.items() if tier not in RESOLVED_FROM_SET)
    if estimated:
        return "estimated", f"{estimated} terms resolved only by estimates"
    return "covered", None


class Summary:
    """Library totals, fed one audit at a time in input order. ``to_dict`` gives the summary object."""

    def __init__(self, pset: ParameterSet, top: int = 20) -> None:
        self.pset = pset
        self.top = top
        self.records = 0
        self.status: Counter[str] = Counter()
        self.counts = TierCounts()
        self.scores = array("d")
        self.missing_molecules: Counter[tuple[str, tuple[str, ...]]] = Counter()
        self.missing_terms: Counter[tuple[str, tuple[str, ...]]] = Counter()
        self.assigned: set[str] = set()
        self.elements_without_class: Counter[str] = Counter()
        self.unreadable: list[dict[str, Any]] = []
        self._known_elements = {c.element for c in pset.classes}

    def add(self, audit: MoleculeAudit) -> None:
        self.records += 1
        self.status[audit.status] += 1
        if audit.status == "unreadable":
            self.unreadable.append(
                {"index": audit.record.index, **audit.record.source_dict(), "reason": audit.reason}
            )
            return
        table = audit.table
        for (kind, tier), n in table.tier_counts().items():
            self.counts.add(kind, tier, n)
        if audit.score is not None:
            self.scores.append(audit.score)
        missing = table.missing_tuples(audit.elements)
        self.missing_terms.update(missing)
        self.missing_molecules.update(missing.keys())
        classes = list(map(_CLASS_ID, audit.assignments))
        self.assigned.update(classes)
        if None in classes:  # some atoms have no class
            self.assigned.discard(None)
            lacking = {
                audit.elements[a.atom]
                for a in audit.assignments
                if a.class_id is None and audit.elements[a.atom] not in self._known_elements
            }
            for element in lacking:
                self.elements_without_class[element] += 1

    def merge(self, other: Summary) -> None:
        """Add another summary's totals (of records that come *after* this one's, for the unreadable list)."""
        self.records += other.records
        self.status.update(other.status)
        self.counts = self.counts + other.counts
        self.scores.extend(other.scores)
        self.missing_molecules.update(other.missing_molecules)
        self.missing_terms.update(other.missing_terms)
        self.assigned |= other.assigned
        self.elements_without_class.update(other.elements_without_class)
        self.unreadable.extend(other.unreadable)

    def __getstate__(self) -> dict[str, Any]:
        state = dict(self.__dict__)
        state["pset"] = None  # the receiving side has its own copy; merge() never reads it
        return state

    def to_dict(self) -> dict[str, Any]:
        scores = list(self.scores)
        histogram = []
        for i in range(10):
            lo, hi = i / 10, (i + 1) / 10
            n = sum(1 for s in scores if lo <= s < hi or (i == 9 and s == 1.0))
            histogram.append([lo, hi, n])
        top = sorted(self.missing_molecules.items(), key=lambda kv: (-kv[1], kv[0]))[: self.top]
        return {
            "records": self.records,
            "status": {s: self.status.get(s, 0) for s in STATUSES},
            "terms": self.counts.to_dict(),
            "score": {
                "min": min(scores) if scores else None,
                "median": rounded(statistics.median(scores)) if scores else None,
                "histogram": histogram,
            },
            "top_missing": [
                {
                    "kind": kind,
                    "classes": list(classes),
                    "molecules": n,
                    "terms": self.missing_terms[(kind, classes)],
                }
                for (kind, classes), n in top
            ],
            "classes_never_assigned": [
                c.id for c in self.pset.classes if c.id not in self.assigned
            ],
            "elements_without_class": dict(sorted(self.elements_without_class.items())),
            "unreadable": self.unreadable,
        }


def _table(resolutions: Sequence[Resolution]) -> TermTable:
    return resolutions if isinstance(resolutions, TermTable) else TermTable.of(resolutions)


def parameter_set_info(pset: ParameterSet) -> dict[str, Any]:
    return {
        "name": pset.header.name,
        "version": pset.header.version,
        "hash": pset.content_hash,
        "demonstration": pset.header.demonstration,
        "paths": list(pset.paths),
    }


def audit_molecule(
    molecule: Chem.Mol | str, pset: ParameterSet | AuditContext | None = None, name: str = ""
) -> MoleculeAudit:
    """Audit one molecule given as an RDKit molecule or a SMILES string.

    ``pset`` defaults to the embedded set. A SMILES that does not parse gives an ``unreadable`` audit.
    """
    context = _context(pset)
    if isinstance(molecule, str):
        from ffaudit.read.smiles import parse_smiles

        mol, error = parse_smiles(molecule)
        record = Record(0, "<smiles>", 1, 1, name or molecule, mol, error)
    else:
        title = molecule.GetProp("_Name") if molecule.HasProp("_Name") else ""
        record = Record(0, "<mol>", 1, 1, name or title, molecule)
    return context.audit_record(record)


def audit_library(
    path: str,
    pset: ParameterSet | AuditContext | None = None,
    fmt: str | None = None,
    **reader_options: Any,
) -> Iterator[MoleculeAudit]:
    """Audit every record of a structure library, in input order (one per record, unreadable included).

    Raises :class:`ffaudit.errors.InputFileError` when the file cannot be opened or its format is unknown.
    """
    from ffaudit.read.open import iter_records

    context = _context(pset)
    for record in iter_records(path, fmt, **reader_options):
        yield context.audit_record(record)


def _context(pset: ParameterSet | AuditContext | None) -> AuditContext:
    if isinstance(pset, AuditContext):
        return pset
    if pset is None:
        from ffaudit.paramset.load import load_parameter_set

        pset = load_parameter_set()
    return AuditContext(pset)


def summarise(audits: Iterable[MoleculeAudit], pset: ParameterSet) -> Mapping[str, Any]:
    summary = Summary(pset)
    for audit in audits:
        summary.add(audit)
    return summary.to_dict()
