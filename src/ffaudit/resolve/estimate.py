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
they stay missing. Nothing here raises: a rule that does not apply gives ``None`` and a reason.
"""

from __future__ import annotations

from collections.abc import Mapping
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
    """UFF types of one molecule's atoms, computed on first use."""

    def __init__(self, mol: Chem.Mol) -> None:
        self.mol = mol
        self._types: dict[int, UffTyping] = {}

    def of(self, atom: int) -> UffTyping:
        typing = self._types.get(atom)
        if typing is None:
            typing = assign_uff_type(self.mol.GetAtomWithIdx(atom))
            self._types[atom] = typing
        return typing


def estimate_term(term: Term, types: MoleculeTypes) -> tuple[Estimate | None, str | None]:
    """Estimate ``term`` by the rule for its kind; (estimate, None) or (None, reason)."""
    rule = RULE_IDS.get(term.kind)
    if rule is None:
        return None, f"ffaudit has no published rule to estimate {term.kind} terms"
    typings = [types.of(i) for i in term.atoms]
    for i, t in zip(term.atoms, typings, strict=True):
        if t.label is None:
            return None, f"atom {i}: no UFF type ({t.reason})"
    labels = [t.label for t in typings if t.label is not None]
    inputs: dict[str, Any] = {
        "uff_types": labels,
        "assumed": [
            f"atom {i}: {t.label} ({t.reason})" for i, t in zip(term.atoms, typings, strict=True)
        ],
    }
    mol = types.mol
    try:
        if term.kind == "bond":
            return _bond(term, labels, mol, inputs), None
        if term.kind == "angle":
            return _angle(term, labels, mol, inputs), None
        if term.kind == "dihedral":
            return _dihedral(term, labels, mol, inputs)
        if term.kind == "out_of_plane":
            return _inversion(term, mol, inputs)
        x_half, depth = uff.lj_rmin_half_epsilon(labels[0])
        return Estimate(
            "lennard_jones", {"rmin_half": x_half, "epsilon": depth}, rule, UFF_CITATION, inputs
        ), None
    except (KeyError, ValueError) as exc:
        return None, f"{rule} does not apply: {exc}"


def _order(mol: Chem.Mol, i: int, j: int) -> float:
    bond = mol.GetBondBetweenAtoms(i, j)
    order = bond.GetBondTypeAsDouble()
    if order <= 0:
        raise ValueError(f"bond {i}-{j} has no bond order ({bond.GetBondType()!s})")
    return order


def _bond(term: Term, labels: list[str], mol: Chem.Mol, inputs: dict[str, Any]) -> Estimate:
    i, j = term.atoms
    order = _order(mol, i, j)
    inputs["bond_order"] = order
    r0 = uff.bond_r0(labels[0], labels[1], order)
    k = uff.bond_k(labels[0], labels[1], order)
    checks: dict[str, Any] = {}
    try:
        e1, e2 = mol.GetAtomWithIdx(i).GetSymbol(), mol.GetAtomWithIdx(j).GetSymbol()
        checks = {"badger_k": round(badger_k(r0, e1, e2), 3), "badger_citation": BADGER_CITATION}
    except (KeyError, ValueError):
        pass
    return Estimate(
        "harmonic", {"k": k, "r0": r0}, "uff-bond", UFF_CITATION, inputs, cross_checks=checks
    )


def _angle(term: Term, labels: list[str], mol: Chem.Mol, inputs: dict[str, Any]) -> Estimate:
    a, b, c = term.atoms
    o1, o2 = _order(mol, a, b), _order(mol, b, c)
    inputs["bond_orders"] = [o1, o2]
    theta0 = uff.angle_theta0(labels[1])
    k = uff.angle_k(labels[0], labels[1], labels[2], o1, o2)
    if theta0 >= 179.9:
        return Estimate("linear", {"k": k, "theta0": 180.0}, "uff-angle", UFF_CITATION, inputs)
    return Estimate("harmonic", {"k": k, "theta0": theta0}, "uff-angle", UFF_CITATION, inputs)


def _dihedral(
    term: Term, labels: list[str], mol: Chem.Mol, inputs: dict[str, Any]
) -> tuple[Estimate | None, str | None]:
    i, j, k, last = term.atoms
    aj, ak = mol.GetAtomWithIdx(j), mol.GetAtomWithIdx(k)
    hj, hk = _HYB.get(aj.GetHybridization()), _HYB.get(ak.GetHybridization())
    if hj not in ("sp2", "sp3") or hk not in ("sp2", "sp3"):
        return (
            None,
            f"uff-torsion covers sp2/sp3 central atoms only (got {hj or aj.GetHybridization()!s}, {hk or ak.GetHybridization()!s})",
        )
    order = _order(mol, j, k)
    ends_sp2 = any(
        mol.GetAtomWithIdx(x).GetHybridization() == Chem.HybridizationType.SP2 for x in (i, last)
    )
    t = uff.torsion(labels[1], labels[2], hj, hk, order, end_atom_sp2=ends_sp2)
    common = len({n.GetIdx() for n in aj.GetNeighbors()} & {n.GetIdx() for n in ak.GetNeighbors()})
    m = (aj.GetDegree() - 1) * (ak.GetDegree() - 1) - common
    inputs.update(
        {"hybridisation": [hj, hk], "bond_order": order, "torsions_about_bond": m, "barrier_V": t.v}
    )
    kk = t.v / (2.0 * max(m, 1))
    return (
        Estimate("fourier", {}, "uff-torsion", UFF_CITATION, inputs, fourier=((t.n, t.phase, kk),)),
        None,
    )


def _inversion(
    term: Term, mol: Chem.Mol, inputs: dict[str, Any]
) -> tuple[Estimate | None, str | None]:
    centre = mol.GetAtomWithIdx(term.atoms[0])
    element = centre.GetSymbol()
    if element not in ("C", "N", "O"):
        return None, f"uff-inversion covers planar C, N, O centres in ffaudit, not {element}"
    # UFF's K = 50 applies to a carbon bonded to an sp2 oxygen (a carbonyl, but also a conjugated O such as
    # a phenol's, which RDKit perceives as sp2); judged on RDKit's hybridisation, as RDKit's UFF does [C].
    carbonyl = element == "C" and any(
        n.GetSymbol() == "O" and n.GetHybridization() == Chem.HybridizationType.SP2
        for n in centre.GetNeighbors()
    )
    inputs["bound_to_sp2_oxygen"] = carbonyl
    k = uff.inversion_k_centre(element, carbonyl)
    return Estimate("harmonic", {"k": k, "chi0": 0.0}, "uff-inversion", UFF_CITATION, inputs), None
