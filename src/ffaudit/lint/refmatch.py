"""How the set's class rules behave on the reference library: per SMARTS pattern, how many atoms it matches
and how many of them it actually assigned (the others were taken by an earlier rule).

Computed once per lint run from the reference audits (``ctx.reference``) and cached in the context: each
readable molecule gets its hydrogens added exactly as the audit did (``Chem.AddHs``, so atom indices agree
with the audit's assignments), then every pattern is matched as the one-atom query ``[$(pattern)]`` (the
atoms that can be the pattern's first atom, as perception matches them).
"""

from __future__ import annotations

from collections import Counter
from dataclasses import dataclass, field
from typing import TYPE_CHECKING

from rdkit import Chem

if TYPE_CHECKING:
    from ffaudit.lint.context import LintContext

_CACHE_KEY = "ffaudit.lint.refmatch"


@dataclass
class PatternStats:
    """One pattern (``class_id``, 1-based ``number``) on the reference library."""

    class_id: str
    number: int
    matched: int = 0
    """Atoms the pattern matches."""
    decided: int = 0
    """Of those, atoms this pattern assigned."""
    molecules: int = 0
    """Molecules with at least one matching atom."""
    taken_by: Counter[str] = field(default_factory=Counter)
    """Class rule (``class/number``) that assigned each matched atom this pattern did not decide."""


@dataclass
class ReferenceStats:
    molecules: int = 0
    """Readable reference molecules examined."""
    assigned: Counter[str] = field(default_factory=Counter)
    """Class id -> atoms assigned to it."""
    patterns: dict[tuple[str, int], PatternStats] = field(default_factory=dict)

    def class_matched(self, class_id: str) -> int:
        return sum(s.matched for (cid, _n), s in self.patterns.items() if cid == class_id)

    def class_taken_by(self, class_id: str) -> Counter[str]:
        total: Counter[str] = Counter()
        for (cid, _n), stats in self.patterns.items():
            if cid == class_id:
                total.update(stats.taken_by)
        return total


def reference_stats(ctx: LintContext) -> ReferenceStats:
    """Pattern statistics of the set of ``ctx`` on its reference library (empty without either).

    A pattern RDKit cannot compile (impossible in a set that loaded) simply matches nothing.
    """
    cached = ctx.extra.get(_CACHE_KEY)
    if isinstance(cached, ReferenceStats):
        return cached
    stats = ReferenceStats()
    if ctx.pset is None or not ctx.reference:
        ctx.extra[_CACHE_KEY] = stats
        return stats
    queries: list[tuple[str, int, Chem.Mol | None]] = []
    for cls in ctx.pset.classes:
        for number, smarts in enumerate(cls.smarts, start=1):
            queries.append((cls.id, number, Chem.MolFromSmarts(f"[$({smarts})]")))
            stats.patterns[(cls.id, number)] = PatternStats(cls.id, number)
    for audit in ctx.reference:
        mol = audit.record.mol
        if audit.status == "unreadable" or mol is None or not audit.assignments:
            continue
        molh = Chem.AddHs(mol)
        if molh.GetNumAtoms() != len(audit.assignments):
            continue
        stats.molecules += 1
        rule_of = {a.atom: a.rule for a in audit.assignments}
        for a in audit.assignments:
            if a.class_id is not None:
                stats.assigned[a.class_id] += 1
        for class_id, number, query in queries:
            if query is None:
                continue
            hits = [
                m[0]
                for m in molh.GetSubstructMatches(query, uniquify=True, maxMatches=len(rule_of) + 1)
            ]
            if not hits:
                continue
            entry = stats.patterns[(class_id, number)]
            entry.molecules += 1
            own = f"{class_id}/{number}"
            for atom in hits:
                entry.matched += 1
                rule = rule_of.get(atom)
                if rule == own:
                    entry.decided += 1
                elif rule is not None:
                    entry.taken_by[rule] += 1
    ctx.extra[_CACHE_KEY] = stats
    return stats
