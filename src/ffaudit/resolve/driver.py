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

from ffaudit.estimate.uff_types import UffTyping
from ffaudit.paramset.canonical import UNASSIGNED
from ffaudit.paramset.model import Entry, FourierTerm, ParameterSet, SourceLocation
from ffaudit.resolve.analogy import AnalogyFinder
from ffaudit.resolve.estimate import (
    Estimate,
    MoleculeTypes,
    Signature,
    assumed_types,
    estimate_from_signature,
    estimate_signature,
    with_assumed,
)
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


def no_class_reason(atoms: tuple[int, ...], classes: tuple[str, ...]) -> str:
    """The reason a term with unclassified atoms has no set parameter: it names those atoms."""
    unassigned = ", ".join(str(atoms[i]) for i, c in enumerate(classes) if c == UNASSIGNED)
    return f"atom {unassigned} has no class (no class rule matches)"


def _tuple_key(term: Term) -> tuple[Any, ...]:
    """What the set tiers' outcome of ``term`` depends on: its kind, classes and qualifiers."""
    return (term.kind, term.classes, term.bond_order, term.in_ring)


def _no_estimate(term: Term, missing: _Outcome, why: str) -> Resolution:
    """``term`` stays missing: the set has no parameter (``missing``) and no rule applies (``why``)."""
    return Resolution(term, "missing", None, 0.0, f"{missing.reason}; no estimate: {why}", missing.cause)


ESTIMATE_CACHE_LIMIT = 50_000
"""Signatures whose estimates the resolver keeps; the cache is emptied when it is full (memory stays
bounded on diverse libraries; the next terms are estimated anew)."""


class SharedEstimate:
    """A rule estimate shared by every term of one tuple and one estimate signature (the same UFF types and
    the same facts the rule reads): all of the term's resolution but its atoms, which only the provenance's
    ``assumed`` list names, and for a term with unclassified atoms the reason.

    Termtable output code may keep the term's JSON and dict templates in ``template`` and
    ``dict_template``.
    """

    __slots__ = (
        "kind", "classes", "order", "ring", "entry", "score", "reason", "cause", "estimate",
        "typings", "template", "dict_template",
    )  # fmt: skip
    tier = "estimate"
    substitutions: tuple[tuple[int, str, str], ...] = ()

    def __init__(
        self,
        kind: str,
        classes: tuple[str, ...],
        order: str | None,
        ring: bool | None,
        entry: Entry,
        score: float,
        reason: str | None,
        cause: str | None,
        estimate: Estimate,
        typings: tuple[UffTyping, ...],
    ) -> None:
        self.kind = kind
        self.classes = classes
        self.order = order
        self.ring = ring
        self.entry = entry
        self.score = score
        self.reason = reason
        self.cause = cause
        self.estimate = estimate
        self.typings = typings
        self.template: Any = None
        self.dict_template: Any = None

    def reason_of(self, atoms: tuple[int, ...]) -> str | None:
        """The reason of the term on ``atoms`` (no set parameter; for unclassified atoms it names them)."""
        if self.cause == "no-class":
            return no_class_reason(atoms, self.classes)
        return self.reason

    def details(self, atoms: tuple[int, ...]) -> dict[str, Any]:
        """The provenance details of the term on ``atoms``: rule, citation, inputs, cross-checks."""
        estimate = self.estimate
        details: dict[str, Any] = {
            "rule": estimate.rule,
            "citation": estimate.citation,
            "inputs": with_assumed(estimate.inputs, assumed_types(atoms, self.typings)),
        }
        if estimate.cross_checks:
            details["cross_checks"] = dict(estimate.cross_checks)
        return details

    def resolution(self, atoms: tuple[int, ...], term: Term | None = None) -> Resolution:
        """The resolution of the term on ``atoms`` (``term``, when given, is that term)."""
        if term is None:
            term = Term(self.kind, atoms, self.classes, self.order, self.ring)
        return Resolution(
            term, "estimate", self.entry, self.score, self.reason_of(atoms), self.cause,
            details=self.details(atoms),
        )  # fmt: skip


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
        self._estimates: dict[tuple[Any, ...], SharedEstimate | str] = {}

    def __getstate__(self) -> dict[str, Any]:
        state = dict(self.__dict__)
        state["_cache"] = {}
        state["_estimates"] = {}
        return state

    def resolve(self, term: Term, types: MoleculeTypes | None = None) -> Resolution:
        """Resolve one term; ``types`` (the molecule's UFF typing) enables the estimate tier."""
        key = _tuple_key(term)
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
        found = self._estimate_of(term, types, missing)
        if isinstance(found, SharedEstimate):
            return found.resolution(term.atoms, term)
        return found

    def estimate(self, term: Term, types: MoleculeTypes) -> SharedEstimate | Resolution:
        """The estimate tier for a term the set tiers leave missing: a :class:`SharedEstimate` when the rule
        gives a value that terms of the same signature share, else the term's own :class:`Resolution`
        (``missing``, with the reason). Requires the estimate tier; never raises for chemistry the rules
        cannot handle."""
        missing = self._cache.get(_tuple_key(term))
        if missing is None:
            missing = self._resolve(term)
        return self._estimate_of(term, types, missing)

    def _estimate_of(
        self, term: Term, types: MoleculeTypes, missing: _Outcome
    ) -> SharedEstimate | Resolution:
        signature = estimate_signature(term, types)
        if isinstance(signature, str):
            return _no_estimate(term, missing, signature)
        key = (*_tuple_key(term), signature)
        shared = self._estimates.get(key)
        if shared is None:
            shared = self._share_estimate(term, signature, missing)
            if len(self._estimates) >= ESTIMATE_CACHE_LIMIT:
                self._estimates.clear()
            self._estimates[key] = shared
        if isinstance(shared, str):
            return _no_estimate(term, missing, shared)
        return shared

    def _share_estimate(
        self, term: Term, signature: Signature, missing: _Outcome
    ) -> SharedEstimate | str:
        estimate = estimate_from_signature(signature)
        if isinstance(estimate, str):
            return estimate
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
        score = self.score_model.score("estimate", 1 + unassigned, rule=estimate.rule)
        return SharedEstimate(
            term.kind, term.classes, term.bond_order, term.in_ring, entry, score,
            missing.reason, missing.cause, estimate, signature[1],
        )  # fmt: skip

    def _resolve(self, term: Term) -> _Outcome:
        sm = self.score_model
        if UNASSIGNED in term.classes:
            return _Outcome("missing", None, 0.0, no_class_reason(term.atoms, term.classes), "no-class")
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
