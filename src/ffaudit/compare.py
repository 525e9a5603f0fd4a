"""Compare two parameter sets on a reference library: what lost coverage, what gained, what changed.

Pure computation: two loaded :class:`ParameterSet` objects and the records of a reference library in, one
:class:`Comparison` out. Reading files, git revisions and writing reports happen elsewhere.

What is compared
----------------
- **Terms.** Every reference molecule is audited with both sets. Terms are matched by kind and atoms (the
  atoms in an orientation-free order, so a term whose class tuple flips direction still matches). The tier
  before and after is ranked *covered* (exact, wildcard, parent) > *estimated* (analogy, estimate) >
  *missing*: a lower rank is ``lost`` coverage, a higher rank ``gained``; a tier change inside one rank is
  ``degraded`` (e.g. exact -> parent) or ``improved``. Terms found with only one set (e.g. a header change
  of out-of-plane centres) are ``added`` / ``removed``.
- **Classes.** Per atom, a class id that differs between the sets (class rules changed).
- **Molecules.** The status (covered > estimated > incomplete; unreadable is unreadable with both) before
  and after; a worse status is a lost molecule.
- **Entries.** Matched by kind and canonical key (class tuple, order, ring) across the two sets: removed,
  added, or changed. A changed entry lists each value's relative change ``(new - old) / |old|`` (``None``
  when the old value is 0 and the new one is not: an unbounded change); for bonds with a force constant,
  the harmonic wavenumber before and after, nu = 1/(2 pi c) sqrt(k/mu), with mu from the most common
  isotope masses (RDKit's periodic table) of the elements of the bond's two classes, and the shift in cm-1.
  Dihedral values are named ``n<periodicity>.k`` and ``n<periodicity>.phase``.
- **Scores.** The distribution of molecule scores before and after: count, min, median, a 10-bin
  histogram over [0, 1].

Regressions, tolerance and allow rules
--------------------------------------
Each difference becomes a :class:`ffaudit.findings.Finding` located at the parameter-file line that caused
it. Errors are regressions: ``entry-removed`` (at the entry's line in OLD), ``entry-changed`` beyond the
tolerance (at the entry's line in NEW), ``coverage-lost`` (per term, at the line of its cause: the removed
entry in OLD, else the new class rule of an atom whose class changed, else the entry the term now uses in
NEW) and ``status-lost`` (per molecule, at the cause of its first lost term). Everything else is
information (``entry-added``, ``coverage-gained``, ``status-gained``, ``coverage-improved``, changes within
tolerance) or a warning (``coverage-degraded``, ``class-changed``).

*Tolerance*: an entry whose every value changes by at most ``tolerance`` (relative, default
:data:`DEFAULT_TOLERANCE`) and keeps its form and its dihedral periodicities is changed *within tolerance*:
reported as information, not a regression.

*Allow rules* (``--allow``), grammar ``CATEGORY:PATTERN``:

- ``CATEGORY`` is ``removed`` (entries removed), ``changed`` (entries changed), ``lost`` (terms and
  molecules that lost coverage) or ``*`` (any of them);
- ``PATTERN`` is a shell-style glob (``fnmatch``, case-sensitive; ``*``, ``?``, ``[...]``) matched against
  an entry's label ``KIND:C1-C2-...`` (e.g. ``bond:c4-cl``) or its qualified label with ``@order`` and
  ``@ring`` / ``@noring`` appended (``bond:c4-cl@single``); for ``lost``, against the molecule's name or the
  lost term's label ``KIND:CLASSES`` (classes as in OLD).

Examples: ``removed:bond:c4-cl``, ``changed:*``, ``lost:dichloromethane``, ``lost:dihedral:*-c3o-*``.
An allowed finding is kept with severity ``info`` and ``allowed_by`` naming the rule. A lost term whose cause
is an allowed removed or changed entry is allowed with it; a lost molecule is allowed when every term it lost
is allowed (or the molecule itself matches a ``lost`` rule).

Output is deterministic: molecules in input order, terms in the new audit's term order, entries in
:data:`ffaudit.paramset.model.KINDS` order then by canonical key, findings by :meth:`Finding.sort_key`.
"""

from __future__ import annotations

import fnmatch
import math
import statistics
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

from rdkit import Chem

from ffaudit.audit import AuditContext, MoleculeAudit
from ffaudit.errors import UsageError
from ffaudit.findings import Finding, Severity
from ffaudit.paramset.model import KINDS, Entry, ParameterSet, SourceLocation, TableKey
from ffaudit.read.record import Record
from ffaudit.resolve.driver import Resolution
from ffaudit.score import TIERS
from ffaudit.units import wavenumber

FORMAT_VERSION = 1
"""Version of the compare report's JSON form (``schemas/compare-report.schema.json``)."""

DEFAULT_TOLERANCE = 1e-3
"""Relative value change (0.1 %) up to which a changed entry is not a regression."""

RANK: Mapping[str, int] = {
    "exact": 2,
    "wildcard": 2,
    "parent": 2,
    "analogy": 1,
    "estimate": 1,
    "missing": 0,
}
"""Coverage rank of each tier: covered (2) > estimated (1) > missing (0)."""

STATUS_RANK: Mapping[str, int] = {"covered": 2, "estimated": 1, "incomplete": 0, "unreadable": -1}

CATEGORIES: tuple[str, ...] = ("removed", "changed", "lost", "*")
"""Categories of ``--allow`` rules."""

HISTOGRAM_BINS = 10


# -- allow rules --------------------------------------------------------------------------------------


@dataclass(frozen=True)
class AllowRule:
    """One ``--allow CATEGORY:PATTERN`` rule (see the module docstring)."""

    category: str
    pattern: str

    @property
    def text(self) -> str:
        return f"{self.category}:{self.pattern}"

    def matches(self, category: str, labels: Iterable[str]) -> bool:
        if self.category not in (category, "*"):
            return False
        return any(fnmatch.fnmatchcase(label, self.pattern) for label in labels)


def parse_allow(text: str) -> AllowRule:
    """Parse ``CATEGORY:PATTERN``; :class:`UsageError` saying what is expected for anything else."""
    category, sep, pattern = text.partition(":")
    if not sep or not pattern or category not in CATEGORIES:
        raise UsageError(
            f"--allow {text!r}: expected CATEGORY:PATTERN with CATEGORY one of "
            f"{', '.join(CATEGORIES)} (e.g. removed:bond:c4-cl, changed:*, lost:MOLECULE)"
        )
    return AllowRule(category, pattern)


# -- result types -------------------------------------------------------------------------------------


@dataclass(frozen=True)
class ValueChange:
    """One value of a changed entry; ``relative`` is None for a change from 0 or from/to absent."""

    name: str
    before: float | None
    after: float | None
    relative: float | None

    @property
    def beyond(self) -> float:
        """The size of the change for the tolerance test (infinite when unbounded)."""
        if self.relative is None:
            return math.inf
        return abs(self.relative)


@dataclass(frozen=True)
class Wavenumber:
    """Harmonic stretch wavenumbers (cm-1) of a bond entry before and after, and the masses used (u)."""

    before: float
    after: float
    masses_before: tuple[float, float]
    masses_after: tuple[float, float]

    @property
    def shift(self) -> float:
        return self.after - self.before


@dataclass(frozen=True)
class EntryChange:
    """An entry removed, added or changed between the sets (``change`` says which)."""

    kind: str
    key: TableKey
    change: str
    before: Entry | None
    after: Entry | None
    values: tuple[ValueChange, ...] = ()
    wavenumber: Wavenumber | None = None
    within_tolerance: bool = False

    @property
    def label(self) -> str:
        return entry_label(self.kind, self.key)

    @property
    def qualified_label(self) -> str:
        return entry_label(self.kind, self.key, qualified=True)


@dataclass(frozen=True)
class TermChange:
    """One term whose tier differs between the sets (or that exists with one set only)."""

    kind: str
    atoms: tuple[int, ...]
    classes_before: tuple[str, ...] | None
    classes_after: tuple[str, ...] | None
    tier_before: str | None
    tier_after: str | None
    direction: str
    """``lost``, ``gained``, ``degraded``, ``improved``, ``added`` or ``removed``."""
    cause: str | None = None
    cause_location: SourceLocation | None = None
    entry_before: SourceLocation | None = None
    entry_after: SourceLocation | None = None

    @property
    def label_before(self) -> str:
        return f"{self.kind}:{'-'.join(self.classes_before or self.classes_after or ())}"


@dataclass(frozen=True)
class ClassChange:
    atom: int
    before: str | None
    after: str | None
    location: SourceLocation | None


@dataclass(frozen=True)
class MoleculeChange:
    """One reference molecule: status and score with both sets, and its term and class changes."""

    record: Record
    status_before: str
    status_after: str
    score_before: float | None
    score_after: float | None
    terms: tuple[TermChange, ...] = ()
    classes: tuple[ClassChange, ...] = ()

    @property
    def direction(self) -> str:
        """``lost``, ``gained`` or ``same`` (by status rank)."""
        before = STATUS_RANK[self.status_before]
        after = STATUS_RANK[self.status_after]
        return "lost" if after < before else "gained" if after > before else "same"

    @property
    def lost_terms(self) -> tuple[TermChange, ...]:
        return tuple(t for t in self.terms if t.direction == "lost")


@dataclass(frozen=True)
class ScoreDistribution:
    count: int
    min: float | None
    median: float | None
    histogram: tuple[tuple[float, float, int], ...]

    def to_dict(self) -> dict[str, Any]:
        return {
            "count": self.count,
            "min": self.min,
            "median": self.median,
            "histogram": [[lo, hi, n] for lo, hi, n in self.histogram],
        }


@dataclass(frozen=True)
class Comparison:
    """The result of :func:`compare_sets`. ``regressions`` are the error findings not allowed."""

    old: ParameterSet
    new: ParameterSet
    tolerance: float
    allow: tuple[AllowRule, ...]
    molecules: tuple[MoleculeChange, ...]
    entries: tuple[EntryChange, ...]
    scores_before: ScoreDistribution
    scores_after: ScoreDistribution
    findings: tuple[Finding, ...]
    status_before: Mapping[str, int] = field(default_factory=dict)
    status_after: Mapping[str, int] = field(default_factory=dict)

    @property
    def regressions(self) -> tuple[Finding, ...]:
        return tuple(f for f in self.findings if f.severity >= Severity.ERROR)

    @property
    def allowed(self) -> tuple[Finding, ...]:
        return tuple(f for f in self.findings if allowed_by(f) is not None)

    def to_dict(self) -> dict[str, Any]:
        """The JSON form described by ``schemas/compare-report.schema.json``."""
        return _comparison_dict(self)


def allowed_by(finding: Finding) -> str | None:
    """The ``--allow`` rule that allowed ``finding``, or None."""
    value = dict(finding.extra).get("allowed_by")
    return None if value is None else str(value)


# -- labels -------------------------------------------------------------------------------------------


def entry_label(kind: str, key: TableKey, qualified: bool = False) -> str:
    """``bond:c4-cl`` (or ``bond:c4-cl@single@noring`` with the qualifiers the entry has)."""
    classes, order, ring = key
    text = f"{kind}:{'-'.join(classes)}"
    if qualified:
        if order is not None:
            text += f"@{order}"
        if ring is not None:
            text += "@ring" if ring else "@noring"
    return text


def _term_match_key(kind: str, atoms: tuple[int, ...]) -> tuple[str, tuple[int, ...]]:
    if kind == "out_of_plane":
        return kind, (atoms[0], *sorted(atoms[1:]))
    return kind, min(atoms, atoms[::-1])


# -- values -------------------------------------------------------------------------------------------


def _named_values(entry: Entry) -> dict[str, float]:
    if entry.kind == "dihedral":
        out: dict[str, float] = {}
        for t in entry.fourier:
            out[f"n{t.periodicity}.k"] = t.k
            out[f"n{t.periodicity}.phase"] = t.phase
        return out
    return dict(entry.values)


def relative_change(before: float, after: float) -> float | None:
    """``(after - before) / |before|``; 0 when both are 0; None (unbounded) when only ``before`` is 0."""
    if before == 0:
        return 0.0 if after == 0 else None
    return (after - before) / abs(before)


def _masses(pset: ParameterSet, classes: Sequence[str]) -> tuple[float, float] | None:
    index = pset.class_index
    table = Chem.GetPeriodicTable()
    masses = []
    for cid in classes:
        cls = index.get(cid)
        if cls is None:
            return None
        try:
            masses.append(float(table.GetMostCommonIsotopeMass(cls.element)))
        except RuntimeError:
            return None
    return masses[0], masses[1]


def bond_wavenumber(pset: ParameterSet, entry: Entry) -> tuple[float, tuple[float, float]] | None:
    """(wavenumber in cm-1, masses in u) of a bond entry, or None (no ``k``, negative k, unknown class)."""
    k = entry.values.get("k")
    masses = _masses(pset, entry.classes)
    if entry.kind != "bond" or k is None or k < 0 or masses is None:
        return None
    return wavenumber(k, *masses), masses


def _entry_change(
    kind: str, key: TableKey, old: ParameterSet, new: ParameterSet, tolerance: float
) -> EntryChange | None:
    before = old.entries(kind).get(key)
    after = new.entries(kind).get(key)
    if before is None and after is None:
        return None
    if after is None:
        return EntryChange(kind, key, "removed", before, None)
    if before is None:
        return EntryChange(kind, key, "added", None, after)
    vb, va = _named_values(before), _named_values(after)
    changes = []
    for name in sorted(set(vb) | set(va)):
        b, a = vb.get(name), va.get(name)
        if b is not None and a is not None:
            if a == b:
                continue
            changes.append(ValueChange(name, b, a, relative_change(b, a)))
        else:
            changes.append(ValueChange(name, b, a, None))
    if not changes and before.form == after.form:
        return None
    wave = None
    if kind == "bond":
        wb, wa = bond_wavenumber(old, before), bond_wavenumber(new, after)
        if wb is not None and wa is not None and wb[0] != wa[0]:
            wave = Wavenumber(wb[0], wa[0], wb[1], wa[1])
    within = before.form == after.form and all(c.beyond <= tolerance for c in changes)
    return EntryChange(kind, key, "changed", before, after, tuple(changes), wave, within)


def _key_sort(key: TableKey) -> tuple[Any, ...]:
    classes, order, ring = key
    return (classes, order or "", -1 if ring is None else int(ring))


def diff_entries(
    old: ParameterSet, new: ParameterSet, tolerance: float = DEFAULT_TOLERANCE
) -> tuple[EntryChange, ...]:
    """Entries removed, added and changed, in kind order then canonical key order."""
    out = []
    for kind in KINDS:
        keys = set(old.entries(kind)) | set(new.entries(kind))
        for key in sorted(keys, key=_key_sort):
            change = _entry_change(kind, key, old, new, tolerance)
            if change is not None:
                out.append(change)
    return tuple(out)


# -- scores -------------------------------------------------------------------------------------------


def score_distribution(scores: Sequence[float]) -> ScoreDistribution:
    """Count, min, median and a 10-bin histogram over [0, 1] (the last bin includes 1.0)."""
    bins = []
    for i in range(HISTOGRAM_BINS):
        lo, hi = i / HISTOGRAM_BINS, (i + 1) / HISTOGRAM_BINS
        last = i == HISTOGRAM_BINS - 1
        n = sum(1 for s in scores if lo <= s < hi or (last and s == 1.0))
        bins.append((lo, hi, n))
    return ScoreDistribution(
        count=len(scores),
        min=min(scores) if scores else None,
        median=float(f"{statistics.median(scores):.6g}") if scores else None,
        histogram=tuple(bins),
    )


# -- terms --------------------------------------------------------------------------------------------


def _direction(before: str, after: str) -> str | None:
    if before == after:
        return None
    rb, ra = RANK[before], RANK[after]
    if ra < rb:
        return "lost"
    if ra > rb:
        return "gained"
    return "degraded" if TIERS.index(after) > TIERS.index(before) else "improved"


def _set_entry(r: Resolution) -> Entry | None:
    """The set entry a resolution used (the donor, for analogy), or None for estimates and missing."""
    if r.entry is None or r.tier in ("estimate", "missing"):
        return None
    return r.entry


def _term_changes(
    before: MoleculeAudit,
    after: MoleculeAudit,
    old: ParameterSet,
    new: ParameterSet,
    class_changes: Mapping[int, ClassChange],
) -> tuple[TermChange, ...]:
    old_terms = {_term_match_key(r.term.kind, r.term.atoms): r for r in before.resolutions}
    new_terms = {_term_match_key(r.term.kind, r.term.atoms): r for r in after.resolutions}
    out: list[TermChange] = []
    for key, ra in new_terms.items():
        rb = old_terms.get(key)
        if rb is None:
            out.append(
                TermChange(
                    ra.term.kind, ra.term.atoms, None, ra.term.classes, None, ra.tier, "added"
                )
            )
            continue
        direction = _direction(rb.tier, ra.tier)
        if direction is None:
            continue
        eb, ea = _set_entry(rb), _set_entry(ra)
        cause, where = _cause(rb, ra, eb, ea, old, new, class_changes)
        out.append(
            TermChange(
                kind=ra.term.kind,
                atoms=ra.term.atoms,
                classes_before=rb.term.classes,
                classes_after=ra.term.classes,
                tier_before=rb.tier,
                tier_after=ra.tier,
                direction=direction,
                cause=cause,
                cause_location=where,
                entry_before=None if eb is None else eb.location,
                entry_after=None if ea is None else ea.location,
            )
        )
    for key, rb in old_terms.items():
        if key not in new_terms:
            out.append(
                TermChange(
                    rb.term.kind, rb.term.atoms, rb.term.classes, None, rb.tier, None, "removed"
                )
            )
    return tuple(out)


def _cause(
    rb: Resolution,
    ra: Resolution,
    eb: Entry | None,
    ea: Entry | None,
    old: ParameterSet,
    new: ParameterSet,
    class_changes: Mapping[int, ClassChange],
) -> tuple[str | None, SourceLocation | None]:
    """Why a term's tier changed, and the parameter-file location to point at."""
    if eb is not None and eb.key not in new.entries(eb.kind):
        return f"removed:{entry_label(eb.kind, eb.key)}", eb.location
    changed = [class_changes[a] for a in ra.term.atoms if a in class_changes]
    if changed:
        c = changed[0]
        return f"class:{c.atom}:{c.before}->{c.after}", c.location
    if ea is not None:
        if ea.key not in old.entries(ea.kind):
            return f"added:{entry_label(ea.kind, ea.key)}", ea.location
        return f"entry:{entry_label(ea.kind, ea.key)}", ea.location
    return None, None


def _class_changes(
    before: MoleculeAudit, after: MoleculeAudit, new: ParameterSet
) -> dict[int, ClassChange]:
    index = new.class_index
    out: dict[int, ClassChange] = {}
    old_by_atom = {a.atom: a.class_id for a in before.assignments}
    for a in after.assignments:
        old_id = old_by_atom.get(a.atom)
        if old_id != a.class_id:
            cls = index.get(a.class_id) if a.class_id is not None else None
            where = a.location or (cls.location if cls is not None else None)
            out[a.atom] = ClassChange(a.atom, old_id, a.class_id, where)
    return out


def compare_molecule(
    before: MoleculeAudit, after: MoleculeAudit, old: ParameterSet, new: ParameterSet
) -> MoleculeChange:
    """The changes of one reference molecule audited with OLD (``before``) and NEW (``after``)."""
    classes = _class_changes(before, after, new)
    return MoleculeChange(
        record=after.record,
        status_before=before.status,
        status_after=after.status,
        score_before=before.score,
        score_after=after.score,
        terms=_term_changes(before, after, old, new, classes),
        classes=tuple(classes[a] for a in sorted(classes)),
    )


# -- findings -----------------------------------------------------------------------------------------


def _at(where: SourceLocation | None, entry: Entry | None = None) -> dict[str, Any]:
    if where is None:
        return {}
    out: dict[str, Any] = {"path": where.path, "line": where.line, "column": where.column}
    if entry is not None and entry.doc_path:
        out["doc_path"] = entry.doc_path
    return out


def _fmt(value: float | None) -> str:
    return "absent" if value is None else f"{value:.6g}"


def _entry_findings(change: EntryChange) -> list[Finding]:
    label = change.qualified_label
    if change.change == "removed":
        assert change.before is not None
        return [
            Finding(
                code="entry-removed",
                severity=Severity.ERROR,
                message=f"{label} was removed; terms that used it lose their exact entry",
                term=change.label,
                cause="removed",
                **_at(change.before.location, change.before),
            )
        ]
    if change.change == "added":
        assert change.after is not None
        return [
            Finding(
                code="entry-added",
                severity=Severity.INFO,
                message=f"{label} was added",
                term=change.label,
                cause="added",
                **_at(change.after.location, change.after),
            )
        ]
    assert change.before is not None and change.after is not None
    parts = []
    if change.before.form != change.after.form:
        parts.append(f"form {change.before.form} -> {change.after.form}")
    for v in change.values:
        rel = "unbounded" if v.relative is None else f"{v.relative:+.2%}"
        parts.append(f"{v.name} {_fmt(v.before)} -> {_fmt(v.after)} ({rel})")
    if change.wavenumber is not None:
        w = change.wavenumber
        parts.append(f"wavenumber {w.before:.1f} -> {w.after:.1f} cm-1 ({w.shift:+.1f} cm-1)")
    within = change.within_tolerance
    return [
        Finding(
            code="entry-changed",
            severity=Severity.INFO if within else Severity.ERROR,
            message=f"{label} changed"
            + (" within tolerance" if within else "")
            + ": "
            + "; ".join(parts),
            term=change.label,
            cause="changed",
            **_at(change.after.location, change.after),
        )
    ]


_TERM_CODES: Mapping[str, tuple[str, Severity]] = {
    "lost": ("coverage-lost", Severity.ERROR),
    "gained": ("coverage-gained", Severity.INFO),
    "degraded": ("coverage-degraded", Severity.WARNING),
    "improved": ("coverage-improved", Severity.INFO),
    "added": ("term-added", Severity.INFO),
    "removed": ("term-removed", Severity.INFO),
}


def _who(m: MoleculeChange) -> str:
    return f"{m.record.name} (record {m.record.record})"


def _term_finding(m: MoleculeChange, t: TermChange, fallback: SourceLocation) -> Finding:
    code, severity = _TERM_CODES[t.direction]
    message = f"{_who(m)}: {t.label_before} (atoms {'-'.join(map(str, t.atoms))}): {t.direction} "
    message += f"{t.tier_before or 'absent'} -> {t.tier_after or 'absent'}"
    if t.cause:
        message += f" (cause {t.cause})"
    return Finding(
        code=code,
        severity=severity,
        message=message,
        molecule=m.record.name,
        record=m.record.record,
        atoms=t.atoms,
        term=t.label_before,
        cause=t.cause,
        **_at(t.cause_location or fallback),
    )


def _molecule_findings(m: MoleculeChange, fallback: SourceLocation) -> list[Finding]:
    out = [_term_finding(m, t, fallback) for t in m.terms]
    for c in m.classes:
        out.append(
            Finding(
                code="class-changed",
                severity=Severity.WARNING,
                message=f"{_who(m)}: atom {c.atom}: class {c.before or 'none'} -> {c.after or 'none'}",
                molecule=m.record.name,
                record=m.record.record,
                atoms=(c.atom,),
                cause="class",
                **_at(c.location or fallback),
            )
        )
    if m.direction != "same":
        lost = m.lost_terms
        moved = [t for t in m.terms if t.direction == m.direction]
        where = next((t.cause_location for t in moved if t.cause_location is not None), None)
        text = f"{_who(m)}: status {m.status_before} -> {m.status_after}"
        if lost:
            text += f"; {len(lost)} terms lost coverage"
        out.append(
            Finding(
                code="status-lost" if m.direction == "lost" else "status-gained",
                severity=Severity.ERROR if m.direction == "lost" else Severity.INFO,
                message=text,
                molecule=m.record.name,
                record=m.record.record,
                cause=m.direction,
                **_at(where or fallback),
            )
        )
    return out


def _allow(finding: Finding, rule: AllowRule) -> Finding:
    return finding.with_(
        severity=Severity.INFO,
        hint=f"allowed by --allow {rule.text}",
        extra=(*finding.extra, ("allowed_by", rule.text)),
    )


def apply_allow(
    findings: Sequence[Finding],
    entries: Sequence[EntryChange],
    rules: Sequence[AllowRule],
) -> list[Finding]:
    """Downgrade the error findings that ``rules`` allow to info (see the module docstring)."""
    if not rules:
        return list(findings)
    labels = {c.label: c for c in entries}
    allowed_causes: dict[str, AllowRule] = {}
    out: list[Finding] = []
    for f in findings:
        if f.severity < Severity.ERROR or f.code not in ("entry-removed", "entry-changed"):
            out.append(f)
            continue
        category = "removed" if f.code == "entry-removed" else "changed"
        change = labels.get(f.term or "")
        names = [f.term or ""] + ([change.qualified_label] if change else [])
        rule = next((r for r in rules if r.matches(category, names)), None)
        if rule is None:
            out.append(f)
        else:
            allowed_causes[f"{category}:{f.term}"] = rule
            out.append(_allow(f, rule))
    result: list[Finding] = []
    for f in out:
        if f.severity >= Severity.ERROR and f.code == "coverage-lost":
            rule = allowed_causes.get(f.cause or "") or next(
                (r for r in rules if r.matches("lost", [f.molecule or "", f.term or ""])), None
            )
            if rule is not None:
                f = _allow(f, rule)
        result.append(f)
    final: list[Finding] = []
    for f in result:
        if f.severity >= Severity.ERROR and f.code == "status-lost":
            rule = next((r for r in rules if r.matches("lost", [f.molecule or ""])), None)
            if rule is None:
                lost = [
                    g
                    for g in result
                    if g.code == "coverage-lost"
                    and g.record == f.record
                    and g.molecule == f.molecule
                ]
                if lost and all(allowed_by(g) is not None for g in lost):
                    rule = AllowRule("lost", str(allowed_by(lost[0])))
                    f = f.with_(
                        severity=Severity.INFO,
                        hint="allowed: every term it lost is allowed",
                        extra=(*f.extra, ("allowed_by", allowed_by(lost[0]))),
                    )
            else:
                f = _allow(f, rule)
        final.append(f)
    return final


# -- driver -------------------------------------------------------------------------------------------


def compare_sets(
    old: ParameterSet,
    new: ParameterSet,
    records: Iterable[Record],
    *,
    tolerance: float = DEFAULT_TOLERANCE,
    allow: Sequence[AllowRule] = (),
) -> Comparison:
    """Audit ``records`` with ``old`` and ``new`` and compare (see the module docstring).

    Never raises for a bad record (it is ``unreadable`` with both sets). Raises :class:`UsageError` for a
    negative or non-finite ``tolerance``.
    """
    if not (tolerance >= 0 and math.isfinite(tolerance)):
        raise UsageError(f"--tolerance must be a finite number >= 0, got {tolerance}")
    ctx_old, ctx_new = AuditContext(old), AuditContext(new)
    fallback = SourceLocation(new.paths[-1] if new.paths else "<new set>", 1, 1)
    molecules: list[MoleculeChange] = []
    scores_before: list[float] = []
    scores_after: list[float] = []
    status_before = dict.fromkeys(STATUS_RANK, 0)
    status_after = dict.fromkeys(STATUS_RANK, 0)
    for record in records:
        before, after = ctx_old.audit_record(record), ctx_new.audit_record(record)
        status_before[before.status] += 1
        status_after[after.status] += 1
        if before.score is not None:
            scores_before.append(before.score)
        if after.score is not None:
            scores_after.append(after.score)
        molecules.append(compare_molecule(before, after, old, new))
    entries = diff_entries(old, new, tolerance)
    findings: list[Finding] = []
    for change in entries:
        findings += _entry_findings(change)
    for m in molecules:
        findings += _molecule_findings(m, fallback)
    findings = apply_allow(findings, entries, allow)
    findings.sort(key=Finding.sort_key)
    return Comparison(
        old=old,
        new=new,
        tolerance=tolerance,
        allow=tuple(allow),
        molecules=tuple(molecules),
        entries=entries,
        scores_before=score_distribution(scores_before),
        scores_after=score_distribution(scores_after),
        findings=tuple(findings),
        status_before=status_before,
        status_after=status_after,
    )


# -- JSON form ----------------------------------------------------------------------------------------


def _loc(where: SourceLocation | None) -> dict[str, Any] | None:
    return (
        None if where is None else {"path": where.path, "line": where.line, "column": where.column}
    )


def _set_dict(pset: ParameterSet) -> dict[str, Any]:
    return {
        "name": pset.header.name,
        "version": pset.header.version,
        "hash": pset.content_hash,
        "paths": list(pset.paths),
    }


def _num(value: float | None) -> float | None:
    return None if value is None else float(f"{value:.6g}")


def _entry_dict(c: EntryChange) -> dict[str, Any]:
    classes, order, ring = c.key
    out: dict[str, Any] = {
        "kind": c.kind,
        "classes": list(classes),
        "order": order,
        "ring": ring,
        "label": c.label,
        "change": c.change,
        "before": None if c.before is None else _loc(c.before.location),
        "after": None if c.after is None else _loc(c.after.location),
        "form_before": None if c.before is None else c.before.form,
        "form_after": None if c.after is None else c.after.form,
        "values": [
            {
                "name": v.name,
                "before": _num(v.before),
                "after": _num(v.after),
                "relative": _num(v.relative),
            }
            for v in c.values
        ],
        "within_tolerance": c.within_tolerance,
        "wavenumber": None,
    }
    if c.wavenumber is not None:
        w = c.wavenumber
        out["wavenumber"] = {
            "before": _num(w.before),
            "after": _num(w.after),
            "shift": _num(w.shift),
            "masses_before": [_num(m) for m in w.masses_before],
            "masses_after": [_num(m) for m in w.masses_after],
        }
    return out


def _term_dict(t: TermChange) -> dict[str, Any]:
    return {
        "kind": t.kind,
        "atoms": list(t.atoms),
        "classes_before": None if t.classes_before is None else list(t.classes_before),
        "classes_after": None if t.classes_after is None else list(t.classes_after),
        "tier_before": t.tier_before,
        "tier_after": t.tier_after,
        "direction": t.direction,
        "cause": t.cause,
        "cause_location": _loc(t.cause_location),
    }


def _molecule_dict(m: MoleculeChange) -> dict[str, Any]:
    return {
        "index": m.record.index,
        "source": m.record.source_dict(),
        "name": m.record.name,
        "status_before": m.status_before,
        "status_after": m.status_after,
        "direction": m.direction,
        "score_before": m.score_before,
        "score_after": m.score_after,
        "terms": [_term_dict(t) for t in m.terms],
        "classes": [
            {"atom": c.atom, "before": c.before, "after": c.after, "location": _loc(c.location)}
            for c in m.classes
        ],
    }


def finding_dict(f: Finding) -> dict[str, Any]:
    """A finding's JSON form, with ``allowed_by`` when an allow rule downgraded it."""
    out = f.to_dict()
    rule = allowed_by(f)
    if rule is not None:
        out["allowed_by"] = rule
    return out


def _comparison_dict(c: Comparison) -> dict[str, Any]:
    counts: dict[str, int] = {}
    for f in c.findings:
        counts[f.code] = counts.get(f.code, 0) + 1
    return {
        "format": "ffaudit-compare",
        "format_version": FORMAT_VERSION,
        "old": _set_dict(c.old),
        "new": _set_dict(c.new),
        "tolerance": c.tolerance,
        "allow": [r.text for r in c.allow],
        "summary": {
            "molecules": len(c.molecules),
            "regressions": len(c.regressions),
            "allowed": len(c.allowed),
            "molecules_lost": sum(1 for m in c.molecules if m.direction == "lost"),
            "molecules_gained": sum(1 for m in c.molecules if m.direction == "gained"),
            "terms_lost": sum(len(m.lost_terms) for m in c.molecules),
            "terms_gained": sum(1 for m in c.molecules for t in m.terms if t.direction == "gained"),
            "entries": {
                change: sum(1 for e in c.entries if e.change == change)
                for change in ("removed", "added", "changed")
            },
            "status_before": dict(c.status_before),
            "status_after": dict(c.status_after),
            "score_before": c.scores_before.to_dict(),
            "score_after": c.scores_after.to_dict(),
            "findings": dict(sorted(counts.items())),
        },
        "entries": [_entry_dict(e) for e in c.entries],
        "molecules": [_molecule_dict(m) for m in c.molecules],
        "findings": [finding_dict(f) for f in c.findings],
    }
