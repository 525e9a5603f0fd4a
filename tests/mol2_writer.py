"""A small Tripos MOL2 writer for tests (RDKit reads MOL2 but cannot write it).

It writes what RDKit's MOL2 reader expects: explicit hydrogens, SYBYL atom types chosen from RDKit's own
perception (aromaticity, hybridisation, neighbours), aromatic bonds as ``ar`` and amide C-N bonds as ``am``.
Formal charges are not written (the format has no column for them); RDKit's reader infers them from atom
types and valence. Only used to make test inputs; the readers under test never see this code.
"""

from __future__ import annotations

from rdkit import Chem


def _is_carbonyl_carbon(atom: Chem.Atom) -> bool:
    if atom.GetSymbol() != "C":
        return False
    return any(
        bond.GetBondType() == Chem.BondType.DOUBLE
        and bond.GetOtherAtom(atom).GetSymbol() in ("O", "S")
        for bond in atom.GetBonds()
    )


def _is_carboxylate_oxygen(atom: Chem.Atom) -> bool:
    """One of the two oxygens of C(=O)[O-] (both get O.co2)."""
    if atom.GetSymbol() != "O" or atom.GetDegree() != 1:
        return False
    centre = atom.GetNeighbors()[0]
    if centre.GetSymbol() != "C":
        return False
    terminal_o = [n for n in centre.GetNeighbors() if n.GetSymbol() == "O" and n.GetDegree() == 1]
    charged = [n for n in terminal_o if n.GetFormalCharge() == -1]
    return len(terminal_o) == 2 and len(charged) == 1


def sybyl_type(atom: Chem.Atom) -> str:
    """The SYBYL atom type for ``atom`` (of a sanitised molecule with explicit hydrogens)."""
    symbol = atom.GetSymbol()
    hyb = atom.GetHybridization()
    double = any(b.GetBondType() == Chem.BondType.DOUBLE for b in atom.GetBonds())
    triple = any(b.GetBondType() == Chem.BondType.TRIPLE for b in atom.GetBonds())
    if symbol == "C":
        if atom.GetIsAromatic():
            return "C.ar"
        if triple or hyb == Chem.HybridizationType.SP:
            return "C.1"
        if double or hyb == Chem.HybridizationType.SP2:
            return "C.2"
        return "C.3"
    if symbol == "N":
        if atom.GetIsAromatic():
            return "N.ar"
        if atom.GetFormalCharge() == 1 and atom.GetDegree() == 4:
            return "N.4"
        if triple:
            return "N.1"
        if double:
            return "N.2"
        if any(_is_carbonyl_carbon(n) for n in atom.GetNeighbors()):
            return "N.am"
        if hyb == Chem.HybridizationType.SP2:
            return "N.pl3"
        return "N.3"
    if symbol == "O":
        if _is_carboxylate_oxygen(atom):
            return "O.co2"
        return "O.2" if double else "O.3"
    if symbol == "S":
        oxo = sum(
            1
            for b in atom.GetBonds()
            if b.GetBondType() == Chem.BondType.DOUBLE and b.GetOtherAtom(atom).GetSymbol() == "O"
        )
        if oxo >= 2:
            return "S.O2"
        if oxo == 1:
            return "S.O"
        return "S.2" if double else "S.3"
    if symbol == "P":
        return "P.3"
    return symbol


def _bond_type(bond: Chem.Bond) -> str:
    if bond.GetIsAromatic():
        return "ar"
    a, b = bond.GetBeginAtom(), bond.GetEndAtom()
    if bond.GetBondType() == Chem.BondType.SINGLE and {a.GetSymbol(), b.GetSymbol()} == {"C", "N"}:
        carbon, nitrogen = (a, b) if a.GetSymbol() == "C" else (b, a)
        if (
            _is_carbonyl_carbon(carbon)
            and not nitrogen.GetIsAromatic()
            and sybyl_type(nitrogen) == "N.am"
        ):
            return "am"
    order = {Chem.BondType.SINGLE: "1", Chem.BondType.DOUBLE: "2", Chem.BondType.TRIPLE: "3"}
    return order.get(bond.GetBondType(), "un")


def mol_to_mol2_block(mol: Chem.Mol, name: str) -> str:
    """A ``@<TRIPOS>MOLECULE`` record for ``mol`` (needs a conformer; use explicit hydrogens)."""
    conf = mol.GetConformer()
    lines = [
        "@<TRIPOS>MOLECULE",
        name,
        f"{mol.GetNumAtoms()} {mol.GetNumBonds()} 1 0 0",
        "SMALL",
        "NO_CHARGES",
        "",
        "@<TRIPOS>ATOM",
    ]
    counts: dict[str, int] = {}
    for atom in mol.GetAtoms():
        symbol = atom.GetSymbol()
        counts[symbol] = counts.get(symbol, 0) + 1
        pos = conf.GetAtomPosition(atom.GetIdx())
        lines.append(
            f"{atom.GetIdx() + 1:>7} {symbol + str(counts[symbol]):<8}"
            f"{pos.x:>10.4f}{pos.y:>10.4f}{pos.z:>10.4f} {sybyl_type(atom):<6}"
            f"{1:>4}  UNL1      0.0000"
        )
    lines.append("@<TRIPOS>BOND")
    for bond in mol.GetBonds():
        lines.append(
            f"{bond.GetIdx() + 1:>6}{bond.GetBeginAtomIdx() + 1:>6}{bond.GetEndAtomIdx() + 1:>6} "
            f"{_bond_type(bond)}"
        )
    return "\n".join(lines) + "\n"
