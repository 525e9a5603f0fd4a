"""Class perception from the set's SMARTS rules.

Rule order decides: classes are tried in the order the set lists them, and within a class its patterns in
order; the first pattern that matches an atom (as the pattern's first atom) assigns that atom's class, and
later rules never override it. Perception runs on the molecule with explicit hydrogens, so hydrogen classes
are ordinary rules rooted at the hydrogen (e.g. ``[#1][OX2]``).

Aromaticity is RDKit's default model as perceived at sanitisation; SMARTS aromatic atoms and ``:`` bonds
refer to it. Bond orders used by qualifiers are RDKit's (aromatic bonds are ``aromatic``, not kekulised).

Each pattern is compiled once as a one-atom recursive query ``[$(pattern)]``: its matches are exactly the
atoms that can be the pattern's first atom, each once, so no match enumeration over permutations is needed.

Perception never raises for an atom no rule matches: that atom's class is None and a finding
``unclassified-atom`` names the atom, its element and the classes the set has for that element.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

from rdkit import Chem

from ffaudit.errors import ParameterSetError
from ffaudit.findings import Finding, Severity
from ffaudit.paramset.model import ParameterSet, SourceLocation


@dataclass(frozen=True)
class Assignment:
    """The class of one atom and the rule that decided it (``rule`` is ``class_id/pattern_number``)."""

    atom: int
    class_id: str | None
    rule: str | None = None
    location: SourceLocation | None = None
    source: str = "smarts"


@dataclass(frozen=True)
class _Rule:
    class_id: str
    number: int
    smarts: str
    location: SourceLocation | None


class ClassRules:
    """The set's class rules, compiled once. Picklable: queries are rebuilt from SMARTS after unpickling."""

    def __init__(self, pset: ParameterSet) -> None:
        rules: list[_Rule] = []
        for cls in pset.classes:
            for number, smarts in enumerate(cls.smarts, start=1):
                loc = (
                    cls.smarts_locations[number - 1]
                    if number - 1 < len(cls.smarts_locations)
                    else None
                )
                rules.append(_Rule(cls.id, number, smarts, loc or cls.location))
        self._rules = tuple(rules)
        self._by_element: dict[str, list[str]] = {}
        for cls in pset.classes:
            self._by_element.setdefault(cls.element, []).append(cls.id)
        self._queries = self._compile()

    def _compile(self) -> tuple[Chem.Mol, ...]:
        queries = []
        for rule in self._rules:
            query = Chem.MolFromSmarts(f"[$({rule.smarts})]")
            if query is None:
                raise ParameterSetError(
                    f"{rule.location}: class {rule.class_id!r}: invalid SMARTS {rule.smarts!r}"
                )
            queries.append(query)
        return tuple(queries)

    def __getstate__(self) -> dict[str, Any]:
        return {"rules": self._rules, "by_element": self._by_element}

    def __setstate__(self, state: dict[str, Any]) -> None:
        self._rules = state["rules"]
        self._by_element = state["by_element"]
        self._queries = self._compile()

    @property
    def rules(self) -> tuple[_Rule, ...]:
        return self._rules

    def classes_for_element(self, element: str) -> list[str]:
        return list(self._by_element.get(element, []))

    def unclassified_finding(self, atom: int, element: str) -> Finding:
        """The finding for atom ``atom`` (of ``element``) that no class rule matches, with the element's
        classes, if any, as the hint."""
        near = self.classes_for_element(element)
        hint = (
            f"classes for {element} exist ({', '.join(near[:5])}) but none matches this environment"
            if near
            else f"the set has no class for element {element}"
        )
        return Finding(
            code="unclassified-atom",
            severity=Severity.WARNING,
            message=f"atom {atom} ({element}) matches no class rule",
            atoms=(atom,),
            cause="no-class",
            hint=hint,
        )

    def perceive(self, mol: Chem.Mol) -> tuple[list[Assignment], list[Finding]]:
        """Assign a class to every atom of ``mol`` (explicit hydrogens expected).

        Returns one :class:`Assignment` per atom, in atom order, and a finding per unclassified atom.
        """
        n = mol.GetNumAtoms()
        assigned: list[Assignment | None] = [None] * n
        left = n
        for rule, query in zip(self._rules, self._queries, strict=True):
            if left == 0:
                break
            for (atom,) in mol.GetSubstructMatches(query, uniquify=True, maxMatches=n + 1):
                if assigned[atom] is None:
                    assigned[atom] = Assignment(
                        atom, rule.class_id, f"{rule.class_id}/{rule.number}", rule.location
                    )
                    left -= 1
        findings: list[Finding] = []
        result: list[Assignment] = []
        for i, a in enumerate(assigned):
            if a is None:
                findings.append(self.unclassified_finding(i, mol.GetAtomWithIdx(i).GetSymbol()))
                a = Assignment(i, None, None, None)
            result.append(a)
        return result, findings


def perceive(mol: Chem.Mol, rules: ClassRules) -> tuple[list[Assignment], list[Finding]]:
    """Functional spelling of :meth:`ClassRules.perceive`."""
    return rules.perceive(mol)


def class_ids(assignments: Sequence[Assignment]) -> list[str | None]:
    return [a.class_id for a in assignments]
