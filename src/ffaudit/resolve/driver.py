"""The resolution driver: tries the tiers in order and stamps what it found on a :class:`Resolution`.

Tiers (each a small function in its own module returning a match or None): ``exact``, ``wildcard``,
``parent``, ``analogy`` (all from the set; resolved once per distinct (kind, classes, qualifiers) and
cached, so a library resolves each tuple once), then ``estimate`` (a published rule applied to the term's
atoms in this molecule, so computed per term); what none of them resolves is ``missing`` with a reason.
Terms touching an atom without a class skip the set tiers and can only be estimated.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

from ffaudit.paramset.canonical import UNASSIGNED
from ffaudit.paramset.model import Entry, FourierTerm, ParameterSet, SourceLocation
from ffaudit.resolve.analogy import AnalogyFinder
from ffaudit.resolve.estimate import MoleculeTypes, estimate_term
from ffaudit.resolve.exact import match_exact
from ffaudit.resolve.index import TableIndex
from ffaudit.resolve.parent import match_parent
from ffaudit.resolve.wildcard import match_wildcard
from ffaudit.score import DEFAULT_SCORE_MODEL, ScoreModel
from ffaudit.terms import Term


@dataclass(frozen=True)
class Resolution:
    """How one term got its value (or why it has none)."""

    term: Term
    tier: str
    entry: Entry | None = None
    score: float = 0.0
    reason: str | None = None
    cause: str | None = None
    substitutions: tuple[tuple[int, str, str], ...] = ()
    details: Mapping[str, Any] = field(default_factory=dict)

    @property
    def resolved(self) -> bool:
        return self.tier != "missing"


@dataclass(frozen=True)
class _Outcome:
    tier: str
    entry: Entry | None
    score: float
    reason: str | None = None
    cause: str | None = None
    substitutions: tuple[tuple[int, str, str], ...] = ()


class Resolver:
    """Resolves terms against one parameter set. Picklable; the cache is rebuilt per process."""

    def __init__(
        self,
        pset: ParameterSet,
        score_model: ScoreModel = DEFAULT_SCORE_MODEL,
        tiers: frozenset[str] = frozenset({"wildcard", "parent", "analogy"}),
    ) -> None:
        self.pset = pset
        self.index = TableIndex(pset)
        self.analogy = AnalogyFinder(self.index)
        self.score_model = score_model
        self.tiers = tiers
        self._cache: dict[tuple[Any, ...], _Outcome] = {}

    def __getstate__(self) -> dict[str, Any]:
        state = dict(self.__dict__)
        state["_cache"] = {}
        return state

    def resolve(self, term: Term, types: MoleculeTypes | None = None) -> Resolution:
        """Resolve one term; ``types`` (the molecule's UFF typing) enables the estimate tier."""
        key = (term.kind, term.classes, term.bond_order, term.in_ring)
        outcome = self._cache.get(key)
        if outcome is None:
            outcome = self._resolve(term)
            if UNASSIGNED not in term.classes:  # the no-class reason names this term's atoms
                self._cache[key] = outcome
        if outcome.tier == "missing" and types is not None and "estimate" in self.tiers:
            return self._estimate(term, types, outcome)
        return Resolution(
            term=term,
            tier=outcome.tier,
            entry=outcome.entry,
            score=outcome.score,
            reason=outcome.reason,
            cause=outcome.cause,
            substitutions=outcome.substitutions,
        )

    def _estimate(self, term: Term, types: MoleculeTypes, missing: _Outcome) -> Resolution:
        estimate, why = estimate_term(term, types)
        if estimate is None:
            reason = f"{missing.reason}; no estimate: {why}"
            return Resolution(term, "missing", None, 0.0, reason, missing.cause)
        unassigned = sum(1 for c in term.classes if c == UNASSIGNED)
        entry = Entry(
            kind=term.kind,
            classes=term.classes,
            form=estimate.form,
            values=dict(estimate.values),
            location=SourceLocation("<estimate>", 0),
            source=estimate.rule,
            bond_order=term.bond_order if term.kind in ("bond", "dihedral") else None,
            fourier=tuple(FourierTerm(n, phase, k) for n, phase, k in estimate.fourier),
            estimated=True,
        )
        details = {
            "rule": estimate.rule,
            "citation": estimate.citation,
            "inputs": dict(estimate.inputs),
        }
        if estimate.cross_checks:
            details["cross_checks"] = dict(estimate.cross_checks)
        score = self.score_model.score("estimate", 1 + unassigned, rule=estimate.rule)
        return Resolution(
            term, "estimate", entry, score, missing.reason, missing.cause, details=details
        )

    def _resolve(self, term: Term) -> _Outcome:
        sm = self.score_model
        if UNASSIGNED in term.classes:
            unassigned = [i for i, c in enumerate(term.classes) if c == UNASSIGNED]
            atoms = ", ".join(str(term.atoms[i]) for i in unassigned)
            return _Outcome(
                "missing",
                None,
                0.0,
                f"atom {atoms} has no class (no class rule matches)",
                "no-class",
            )
        entry = match_exact(self.index, term)
        if entry is not None:
            return _Outcome("exact", entry, sm.score("exact"))
        if "wildcard" in self.tiers:
            entry = match_wildcard(self.index, term)
            if entry is not None:
                return _Outcome("wildcard", entry, sm.score("wildcard", entry.wildcards))
        if "parent" in self.tiers:
            found = match_parent(self.index, term)
            if found is not None:
                entry, subs, steps = found
                return _Outcome("parent", entry, sm.score("parent", steps), substitutions=subs)
        if "analogy" in self.tiers:
            match = self.analogy.find(term)
            if match is not None:
                return _Outcome(
                    "analogy",
                    match.entry,
                    sm.score("analogy", len(match.substitutions)),
                    substitutions=match.substitutions,
                    cause=f"copied from {'-'.join(match.entry.classes)} (similarity cost {match.cost:g})",
                )
        if not self.index.tables.get(term.kind):
            reason = f"the set has no {term.kind} parameters at all"
        else:
            reason = f"no {term.kind} parameter for {'-'.join(term.classes)}"
        return _Outcome("missing", None, 0.0, reason, "no-parameter")
