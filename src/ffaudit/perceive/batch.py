"""Batched class perception: each class rule matched once per batch of molecules, with the reference's result.

:class:`ffaudit.perceive.classes.ClassRules` is the reference: per molecule with explicit hydrogens, rules in
set order, the first rule that matches an atom decides its class. :class:`BatchRules` gives the same classes
for a :class:`ffaudit.molbatch.MolBatch` (many molecules joined into one RDKit molecule):

- Rules run in set order on the joined molecule; an atom keeps the first rule that matched it. Before a rule
  runs, the batch is checked for atoms it could still decide: the elements the rule's first atom can have are
  read from its query, and a rule is skipped when no atom of those elements is still without a class.
- A pattern of one atom is matched as it is (its matches are exactly the atoms it accepts); a longer one as
  the reference does, the one-atom recursive query ``[$(pattern)]``. A pattern with a ``.`` (several
  components) could match across molecules of the batch, so it runs per molecule.

Heavy layout (no hydrogens added; about half the atoms to match). A rule is used there only when it is shown
to give, on the molecule without added hydrogens, exactly what it gives on the molecule with them:

- every query primitive is one whose value for a non-hydrogen atom does not change when hydrogens are added
  (element, aromaticity, total degree ``X``, total hydrogen count ``H``, charge, rings, valence ``v``,
  hybridisation, isotope, heteroatom neighbours ``z``/``Z``, heavy degree ``d``, radicals, recursion); not ``D``
  (explicit degree) or ``h`` (implicit hydrogens);
- every pattern atom but the first either cannot be a hydrogen (its element, two or more pattern bonds, or a
  bond no single bond matches), or is a plain hydrogen leaf (``[#1]`` or ``[H]`` with one single-compatible
  bond), which is replaced by a hydrogen count on its neighbour (``!H0&!H1...``); recursive sub-patterns get
  the same check but may not contain hydrogen atoms;
- the first atom cannot be a hydrogen (a rule for heavy atoms), or is a plain hydrogen (a rule for
  hydrogens): then the pattern is re-rooted at the hydrogen's neighbour, with one more hydrogen counted, and
  a match assigns the class to every hydrogen of the matched atom. All hydrogens of one atom are
  interchangeable in the graph, so they always get the same class in the reference too.

If any rule of the set cannot be used this way, :attr:`BatchRules.heavy_layout_problem` says which and why, and
the batch driver uses the explicit layout (hydrogens added) for every molecule; so does it for a molecule with a
hydrogen atom that is not a plain one-bond hydrogen.

Failure: building raises nothing (a rule that cannot be analysed only disables the heavy layout; an invalid
SMARTS was already refused by ``ClassRules``). :meth:`BatchRules.classify` raises ``RuntimeError`` when an
unrolled pattern has more matches than it can enumerate, and whatever RDKit raises; the batch driver then
audits the batch's records one by one with the reference.
"""

from __future__ import annotations

import re
from collections.abc import Iterator
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import NDArray
from rdkit import Chem

from ffaudit.molbatch import MolBatch
from ffaudit.perceive.classes import ClassRules

IntArray = NDArray[np.int64]

RECURSION_LIMIT = 2**31 - 1
"""Embeddings RDKit may enumerate for a recursive sub-pattern in one batch (no practical cap)."""

N_ELEMENTS = 130
"""Size of the per-element counters (atomic numbers 0..118, with room to spare)."""

# Query primitives whose value for a non-hydrogen atom is the same with and without explicit hydrogens
# (RDKit's query names, as DescribeQuery prints them; range forms carry a less_/greater_/range_ prefix).
# Checked against RDKit for each primitive in tests/test_fast_path.py.
INVARIANT_PRIMITIVES = frozenset(
    {
        "AtomAtomicNum",
        "AtomType",
        "AtomTotalDegree",
        "AtomHCount",
        "AtomFormalCharge",
        "AtomIsAromatic",
        "AtomIsAliphatic",
        "AtomInNRings",
        "AtomMinRingSize",
        "AtomRingBondCount",
        "AtomInRing",
        "AtomTotalValence",
        "AtomIsotope",
        "AtomHybridization",
        "AtomNull",
        "AtomNumHeteroatomNeighbors",
        "AtomNumAliphaticHeteroatomNeighbors",
        "AtomNonHydrogenDegree",
        "AtomNumRadicalElectrons",
        "RecursiveStructure",
    }
)
RING_PRIMITIVES = frozenset(
    {"AtomInNRings", "AtomMinRingSize", "AtomRingBondCount", "AtomInRing", "BondInRing"}
)
_COMPOSITES = frozenset({"AtomAnd", "AtomOr", "AtomXor", "BondAnd", "BondOr", "BondXor"})
_RANGE_PREFIX = re.compile(r"^(less_|greater_|range_)")
_PLAIN_HYDROGEN = "AtomAtomicNum 1 = val"


# --- query descriptions -----------------------------------------------------------------------------


@dataclass(frozen=True)
class QueryNode:
    """One node of an RDKit query tree as ``DescribeQuery`` prints it."""

    name: str
    value: int | None
    negated: bool
    children: tuple[QueryNode, ...]

    @property
    def base(self) -> str:
        return _RANGE_PREFIX.sub("", self.name)

    def walk(self) -> Iterator[QueryNode]:
        yield self
        for child in self.children:
            yield from child.walk()


def parse_description(text: str) -> QueryNode:
    """Parse ``DescribeQuery()`` output (two spaces of indent per level) into a tree.

    Raises ``ValueError`` for text without any node.
    """
    lines = [line for line in text.split("\n") if line.strip()]
    if not lines:
        raise ValueError("empty query description")

    def depth(line: str) -> int:
        return (len(line) - len(line.lstrip(" "))) // 2

    def node(i: int) -> tuple[QueryNode, int]:
        line = lines[i].strip()
        negated = False
        if line.startswith("not "):
            negated, line = True, line[4:]
        if " != val" in line or " not in " in line:
            negated = not negated
        tokens = line.split()
        name = tokens[0]
        value = int(tokens[1]) if len(tokens) > 1 and re.fullmatch(r"-?\d+", tokens[1]) else None
        children = []
        j = i + 1
        own = depth(lines[i])
        while j < len(lines) and depth(lines[j]) > own:
            child, j = node(j)
            children.append(child)
        return QueryNode(name, value, negated, tuple(children)), j

    root, _ = node(0)
    return root


@dataclass(frozen=True)
class ElementSet:
    """A set of atomic numbers, possibly the complement of a finite set; ``exact`` says whether the query it
    came from depends on the element only (only then may it be negated)."""

    members: frozenset[int]
    complement: bool
    exact: bool

    def __contains__(self, z: object) -> bool:
        return (z in self.members) != self.complement

    def any_in(self, counts: IntArray) -> bool:
        """True when ``counts`` (atoms per atomic number) has an atom of this set."""
        inside = sum(int(counts[z]) for z in self.members if 0 <= z < len(counts))
        if self.complement:
            return int(counts.sum()) - inside > 0
        return inside > 0


ANY_ELEMENT = ElementSet(frozenset(), True, False)


def _intersect(a: ElementSet, b: ElementSet) -> ElementSet:
    exact = a.exact and b.exact
    if not a.complement and not b.complement:
        return ElementSet(a.members & b.members, False, exact)
    if not a.complement:
        return ElementSet(a.members - b.members, False, exact)
    if not b.complement:
        return ElementSet(b.members - a.members, False, exact)
    return ElementSet(a.members | b.members, True, exact)


def _union(a: ElementSet, b: ElementSet) -> ElementSet:
    exact = a.exact and b.exact
    if not a.complement and not b.complement:
        return ElementSet(a.members | b.members, False, exact)
    if not a.complement:
        return ElementSet(b.members - a.members, True, exact)
    if not b.complement:
        return ElementSet(a.members - b.members, True, exact)
    return ElementSet(a.members & b.members, True, exact)


def element_set(node: QueryNode) -> ElementSet:
    """The atomic numbers an atom query can accept (a superset; exact when the query is about elements only)."""
    if node.name in ("AtomAnd", "AtomOr"):
        kids = [element_set(c) for c in node.children]
        result = kids[0]
        for kid in kids[1:]:
            result = _intersect(result, kid) if node.name == "AtomAnd" else _union(result, kid)
    elif node.name == "AtomAtomicNum" and node.value is not None:
        result = ElementSet(frozenset({node.value}), False, True)
    elif node.name == "AtomType" and node.value is not None:
        # aliphatic Z or aromatic 1000 + Z: the element is known, but the query also asks aromaticity
        result = ElementSet(frozenset({node.value % 1000}), False, False)
    elif node.name == "AtomNull":
        result = ElementSet(frozenset(), True, True)
    else:
        return ANY_ELEMENT
    if node.negated:
        if not result.exact:
            return ANY_ELEMENT
        return ElementSet(result.members, not result.complement, True)
    return result


def _truth_on_hydrogen_bond(node: QueryNode) -> bool | None:
    """Would the bond query accept the single, non-ring bond of an added hydrogen? None: cannot tell."""
    if node.name in ("BondAnd", "BondOr"):
        kids = [_truth_on_hydrogen_bond(c) for c in node.children]
        if node.name == "BondAnd":
            value: bool | None = (
                False if False in kids else (True if all(k is True for k in kids) else None)
            )
        else:
            value = True if True in kids else (False if all(k is False for k in kids) else None)
    elif node.name == "BondOrder":
        value = node.value == 1
    elif node.name in ("SingleOrAromaticBond", "BondNull", "SingleOrDoubleBond"):
        value = True
    elif node.name == "BondInRing":
        value = False
    else:
        return None
    if value is None:
        return None
    return (not value) if node.negated else value


# --- rule plans -------------------------------------------------------------------------------------


@dataclass(frozen=True)
class Step:
    """How one rule runs on a batch.

    ``root`` is the position of the classified atom in each match; ``unrolled`` patterns are matched without
    the recursive wrapper (all embeddings, duplicates dropped). ``hydrogens``: a match names the atom whose
    hydrogens get the class (heavy layout only).
    """

    rule: int
    smarts: str
    query: Chem.Mol
    root: int
    single_atom: bool
    per_molecule: bool
    elements: ElementSet
    hydrogens: bool = False


def _recursion_bodies(smarts: str) -> list[str]:
    bodies: list[str] = []
    start = 0
    while True:
        at = smarts.find("$(", start)
        if at < 0:
            return bodies
        depth = 0
        for end in range(at + 1, len(smarts)):
            if smarts[end] == "(":
                depth += 1
            elif smarts[end] == ")":
                depth -= 1
                if depth == 0:
                    bodies.append(smarts[at + 2 : end])
                    break
        start = at + 2


def _descriptions(query: Chem.Mol) -> tuple[list[QueryNode], list[QueryNode]]:
    atoms = [parse_description(a.DescribeQuery()) for a in query.GetAtoms()]
    bonds = [parse_description(b.DescribeQuery()) for b in query.GetBonds()]
    return atoms, bonds


def _uses_ring_primitives(smarts: str) -> bool:
    queries = [Chem.MolFromSmarts(smarts)] + [
        Chem.MolFromSmarts(b) for b in _recursion_bodies(smarts)
    ]
    for query in queries:
        if query is None:
            return True
        atoms, bonds = _descriptions(query)
        if any(n.base in RING_PRIMITIVES for tree in atoms + bonds for n in tree.walk()):
            return True
    return False


def _non_invariant(trees: list[QueryNode]) -> str | None:
    for tree in trees:
        for n in tree.walk():
            if n.name in _COMPOSITES:
                continue
            if n.base not in INVARIANT_PRIMITIVES:
                return n.name
    return None


def _cannot_be_hydrogen(
    query: Chem.Mol, i: int, atoms: list[QueryNode], bonds: list[QueryNode]
) -> bool:
    """True when pattern atom ``i`` can only match a non-hydrogen atom of a molecule whose hydrogens all have
    one single bond to a non-hydrogen atom: by its element, by having two or more pattern bonds, by a bond no
    hydrogen's bond matches, or by being bonded to a plain hydrogen pattern atom."""
    if 1 not in element_set(atoms[i]):
        return True
    atom = query.GetAtomWithIdx(i)
    if atom.GetDegree() >= 2:
        return True
    for bond in atom.GetBonds():
        if _truth_on_hydrogen_bond(bonds[bond.GetIdx()]) is False:
            return True
        if _is_plain_hydrogen(bond.GetOtherAtom(atom)):
            return True
    return False


def _is_plain_hydrogen(atom: Chem.Atom) -> bool:
    return atom.DescribeQuery().strip() == _PLAIN_HYDROGEN


def _check_body(body: str) -> str | None:
    query = Chem.MolFromSmarts(body)
    if query is None:
        return f"recursive pattern {body!r} does not parse on its own"
    if "." in body:
        return f"recursive pattern {body!r} has several components"
    atoms, bonds = _descriptions(query)
    bad = _non_invariant(atoms)
    if bad:
        return f"recursive pattern {body!r} uses {bad}, which depends on explicit hydrogens"
    for i in range(1, query.GetNumAtoms()):
        if not _cannot_be_hydrogen(query, i, atoms, bonds):
            return f"atom {i + 1} of recursive pattern {body!r} could be a hydrogen"
    return None


def _hydrogen_count(count: int) -> Chem.Atom:
    return Chem.AtomFromSmarts("[" + "&".join(f"!H{n}" for n in range(count)) + "]")


def heavy_step(rule: int, smarts: str) -> Step | str:
    """The heavy-layout step for one rule, or the reason the rule cannot run without added hydrogens."""
    if "." in smarts:
        return "the pattern has several components"
    for body in _recursion_bodies(smarts):
        problem = _check_body(body)
        if problem:
            return problem
    pattern = Chem.MolFromSmarts(smarts)
    if pattern is None or pattern.GetNumAtoms() == 0:
        return "the pattern does not parse"
    atoms, bonds = _descriptions(pattern)
    bad = _non_invariant(atoms)
    if bad:
        return f"it uses {bad}, which depends on explicit hydrogens"
    root_is_h = _is_plain_hydrogen(pattern.GetAtomWithIdx(0))
    if not root_is_h and not _cannot_be_hydrogen(pattern, 0, atoms, bonds):
        return "its first atom could be a hydrogen or another element"
    counts: dict[int, int] = {}
    removed: list[int] = []
    new_root = 0
    for i in range(pattern.GetNumAtoms()):
        atom = pattern.GetAtomWithIdx(i)
        if i == 0 and not root_is_h:
            continue
        if i > 0 and not _is_plain_hydrogen(atom):
            if not _cannot_be_hydrogen(pattern, i, atoms, bonds):
                return f"pattern atom {i + 1} could be a hydrogen"
            continue
        # a plain hydrogen: the root (rule for hydrogens) or a leaf to count on its neighbour
        if atom.GetDegree() > 1:
            return f"hydrogen at pattern atom {i + 1} has more than one bond"
        if atom.GetDegree() == 1:
            bond = atom.GetBonds()[0]
            other = bond.GetOtherAtomIdx(i)
            if _is_plain_hydrogen(pattern.GetAtomWithIdx(other)):
                return "the pattern bonds two hydrogens"
            if _truth_on_hydrogen_bond(bonds[bond.GetIdx()]) is not True:
                return f"the bond to hydrogen at pattern atom {i + 1} is not one every single bond matches"
            counts[other] = counts.get(other, 0) + 1
            if i == 0:
                new_root = other
        elif i > 0:
            return f"pattern atom {i + 1} is a lone hydrogen"
        removed.append(i)
    elements_root = element_set(atoms[new_root])
    if not removed:
        return _plain_step(rule, smarts, pattern, elements_root, hydrogens=False)
    if root_is_h and pattern.GetNumAtoms() == 1:  # "[#1]" alone: every hydrogen
        query = Chem.MolFromSmarts("[!H0]")
        return Step(rule, smarts, query, 0, True, False, ANY_ELEMENT, hydrogens=True)
    edited = Chem.RWMol(pattern)
    for index, count in counts.items():
        edited.GetAtomWithIdx(index).ExpandQuery(
            _hydrogen_count(count), Chem.CompositeQueryType.COMPOSITE_AND
        )
    for index in sorted(removed, reverse=True):
        edited.RemoveAtom(index)
    root = new_root - sum(1 for r in removed if r < new_root)
    query = edited.GetMol()
    single = query.GetNumAtoms() == 1
    return Step(rule, smarts, query, root, single, False, elements_root, hydrogens=root_is_h)


def _plain_step(
    rule: int, smarts: str, pattern: Chem.Mol, elements: ElementSet, *, hydrogens: bool
) -> Step:
    if pattern.GetNumAtoms() == 1:
        return Step(rule, smarts, pattern, 0, True, "." in smarts, elements, hydrogens)
    wrapped = Chem.MolFromSmarts(f"[$({smarts})]")
    return Step(rule, smarts, wrapped, 0, True, "." in smarts, elements, hydrogens)


def explicit_step(rule: int, smarts: str) -> Step:
    """The explicit-layout step: the reference's own query (one atom as is, else ``[$(pattern)]``)."""
    pattern = Chem.MolFromSmarts(smarts)
    if pattern is None or pattern.GetNumAtoms() == 0:
        return Step(
            rule, smarts, Chem.MolFromSmarts(f"[$({smarts})]"), 0, True, "." in smarts, ANY_ELEMENT
        )
    atoms, _ = _descriptions(pattern)
    elements = element_set(atoms[0])
    if "." in smarts or pattern.GetNumAtoms() > 1:
        return Step(
            rule, smarts, Chem.MolFromSmarts(f"[$({smarts})]"), 0, True, "." in smarts, elements
        )
    return Step(rule, smarts, pattern, 0, True, False, elements)


class BatchRules:
    """A set's class rules prepared for batches (see the module docstring). Picklable (queries rebuilt)."""

    def __init__(self, rules: ClassRules) -> None:
        self.rules = rules
        self._build()

    def _build(self) -> None:
        smarts = [r.smarts for r in self.rules.rules]
        self.explicit_steps = tuple(explicit_step(k, s) for k, s in enumerate(smarts))
        self.needs_ring_info = any(_uses_ring_primitives(s) for s in smarts)
        heavy: list[Step] = []
        problem: str | None = None
        for k, s in enumerate(smarts):
            step = heavy_step(k, s)
            if isinstance(step, str):
                rule = self.rules.rules[k]
                problem = f"class {rule.class_id!r} pattern {rule.number} ({s}): {step}"
                break
            heavy.append(step)
        self.heavy_steps: tuple[Step, ...] | None = None if problem else tuple(heavy)
        self.heavy_layout_problem = problem

    def __getstate__(self) -> dict[str, Any]:
        return {"rules": self.rules}

    def __setstate__(self, state: dict[str, Any]) -> None:
        self.rules = state["rules"]
        self._build()

    def classify(self, batch: MolBatch) -> tuple[IntArray, IntArray]:
        """Rule index per atom of ``batch.joined`` (-1: no rule), and for the heavy layout the rule index of
        each atom's hydrogens (-1 everywhere for the explicit layout)."""
        if batch.added_h:
            return self._classify(batch, self.explicit_steps, heavy=False)
        if self.heavy_steps is None:
            raise ValueError(f"the heavy layout cannot be used: {self.heavy_layout_problem}")
        return self._classify(batch, self.heavy_steps, heavy=True)

    def _classify(
        self, batch: MolBatch, steps: tuple[Step, ...], *, heavy: bool
    ) -> tuple[IntArray, IntArray]:
        z = batch.z
        n = len(z)
        rule_of = np.full(n, -1, dtype=np.int64)
        h_rule_of = np.full(n, -1, dtype=np.int64)
        if heavy:
            is_atom = z != 1
            has_h = batch.new_h > 0
            neighbour = batch.hydrogen_neighbour()
            explicit_h_parent = neighbour[neighbour >= 0]
            has_h[explicit_h_parent] = True
            is_parent = has_h & is_atom
        else:
            is_atom = np.ones(n, dtype=bool)
            is_parent = np.zeros(n, dtype=bool)
        left_atoms = np.bincount(z[is_atom], minlength=N_ELEMENTS)
        left_parents = np.bincount(z[is_parent], minlength=N_ELEMENTS)
        n_left_atoms = int(left_atoms.sum())
        n_left_parents = int(left_parents.sum())
        for step in steps:
            if n_left_atoms == 0 and n_left_parents == 0:
                break
            if step.hydrogens:
                if n_left_parents == 0 or not step.elements.any_in(left_parents):
                    continue
            elif n_left_atoms == 0 or not step.elements.any_in(left_atoms):
                continue
            roots = self._match(batch, step)
            if not len(roots):
                continue
            if step.hydrogens:
                roots = roots[is_parent[roots] & (h_rule_of[roots] < 0)]
                h_rule_of[roots] = step.rule
                left_parents -= np.bincount(z[roots], minlength=N_ELEMENTS)
                n_left_parents -= len(roots)
            else:
                roots = roots[is_atom[roots] & (rule_of[roots] < 0)]
                rule_of[roots] = step.rule
                left_atoms -= np.bincount(z[roots], minlength=N_ELEMENTS)
                n_left_atoms -= len(roots)
        return rule_of, h_rule_of

    @staticmethod
    def _match(batch: MolBatch, step: Step) -> IntArray:
        if step.per_molecule:
            found: list[int] = []
            for m, fact in enumerate(batch.facts):
                offset = int(batch.starts[m])
                cap = fact.mol.GetNumAtoms() + 1
                found.extend(
                    x[step.root] + offset
                    for x in fact.mol.GetSubstructMatches(
                        step.query, uniquify=False, maxMatches=cap
                    )
                )
            return np.unique(np.array(found, dtype=np.int64))
        mol = batch.joined
        n = mol.GetNumAtoms()
        params = Chem.SubstructMatchParameters()
        params.uniquify = False  # type: ignore[assignment]  # RDKit's stubs type the fields wrongly
        # RDKit enumerates a recursive sub-pattern up to max(maxMatches, maxRecursiveMatches) embeddings and
        # silently drops atoms beyond; a batch has many more embeddings than one molecule, so no cap here.
        params.maxRecursiveMatches = RECURSION_LIMIT  # type: ignore[assignment]  # RDKit's stubs type the fields wrongly
        if step.single_atom:
            params.maxMatches = n + 1  # type: ignore[assignment]  # RDKit's stubs type the fields wrongly
            matches = mol.GetSubstructMatches(step.query, params)
            return np.fromiter((m[0] for m in matches), dtype=np.int64, count=len(matches))
        cap = 64 * n + 1024
        params.maxMatches = cap  # type: ignore[assignment]  # RDKit's stubs type the fields wrongly
        matches = mol.GetSubstructMatches(step.query, params)
        if len(matches) >= cap:
            raise RuntimeError(
                f"pattern {step.smarts!r} has more than {cap} matches in one batch; batch abandoned"
            )
        root = step.root
        return np.unique(
            np.fromiter((m[root] for m in matches), dtype=np.int64, count=len(matches))
        )
