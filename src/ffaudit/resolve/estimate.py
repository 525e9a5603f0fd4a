"""Tier ``estimate``: a value from a published rule, computed from the term's atoms in this molecule.

Rules (formulas in :mod:`ffaudit.estimate.uff`; our own implementation, checked against RDKit's UFF getters
in tests/test_uff.py):

=============  ==================  =======================================================================
kind           rule id             what
=============  ==================  =======================================================================
bond           ``uff-bond``        r0: UFF radii with bond-order and electronegativity corrections; k: UFF
                                   effective-charge rule; Badger's rule k given beside it as a cross-check
angle          ``uff-angle``       theta0 of the apex type; k: UFF angle rule (a ``linear`` form at 180)
dihedral       ``uff-torsion``     UFF hybridisation rules; the bond barrier V is shared over the m torsions
                                   about the bond: k = V / (2 m) in k (1 + cos(n phi - phase))
out_of_plane   ``uff-inversion``   UFF inversion rule for planar C, N, O (three UFF terms summed into one)
nonbonded      ``uff-vdw``         UFF x_I / 2 and D_I
=============  ==================  =======================================================================

The estimate depends on UFF atom types, which a class does not always determine: the provenance lists the
type assumed for every atom and why. Charge increments and stretch-bend cross terms have no rule here, so
they stay missing. Nothing here raises: where a rule does not apply, the reason (a string) comes back
instead of a signature or an estimate.
"""

from __future__ import annotations

import bisect
import contextlib
import itertools
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

from rdkit import Chem

from ffaudit.estimate import uff
from ffaudit.estimate.badger import badger_k
from ffaudit.estimate.uff_types import UffTyping, assign_uff_type
from ffaudit.terms import Term

UFF_CITATION = "Rappe, Casewit, Colwell, Goddard, Skiff, J. Am. Chem. Soc. 114, 10024 (1992), doi:10.1021/ja00051a040"
BADGER_CITATION = "Badger, J. Chem. Phys. 2, 128 (1934); 3, 710 (1935)"

RULE_IDS: dict[str, str] = {
    "bond": "uff-bond",
    "angle": "uff-angle",
    "dihedral": "uff-torsion",
    "out_of_plane": "uff-inversion",
    "nonbonded": "uff-vdw",
}

_HYB = {
    Chem.HybridizationType.SP: "sp",
    Chem.HybridizationType.SP2: "sp2",
    Chem.HybridizationType.SP3: "sp3",
}


@dataclass(frozen=True)
class Estimate:
    """A rule estimate: values in internal units (curvature convention) and how they were obtained."""

    form: str
    values: Mapping[str, float]
    rule: str
    citation: str
    inputs: Mapping[str, Any]
    fourier: tuple[tuple[int, float, float], ...] = ()
    cross_checks: Mapping[str, Any] = field(default_factory=dict)


class MoleculeTypes:
    """UFF types and the few atom and bond facts the rules read, of one molecule, computed on first use.

    Typings are interned process-wide (equal typings are one object, so estimate keys made from them
    compare at once).
    """

    def __init__(self, mol: Chem.Mol) -> None:
        self.mol = mol
        self._types: dict[int, UffTyping] = {}
        self._atoms: dict[int, tuple[str, Any, int, frozenset[int]]] = {}
        self._orders: dict[
            tuple[int, int], float | str
        ] = {}  # str: the type of a bond without order

    def of(self, atom: int) -> UffTyping:
        typing = self._types.get(atom)
        if typing is None:
            typing = assign_uff_type(self.mol.GetAtomWithIdx(atom))  # interned
            self._types[atom] = typing
        return typing

    def typings(self, atoms: tuple[int, ...]) -> tuple[UffTyping, ...]:
        """The typings of ``atoms``, in order."""
        known = self._types
        try:
            return tuple([known[i] for i in atoms])
        except KeyError:
            return tuple([self.of(i) for i in atoms])

    def atom(self, index: int) -> tuple[str, Any, int, frozenset[int]]:
        """(symbol, RDKit hybridisation, degree, neighbour indices) of atom ``index``."""
        info = self._atoms.get(index)
        if info is None:
            a = self.mol.GetAtomWithIdx(index)
            info = (
                a.GetSymbol(),
                a.GetHybridization(),
                a.GetDegree(),
                frozenset(n.GetIdx() for n in a.GetNeighbors()),
            )
            self._atoms[index] = info
        return info

    def order(self, i: int, j: int) -> float:
        """The order of the bond i-j (``GetBondTypeAsDouble``); ``ValueError`` when it has none."""
        key = (i, j) if i < j else (j, i)
        order = self._orders.get(key)
        if order is None:
            bond = self.mol.GetBondBetweenAtoms(i, j)
            value = bond.GetBondTypeAsDouble()
            order = value if value > 0 else str(bond.GetBondType())
            self._orders[key] = order
        if isinstance(order, str):
            raise ValueError(f"bond {i}-{j} has no bond order ({order})")
        return order


class AddedHydrogenTypes(MoleculeTypes):
    """The :class:`MoleculeTypes` of ``Chem.AddHs(mol)``, read from ``mol`` without making that copy.

    Atom ``i < mol.GetNumAtoms()`` is ``mol``'s own atom ``i`` (hybridisation, aromaticity and bond flags are
    what ``AddHs`` copies; its degree counts the hydrogens to be added); the atoms after them are the
    hydrogens ``AddHs`` adds, numbered as it numbers them: ``new_h[0]`` on atom 0 first, then ``new_h[1]``
    on atom 1, and so on (``new_h[i]`` is ``GetTotalNumHs()`` of atom ``i``). Every answer equals that of
    ``MoleculeTypes(Chem.AddHs(mol))`` (tests/test_estimate_tier.py compares them on NCI records). Asking
    about an atom index beyond the added hydrogens raises ``IndexError``.
    """

    def __init__(self, mol: Chem.Mol, new_h: Sequence[int]) -> None:
        super().__init__(mol)
        self._n = mol.GetNumAtoms()
        self._new_h = new_h
        self._first_h = list(itertools.accumulate(new_h, initial=self._n))  # first hydrogen of each atom

    def _parent(self, hydrogen: int) -> int:
        if not self._n <= hydrogen < self._first_h[-1]:
            raise IndexError(f"atom index {hydrogen} out of range")
        return bisect.bisect_right(self._first_h, hydrogen) - 1

    def of(self, atom: int) -> UffTyping:
        if atom < self._n:
            return super().of(atom)
        self._parent(atom)  # raises for an index out of range
        return _ADDED_H_TYPING

    def atom(self, index: int) -> tuple[str, Any, int, frozenset[int]]:
        info = self._atoms.get(index)
        if info is None:
            if index < self._n:
                a = self.mol.GetAtomWithIdx(index)
                first = self._first_h[index]
                around = [n.GetIdx() for n in a.GetNeighbors()]
                around += range(first, first + self._new_h[index])
                info = (a.GetSymbol(), a.GetHybridization(), a.GetTotalDegree(), frozenset(around))
            else:
                info = ("H", _ADDED_H_HYBRIDISATION, 1, frozenset((self._parent(index),)))
            self._atoms[index] = info
        return info

    def order(self, i: int, j: int) -> float:
        if i < self._n and j < self._n:
            return super().order(i, j)
        hydrogen, other = (i, j) if i >= self._n else (j, i)
        if self._parent(hydrogen) != other:
            raise ValueError(f"atoms {i} and {j} are not bonded")
        return 1.0  # AddHs bonds its hydrogens by single bonds


_METHANE = Chem.AddHs(Chem.MolFromSmiles("C"))
_ADDED_H = _METHANE.GetAtomWithIdx(1)  # a hydrogen as AddHs adds it
_ADDED_H_TYPING = assign_uff_type(_ADDED_H)
_ADDED_H_HYBRIDISATION = _ADDED_H.GetHybridization()

Signature = tuple[str, tuple[UffTyping, ...], tuple[Any, ...]]
"""(kind, the atoms' UFF typings in term order, the facts the kind's rule reads): all an estimate depends on
but the atom indices."""


def estimate_signature(term: Term, types: MoleculeTypes) -> Signature | str:
    """What the estimate of ``term`` depends on, apart from its atom indices; or why no rule applies.

    The rule of :func:`estimate_from_signature` reads nothing else, so two terms with equal signatures get
    equal estimates: callers may cache estimates by signature. A reason returned here may name atoms.
    """
    kind = term.kind
    rule = RULE_IDS.get(kind)
    if rule is None:
        return f"ffaudit has no published rule to estimate {kind} terms"
    typings = types.typings(term.atoms)
    for i, t in zip(term.atoms, typings, strict=True):
        if t.label is None:
            return f"atom {i}: no UFF type ({t.reason})"
    try:
        facts: tuple[Any, ...]
        if kind == "bond":
            i, j = term.atoms
            facts = (types.order(i, j), types.atom(i)[0], types.atom(j)[0])
        elif kind == "angle":
            a, b, c = term.atoms
            facts = (types.order(a, b), types.order(b, c))
        elif kind == "dihedral":
            facts_or_reason = _dihedral_facts(term, types)
            if isinstance(facts_or_reason, str):
                return facts_or_reason
            facts = facts_or_reason
        elif kind == "out_of_plane":
            facts_or_reason = _inversion_facts(term, types)
            if isinstance(facts_or_reason, str):
                return facts_or_reason
            facts = facts_or_reason
        else:
            facts = ()
    except (KeyError, ValueError) as exc:
        return f"{rule} does not apply: {exc}"
    return kind, typings, facts


def estimate_from_signature(signature: Signature) -> Estimate | str:
    """The estimate for ``signature`` (its ``inputs`` without the per-atom ``assumed`` list), or why the
    rule does not apply. A function of the signature alone; never raises."""
    kind, typings, facts = signature
    rule = RULE_IDS[kind]
    labels = [t.label for t in typings if t.label is not None]
    inputs: dict[str, Any] = {"uff_types": labels}
    try:
        if kind == "bond":
            return _bond(labels, facts, inputs)
        if kind == "angle":
            return _angle(labels, facts, inputs)
        if kind == "dihedral":
            return _dihedral(labels, facts, inputs)
        if kind == "out_of_plane":
            return _inversion(facts, inputs)
        x_half, depth = uff.lj_rmin_half_epsilon(labels[0])
        return Estimate(
            "lennard_jones", {"rmin_half": x_half, "epsilon": depth}, rule, UFF_CITATION, inputs
        )
    except (KeyError, ValueError) as exc:
        return f"{rule} does not apply: {exc}"


def assumed_types(atoms: tuple[int, ...], typings: tuple[UffTyping, ...]) -> list[str]:
    """The provenance's ``assumed`` list: the UFF type assumed for each atom of the term, and why."""
    return [f"atom {i}: {t.label} ({t.reason})" for i, t in zip(atoms, typings, strict=True)]


def with_assumed(inputs: Mapping[str, Any], assumed: list[str]) -> dict[str, Any]:
    """``inputs`` with the ``assumed`` list placed after ``uff_types``, as the provenance shows them."""
    out = {"uff_types": inputs["uff_types"], "assumed": assumed}
    out.update((k, v) for k, v in inputs.items() if k != "uff_types")
    return out


def _dihedral_facts(term: Term, types: MoleculeTypes) -> tuple[Any, ...] | str:
    i, j, k, last = term.atoms
    _, hyb_j, degree_j, around_j = types.atom(j)
    _, hyb_k, degree_k, around_k = types.atom(k)
    hj, hk = _HYB.get(hyb_j), _HYB.get(hyb_k)
    if hj not in ("sp2", "sp3") or hk not in ("sp2", "sp3"):
        return (
            f"uff-torsion covers sp2/sp3 central atoms only (got {hj or hyb_j!s}, {hk or hyb_k!s})"
        )
    order = types.order(j, k)
    sp2 = Chem.HybridizationType.SP2
    ends_sp2 = types.atom(i)[1] == sp2 or types.atom(last)[1] == sp2
    m = (degree_j - 1) * (degree_k - 1) - len(around_j & around_k)
    return hj, hk, order, ends_sp2, m


def _inversion_facts(term: Term, types: MoleculeTypes) -> tuple[Any, ...] | str:
    centre = term.atoms[0]
    element, _, _, around = types.atom(centre)
    if element not in ("C", "N", "O"):
        return f"uff-inversion covers planar C, N, O centres in ffaudit, not {element}"
    # UFF's K = 50 applies to a carbon bonded to an sp2 oxygen (a carbonyl, but also a conjugated O such as
    # a phenol's, which RDKit perceives as sp2); judged on RDKit's hybridisation, as RDKit's UFF does [C].
    carbonyl = element == "C" and any(
        types.atom(n)[0] == "O" and types.atom(n)[1] == Chem.HybridizationType.SP2
        for n in sorted(around)
    )
    return element, carbonyl


def _bond(labels: list[str], facts: tuple[Any, ...], inputs: dict[str, Any]) -> Estimate:
    order, e1, e2 = facts
    inputs["bond_order"] = order
    r0 = uff.bond_r0(labels[0], labels[1], order)
    k = uff.bond_k(labels[0], labels[1], order)
    checks: dict[str, Any] = {}
    with contextlib.suppress(
        KeyError, ValueError
    ):  # no Badger constants for this pair: no cross-check
        checks = {"badger_k": round(badger_k(r0, e1, e2), 3), "badger_citation": BADGER_CITATION}
    return Estimate(
        "harmonic", {"k": k, "r0": r0}, "uff-bond", UFF_CITATION, inputs, cross_checks=checks
    )


def _angle(labels: list[str], facts: tuple[Any, ...], inputs: dict[str, Any]) -> Estimate:
    o1, o2 = facts
    inputs["bond_orders"] = [o1, o2]
    theta0 = uff.angle_theta0(labels[1])
    k = uff.angle_k(labels[0], labels[1], labels[2], o1, o2)
    if theta0 >= 179.9:
        return Estimate("linear", {"k": k, "theta0": 180.0}, "uff-angle", UFF_CITATION, inputs)
    return Estimate("harmonic", {"k": k, "theta0": theta0}, "uff-angle", UFF_CITATION, inputs)


def _dihedral(labels: list[str], facts: tuple[Any, ...], inputs: dict[str, Any]) -> Estimate:
    hj, hk, order, ends_sp2, m = facts
    t = uff.torsion(labels[1], labels[2], hj, hk, order, end_atom_sp2=ends_sp2)
    inputs.update(
        {"hybridisation": [hj, hk], "bond_order": order, "torsions_about_bond": m, "barrier_V": t.v}
    )
    kk = t.v / (2.0 * max(m, 1))
    return Estimate(
        "fourier", {}, "uff-torsion", UFF_CITATION, inputs, fourier=((t.n, t.phase, kk),)
    )


def _inversion(facts: tuple[Any, ...], inputs: dict[str, Any]) -> Estimate:
    element, carbonyl = facts
    inputs["bound_to_sp2_oxygen"] = carbonyl
    k = uff.inversion_k_centre(element, carbonyl)
    return Estimate("harmonic", {"k": k, "chi0": 0.0}, "uff-inversion", UFF_CITATION, inputs)
