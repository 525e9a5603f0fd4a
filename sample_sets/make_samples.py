"""Build the sample library's derived files from sample_sets/formulation-lab.smi.

Writes, next to this script:

- ``formulation-lab.sdf``: every molecule of the SMILES file with explicit hydrogens and 3D coordinates from
  ETKDGv3 (fixed random seed), then optimised with MMFF94 where RDKit has MMFF94 parameters for the whole
  molecule, otherwise with UFF (the ``geometry`` property says which). Titles are the SMILES file's names.
- ``broken/bad.smi``, ``broken/bad.sdf``, ``broken/bad.mol2``, ``broken/bad.pdb``: one deliberately broken
  file per input kind, built from molecules of the library (sample_sets/README.md says what is wrong).

Run ``python sample_sets/make_samples.py`` from the repository root (ffaudit must be importable: the SMILES
file is read with ffaudit's own reader, which must find every line readable). Output is byte-identical for
a given RDKit version.
"""

from __future__ import annotations

import sys
from pathlib import Path

from rdkit import Chem
from rdkit.Chem import AllChem

from ffaudit.read import iter_records

HERE = Path(__file__).resolve().parent
SMILES_FILE = HERE / "formulation-lab.smi"
SDF_NAME = "formulation-lab.sdf"
SEED = 61803
MAX_ITERS = 10000


def load_library() -> list[tuple[str, Chem.Mol, int]]:
    """(name, molecule, line) for every line of formulation-lab.smi; fails if any line is unreadable."""
    out = []
    for record in iter_records(str(SMILES_FILE)):
        if record.mol is None:
            raise SystemExit(f"{SMILES_FILE}: {record.error}")
        out.append((record.name, record.mol, record.line))
    return out


def embed(mol: Chem.Mol, name: str) -> tuple[Chem.Mol, str]:
    """Add hydrogens, embed with ETKDGv3 (seed :data:`SEED`) and optimise; return the molecule and method."""
    mol = Chem.AddHs(mol)
    params = AllChem.ETKDGv3()
    params.randomSeed = SEED
    if AllChem.EmbedMolecule(mol, params) != 0:
        raise SystemExit(f"{name}: ETKDG embedding failed")
    if AllChem.MMFFHasAllMoleculeParams(mol):
        props = AllChem.MMFFGetMoleculeProperties(mol)
        field = AllChem.MMFFGetMoleculeForceField(mol, props)
        method = "ETKDGv3 + MMFF94"
    elif AllChem.UFFHasAllMoleculeParams(mol):
        field = AllChem.UFFGetMoleculeForceField(mol)
        method = "ETKDGv3 + UFF (no MMFF94 parameters for this molecule)"
    else:
        raise SystemExit(f"{name}: neither MMFF94 nor UFF has parameters for every atom")
    if field.Minimize(maxIts=MAX_ITERS) != 0:
        raise SystemExit(f"{name}: optimisation did not converge in {MAX_ITERS} iterations")
    return mol, f"{method}, random seed {SEED}"


def write_sdf(library: list[tuple[str, Chem.Mol, int]], target: Path) -> list[Chem.Mol]:
    mols = []
    with Chem.SDWriter(str(target)) as writer:
        for name, mol, line in library:
            mol3d, method = embed(mol, name)
            mol3d.SetProp("_Name", name)
            mol3d.SetProp("source", f"formulation-lab.smi line {line}")
            mol3d.SetProp("geometry", method)
            writer.write(mol3d)
            mols.append(mol3d)
    return mols


def by_name(mols: list[Chem.Mol], name: str) -> Chem.Mol:
    return next(m for m in mols if m.GetProp("_Name") == name)


def write_bad_smi(broken: Path) -> None:
    lines = [
        "# Larkspur Coatings intake batch 7: some lines are broken on purpose (see sample_sets/README.md)",
        "CCOC(C)=O ethyl-acetate",
        "CCOC(=O)C1CC ring-never-closed",
        "CC(C)O isopropanol",
        "CC(C)(C)(C)(C)O pentavalent-carbon",
        "c1cccc1C(=O)O five-carbon-aromatic-ring",
        "CC#N acetonitrile",
        "[Zz]CCO unknown-element",
        "CCC(C=O ketone-branch-never-closed",
        "O=C(c1ccccc1)c1ccccc1 benzophenone",
    ]
    (broken / "bad.smi").write_text("\n".join(lines) + "\n", encoding="utf-8")


def write_bad_sdf(mols: list[Chem.Mol], broken: Path) -> None:
    good1 = Chem.MolToMolBlock(by_name(mols, "ethyl-acetate"))
    # isopropanol with its C-O bond made triple: the oxygen gets valence 4
    ipa = Chem.Mol(by_name(mols, "isopropanol"))
    oxygen = next(a for a in ipa.GetAtoms() if a.GetSymbol() == "O")
    carbon = next(n for n in oxygen.GetNeighbors() if n.GetSymbol() == "C")
    bond_line = f"{min(oxygen.GetIdx(), carbon.GetIdx()) + 1:>3}{max(oxygen.GetIdx(), carbon.GetIdx()) + 1:>3}"
    ipa_block = Chem.MolToMolBlock(ipa)
    bad_valence = "\n".join(
        line[:6] + "  3" + line[9:] if line.startswith(bond_line) and line[6:9] == "  1" else line
        for line in ipa_block.splitlines()
    )
    good2 = Chem.MolToMolBlock(by_name(mols, "o-xylene"))
    # benzophenone with the second half of its atom lines deleted (counts line still promises all)
    bp = Chem.MolToMolBlock(by_name(mols, "benzophenone")).splitlines()
    n_atoms = int(bp[3][:3])
    truncated = "\n".join(bp[: 4 + n_atoms // 2] + ["M  END"])
    good3 = Chem.MolToMolBlock(by_name(mols, "acetonitrile"))
    blocks = [good1, bad_valence + "\n", good2, truncated + "\n", good3]
    (broken / "bad.sdf").write_text("".join(b + "$$$$\n" for b in blocks), encoding="utf-8")


def _sybyl_type(atom: Chem.Atom) -> str:
    """SYBYL type for the few simple atoms used in bad.mol2 (sp3 or sp C/N/O and H only)."""
    hyb = atom.GetHybridization()
    symbol = atom.GetSymbol()
    if symbol == "H":
        return "H"
    if symbol in ("C", "N") and hyb == Chem.HybridizationType.SP:
        return f"{symbol}.1"
    if symbol in ("C", "O") and hyb == Chem.HybridizationType.SP3:
        return f"{symbol}.3"
    raise SystemExit(f"bad.mol2 writer: no type for {symbol} {hyb}")


def _mol2(mol: Chem.Mol) -> list[str]:
    conf = mol.GetConformer()
    lines = [
        "@<TRIPOS>MOLECULE",
        mol.GetProp("_Name"),
        f"{mol.GetNumAtoms()} {mol.GetNumBonds()} 1 0 0",
        "SMALL",
        "NO_CHARGES",
        "",
        "@<TRIPOS>ATOM",
    ]
    for atom in mol.GetAtoms():
        p = conf.GetAtomPosition(atom.GetIdx())
        label = f"{atom.GetSymbol()}{atom.GetIdx() + 1}"
        lines.append(
            f"{atom.GetIdx() + 1:>7} {label:<8}{p.x:>10.4f}{p.y:>10.4f}{p.z:>10.4f} "
            f"{_sybyl_type(atom):<6}   1  UNL1      0.0000"
        )
    lines.append("@<TRIPOS>BOND")
    for bond in mol.GetBonds():
        order = {1.0: "1", 2.0: "2", 3.0: "3"}[bond.GetBondTypeAsDouble()]
        lines.append(
            f"{bond.GetIdx() + 1:>6}{bond.GetBeginAtomIdx() + 1:>6}{bond.GetEndAtomIdx() + 1:>6} {order}"
        )
    return lines


def write_bad_mol2(mols: list[Chem.Mol], broken: Path) -> None:
    good = _mol2(by_name(mols, "acetonitrile"))
    missing = _mol2(by_name(mols, "isopropanol"))
    bond_at = missing.index("@<TRIPOS>BOND") + 1
    fields = missing[bond_at].split()
    missing[bond_at] = f"{fields[0]:>6}{fields[1]:>6}{'42':>6} {fields[3]}"  # a bond to atom 42
    bad_type = _mol2(by_name(mols, "isopropanol"))
    first_oxygen = next(i for i, line in enumerate(bad_type) if " O.3 " in line)
    bad_type[first_oxygen] = bad_type[first_oxygen].replace(" O.3 ", " Zz.3")
    text = "\n".join(good + missing + bad_type + good) + "\n"
    (broken / "bad.mol2").write_text(text, encoding="utf-8")


def write_bad_pdb(mols: list[Chem.Mol], broken: Path) -> None:
    good = Chem.MolToPDBBlock(by_name(mols, "ethyl-acetate"))
    conect_missing = Chem.MolToPDBBlock(by_name(mols, "methyl-ethyl-ketone")).replace(
        "CONECT    1", "CONECT   99", 1
    )
    heavy = Chem.RemoveHs(by_name(mols, "benzophenone"))
    heavy.SetProp("_Name", "benzophenone")
    no_hydrogens = Chem.MolToPDBBlock(heavy, flavor=8)  # no H and no bond orders in CONECT
    last = Chem.MolToPDBBlock(by_name(mols, "acetonitrile"))
    (broken / "bad.pdb").write_text(good + conect_missing + no_hydrogens + last, encoding="utf-8")


def main(argv: list[str] | None = None) -> int:
    """Write the derived files next to this script, or under DIR with ``--out DIR``."""
    args = sys.argv[1:] if argv is None else argv
    if args and (args[0] != "--out" or len(args) != 2):
        print("usage: make_samples.py [--out DIR]", file=sys.stderr)
        return 2
    out = Path(args[1]) if args else HERE
    broken = out / "broken"
    broken.mkdir(parents=True, exist_ok=True)
    mols = write_sdf(load_library(), out / SDF_NAME)
    write_bad_smi(broken)
    write_bad_sdf(mols, broken)
    write_bad_mol2(mols, broken)
    write_bad_pdb(mols, broken)
    print(f"wrote {out / SDF_NAME} ({len(mols)} molecules) and {broken}/bad.{{smi,sdf,mol2,pdb}}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
