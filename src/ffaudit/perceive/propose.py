"""Proposed classes for atoms no class rule matches, so the gap can be closed in the set.

A proposal is built from the atom's element, hybridisation, aromaticity, connectivity and charge (for a
hydrogen: the element and connectivity of the atom it is bonded to) as a SMARTS that is checked to match
the atom it was made from. Proposals are suggestions for review: they are emitted as classes marked
``estimated`` and are deliberately general (no ring or neighbour detail).
"""

from __future__ import annotations

from dataclasses import dataclass

from rdkit import Chem

_HYB_NAMES = {
    Chem.HybridizationType.S: "s",
    Chem.HybridizationType.SP: "sp",
    Chem.HybridizationType.SP2: "sp2",
    Chem.HybridizationType.SP3: "sp3",
    Chem.HybridizationType.SP3D: "sp3d",
    Chem.HybridizationType.SP3D2: "sp3d2",
}


@dataclass(frozen=True)
class ProposedClass:
    atom: int
    id: str
    element: str
    smarts: str
    hybridisation: str | None
    aromatic: bool
    charge: int
    description: str

    def to_dict(self) -> dict[str, object]:
        return {
            "atom": self.atom,
            "id": self.id,
            "element": self.element,
            "smarts": self.smarts,
            "hybridisation": self.hybridisation,
        }


def _charge_text(charge: int) -> str:
    return "+0" if charge == 0 else (f"+{charge}" if charge > 0 else f"-{-charge}")


def _charge_id(charge: int) -> str:
    return "" if charge == 0 else (f"p{charge}" if charge > 0 else f"m{-charge}")


def _heavy_smarts(atom: Chem.Atom) -> str:
    arom = "a" if atom.GetIsAromatic() else "A"
    return f"[#{atom.GetAtomicNum()};{arom};X{atom.GetTotalDegree()};{_charge_text(atom.GetFormalCharge())}]"


def propose_class(mol: Chem.Mol, index: int) -> ProposedClass:
    """A class proposal for atom ``index`` of ``mol`` (explicit hydrogens expected). Never raises."""
    atom = mol.GetAtomWithIdx(index)
    element = atom.GetSymbol()
    hyb = _HYB_NAMES.get(atom.GetHybridization())
    charge = atom.GetFormalCharge()
    if atom.GetAtomicNum() == 1 and atom.GetDegree() == 1:
        partner = atom.GetNeighbors()[0]
        smarts = f"[#1]{_heavy_smarts(partner)}"
        ident = f"x_h_{partner.GetSymbol().lower()}{partner.GetTotalDegree()}"
        description = f"hydrogen on {partner.GetSymbol()} with {partner.GetTotalDegree()} connections (proposed)"
    else:
        smarts = _heavy_smarts(atom)
        arom = "ar" if atom.GetIsAromatic() else ""
        ident = f"x_{element.lower()}{hyb or ''}{arom}_x{atom.GetTotalDegree()}{_charge_id(charge)}"
        description = (
            f"{element}, {hyb or 'unknown hybridisation'}, {'aromatic' if arom else 'not aromatic'}, "
            f"{atom.GetTotalDegree()} connections, charge {charge} (proposed)"
        )
    query = Chem.MolFromSmarts(smarts)
    if query is None or not any(
        m[0] == index for m in mol.GetSubstructMatches(query, uniquify=False)
    ):
        # Cannot happen for sanitised molecules; keep the proposal honest rather than wrong.
        description += "; WARNING: the SMARTS did not match its own atom, review by hand"
    return ProposedClass(
        index, ident, element, smarts, hyb, atom.GetIsAromatic(), charge, description
    )
