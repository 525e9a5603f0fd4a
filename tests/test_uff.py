"""ffaudit's own UFF rules (ffaudit.estimate.uff*) reproduce RDKit's UFF parameter getters.

Check values come from outside ffaudit: RDKit 2026.09's ``rdkit.Chem.rdForceFieldHelpers``
``GetUFFBondStretchParams``, ``GetUFFAngleBendParams``, ``GetUFFTorsionParams``,
``GetUFFInversionParams`` and ``GetUFFVdWParams`` (conventions in
/work/shared/reference/check_values.md section 4, [C]), evaluated on
- the six molecules of check_values.md section 4 (ethane, ethylene, benzene, acetone, methylamine, H2O2),
- small molecules chosen so that every type of ffaudit.estimate.uff_table occurs (listed below), and
- the first 200 molecules of RDKit's shipped NCI set (rdkit/Data/NCI/first_5K.smi) that RDKit's UFF can
  parameterise (``UFFHasAllMoleculeParams``).

Energy conventions, handled explicitly:
- bonds: RDKit's ``kb`` multiplies 1/2 (r - r0)^2, so it *is* the curvature ffaudit uses: factor 1;
- angles: RDKit's ``ka`` is the K of UFF's cosine-series bend; the curvature of that energy at theta0 is
  exactly K for the general, linear and trigonal forms, so ``angle_k`` (a curvature) compares with ``ka``
  at factor 1; RDKit returns theta0 in degrees, like ffaudit;
- torsions: the getter returns V for one torsion before RDKit divides it by the number of torsions about
  the bond; ``torsion().v`` is the same per-bond V (n and phase are not returned by RDKit, so only V is
  compared);
- inversions: the getter (central atom = second index) returns K already divided by 3 (one of the three
  terms of a centre), which is what ``inversion_k`` returns;
- van der Waals: (x_ij, D_ij) in A and kcal/mol, geometric combination.
"""

from __future__ import annotations

import itertools
import math
import os
from dataclasses import dataclass, field

import pytest
from rdkit import Chem, RDConfig, rdBase
from rdkit.Chem import rdForceFieldHelpers as ffh

from ffaudit.estimate import uff
from ffaudit.estimate.uff_table import UFF_TYPES, uff_type
from ffaudit.estimate.uff_types import assign_uff_type, bond_order

REL = 1e-6
NCI_SMI = os.path.join(RDConfig.RDDataDir, "NCI", "first_5K.smi")
NCI_COUNT = 200

# check_values.md section 4: the six molecules whose getter output was tabulated there [C].
REFERENCE_MOLECULES = {
    "ethane": "CC",
    "ethylene": "C=C",
    "benzene": "c1ccccc1",
    "acetone": "CC(C)=O",
    "methylamine": "CN",
    "H2O2": "OO",
}

# Chosen so that every type of UFF_TYPES occurs, and every V/U that some rule uses is exercised.
TYPE_MOLECULES = {
    "tetrahydroborate (B_3)": "[BH4-]",
    "tetramethylborate (B_3 torsions)": "C[B-](C)(C)C",
    "phenylboronic acid (B_2, O_3 next to sp2)": "OB(O)c1ccccc1",
    "boron trifluoride (B_2, F_)": "FB(F)F",
    "acetylene (C_1)": "C#C",
    "acetonitrile (N_1)": "CC#N",
    "methyl isocyanide (N_1 apex)": "C[N+]#[C-]",
    "carbon monoxide (O_1)": "[C-]#[O+]",
    "N-methylethanimine (N_2)": "CC=NC",
    "acetamide (N_R, O_R, C_R)": "CC(N)=O",
    "acetic acid (O_R)": "CC(=O)O",
    "methanol (O_3)": "CO",
    "tetramethylsilane (Si3)": "C[Si](C)(C)C",
    "trimethylphosphine (P_3+3)": "CP(C)C",
    "trimethyl phosphate (P_3+5)": "COP(=O)(OC)OC",
    "dimethyl sulfide (S_3+2)": "CSC",
    "thioanisole (S_3+2 next to sp2)": "CSc1ccccc1",
    "methyl phenyl sulfoxide (S_3+4)": "CS(=O)c1ccccc1",
    "methyl phenyl sulfone (S_3+6)": "CS(=O)(=O)c1ccccc1",
    "thiophene (S_R)": "c1ccsc1",
    "thioacetone (S_2)": "CC(C)=S",
    "dimethyl selenide (Se3+2)": "C[Se]C",
    "selenoanisole (Se3+2 next to sp2)": "C[Se]c1ccccc1",
    "chloromethane (Cl)": "CCl",
    "bromobenzene (Br)": "Brc1ccccc1",
    "iodomethane (I_)": "CI",
    "fluoroethylene (F_)": "FC=C",
}

_HYB = Chem.rdchem.HybridizationType


def with_h(smiles: str) -> Chem.Mol:
    mol = Chem.MolFromSmiles(smiles)
    assert mol is not None, smiles
    return Chem.AddHs(mol)


def nci_molecules(limit: int) -> list[tuple[str, Chem.Mol]]:
    """The first ``limit`` parseable molecules of first_5K.smi (SMILES <tab> id), with explicit H."""
    molecules: list[tuple[str, Chem.Mol]] = []
    with rdBase.BlockLogs(), open(NCI_SMI, encoding="ascii") as handle:
        for line in handle:
            smiles, _, ident = line.strip().partition("\t")
            mol = Chem.MolFromSmiles(smiles)
            if mol is not None:
                molecules.append((f"NCI {ident.strip()}", Chem.AddHs(mol)))
            if len(molecules) == limit:
                break
    return molecules


@dataclass
class Tally:
    """How many values were compared, which table fields they exercised, and every mismatch."""

    compared: dict[str, int] = field(
        default_factory=lambda: dict.fromkeys(("bond", "angle", "torsion", "inversion", "vdw"), 0)
    )
    used: set[tuple[str, str]] = field(default_factory=set)
    mismatches: list[str] = field(default_factory=list)

    def check(self, what: str, ours: float, theirs: float) -> None:
        if not math.isclose(ours, theirs, rel_tol=REL, abs_tol=1e-12):
            self.mismatches.append(f"{what}: ffaudit {ours!r} RDKit {theirs!r}")


def _hyb_name(atom: Chem.Atom) -> str | None:
    return {_HYB.SP2: "sp2", _HYB.SP3: "sp3"}.get(atom.GetHybridization())


def compare_molecule(name: str, mol: Chem.Mol, tally: Tally) -> None:
    """Compare every bond, angle, torsion, inversion and like-pair vdW term of ``mol`` with RDKit."""
    types = []
    for atom in mol.GetAtoms():
        typing = assign_uff_type(atom)
        assert typing.label is not None, f"{name}: atom {atom.GetIdx()} untyped: {typing.reason}"
        types.append(typing.label)

    def order(i: int, j: int) -> float:
        return bond_order(mol.GetBondBetweenAtoms(i, j))

    for bond in mol.GetBonds():
        i, j = bond.GetBeginAtomIdx(), bond.GetEndAtomIdx()
        kb, r0 = ffh.GetUFFBondStretchParams(mol, i, j)
        where = f"{name} bond {i}-{j} {types[i]}-{types[j]}"
        # Factor 1: RDKit's kb multiplies 1/2 (r - r0)^2, i.e. it is the curvature.
        tally.check(where + " r0", uff.bond_r0(types[i], types[j], order(i, j)), r0)
        tally.check(where + " k", uff.bond_k(types[i], types[j], order(i, j)), kb)
        tally.compared["bond"] += 1
        for t in (types[i], types[j]):
            tally.used.update({(t, "r1"), (t, "chi"), (t, "z_star")})

    for apex in mol.GetAtoms():
        j = apex.GetIdx()
        for a, b in itertools.combinations([n.GetIdx() for n in apex.GetNeighbors()], 2):
            ka, theta0 = ffh.GetUFFAngleBendParams(mol, a, j, b)
            where = f"{name} angle {a}-{j}-{b} {types[a]}-{types[j]}-{types[b]}"
            tally.check(where + " theta0", uff.angle_theta0(types[j]), theta0)
            # Factor 1: ka is K of UFF's bend, and K is the bend's curvature at theta0.
            k = uff.angle_k(types[a], types[j], types[b], order(a, j), order(j, b))
            tally.check(where + " k", k, ka)
            tally.compared["angle"] += 1
            tally.used.add((types[j], "theta0"))

    for bond in mol.GetBonds():
        j, k = bond.GetBeginAtomIdx(), bond.GetEndAtomIdx()
        aj, ak = mol.GetAtomWithIdx(j), mol.GetAtomWithIdx(k)
        for i, m in itertools.product(
            [n.GetIdx() for n in aj.GetNeighbors() if n.GetIdx() != k],
            [n.GetIdx() for n in ak.GetNeighbors() if n.GetIdx() != j],
        ):
            if i == m:
                continue  # 3-membered ring
            theirs = ffh.GetUFFTorsionParams(mol, i, j, k, m)
            where = f"{name} torsion {i}-{j}-{k}-{m} {types[j]}-{types[k]}"
            hj, hk = _hyb_name(aj), _hyb_name(ak)
            if hj is None or hk is None:
                assert theirs is None, f"{where}: RDKit has a torsion about a non-sp2/sp3 atom"
                with pytest.raises(ValueError):
                    uff.torsion(types[j], types[k], hj or "sp", hk or "sp", order(j, k))
                continue
            end_sp2 = any(mol.GetAtomWithIdx(x).GetHybridization() == _HYB.SP2 for x in (i, m))
            ours = uff.torsion(types[j], types[k], hj, hk, order(j, k), end_atom_sp2=end_sp2)
            assert theirs is not None, where
            tally.check(where + " V", ours.v, theirs)
            tally.compared["torsion"] += 1
            tally.used.update(_torsion_fields(types[j], types[k], hj, hk, order(j, k), end_sp2))

    for centre in mol.GetAtoms():
        if centre.GetDegree() != 3:
            continue
        j = centre.GetIdx()
        a, b, c = (n.GetIdx() for n in centre.GetNeighbors())
        theirs = ffh.GetUFFInversionParams(mol, a, j, b, c)  # second index = central atom
        element = centre.GetSymbol()
        planar = element in ("C", "N", "O") and centre.GetHybridization() == _HYB.SP2
        if not (planar or element == "P"):
            assert theirs is None, f"{name}: RDKit inversion at {element} {j} that ffaudit skips"
            continue
        to_sp2_o = any(
            n.GetSymbol() == "O" and n.GetHybridization() == _HYB.SP2 for n in centre.GetNeighbors()
        )
        assert theirs is not None, f"{name}: no RDKit inversion at {element} {j}"
        tally.check(
            f"{name} inversion at {j} ({types[j]})", uff.inversion_k(element, to_sp2_o), theirs
        )
        tally.compared["inversion"] += 1

    for atom in mol.GetAtoms():
        i = atom.GetIdx()
        x, d = ffh.GetUFFVdWParams(mol, i, i)
        tally.check(f"{name} vdW x {types[i]}", uff.lj(types[i])[0], x)
        tally.check(f"{name} vdW D {types[i]}", uff.lj(types[i])[1], d)
        tally.compared["vdw"] += 1
        tally.used.update({(types[i], "x1"), (types[i], "d1")})
    if mol.GetNumAtoms() >= 2:
        x, d = ffh.GetUFFVdWParams(mol, 0, mol.GetNumAtoms() - 1)
        x_ours, d_ours = uff.lj_pair(types[0], types[-1])
        tally.check(f"{name} vdW pair x", x_ours, x)
        tally.check(f"{name} vdW pair D", d_ours, d)


def _torsion_fields(
    t2: str, t3: str, h2: str, h3: str, order: float, end_sp2: bool
) -> set[tuple[str, str]]:
    """The table fields that UFF's torsion rule reads for this case (mirrors the rule's branches)."""
    e2, e3 = uff_type(t2).element, uff_type(t3).element
    single = order == 1.0
    if (h2, h3) == ("sp3", "sp3"):
        if single and e2 in uff.GROUP_16 and e3 in uff.GROUP_16:
            return set()  # fixed V = 2 (O) / 6.8 (others)
        return {(t2, "v_sp3"), (t3, "v_sp3")}
    if (h2, h3) == ("sp2", "sp2"):
        return {(t2, "u_sp2"), (t3, "u_sp2")}
    e_sp3, e_sp2 = (e2, e3) if h2 == "sp3" else (e3, e2)
    if single and e_sp3 in uff.GROUP_16 and e_sp2 not in uff.GROUP_16:
        return {(t2, "u_sp2"), (t3, "u_sp2")}
    return set()


def run(molecules: dict[str, str]) -> Tally:
    tally = Tally()
    for name, smiles in molecules.items():
        compare_molecule(name, with_h(smiles), tally)
    return tally


def test_reference_molecules_match_rdkit() -> None:
    tally = run(REFERENCE_MOLECULES)
    assert tally.mismatches == []
    # Counts from check_values.md section 5 ([C]): bonds 7+5+12+9+6+3, angles 12+6+18+15+9+2,
    # torsions 9+4+24+12+6+1, inversions (RDKit UFF) 0+6/3+18/3+3/3+0+0 centres.
    assert tally.compared["bond"] == 42
    assert tally.compared["angle"] == 62
    assert tally.compared["torsion"] == 56
    assert tally.compared["inversion"] == 2 + 6 + 1


def test_reference_values_from_check_values() -> None:
    # check_values.md section 4, ethane excerpt [C]: C-C (699.592, 1.514), C-H (662.139, 1.1094),
    # C-C-H ka 117.319 at 109.47, H-C-C-H V 2.119. Rounded there, so compared at the printed digits.
    assert uff.bond_k("C_3", "C_3", 1.0) == pytest.approx(699.592, abs=5e-4)
    assert uff.bond_r0("C_3", "C_3", 1.0) == pytest.approx(1.514, abs=5e-4)
    assert uff.bond_k("C_3", "H_", 1.0) == pytest.approx(662.139, abs=5e-4)
    assert uff.bond_r0("C_3", "H_", 1.0) == pytest.approx(1.1094, abs=5e-5)
    assert uff.angle_k("C_3", "C_3", "H_") == pytest.approx(117.319, abs=5e-4)
    assert uff.torsion("C_3", "C_3", "sp3", "sp3", 1.0).v == pytest.approx(2.119, abs=5e-4)


def test_r_en_is_subtracted() -> None:
    # check_values.md section 4 [C]: adding r_EN gives C-H 1.1126 A, RDKit (and UFF) 1.1094 A.
    a, b = uff_type("C_3"), uff_type("H_")
    r_en = a.r1 * b.r1 * (math.sqrt(a.chi) - math.sqrt(b.chi)) ** 2 / (a.chi * a.r1 + b.chi * b.r1)
    assert r_en > 0
    assert a.r1 + b.r1 + r_en == pytest.approx(1.1126, abs=5e-5)
    assert uff.bond_r0("C_3", "H_", 1.0) == pytest.approx(1.1094, abs=5e-5)


# (type, field) pairs that no UFF rule reads for the chemistry RDKit types, so no getter can check them.
_TERMINAL = ("H_", "F_", "Cl", "Br", "I_", "O_2", "O_1", "S_2")  # never an apex
_NO_U = ("H_", "F_", "Cl", "Br", "I_", "C_3", "N_3", "B_3", "Si3", "P_3+3", "P_3+5") + (
    ("C_1", "N_1", "O_1", "O_2", "S_2")  # sp types, and sp2 types that are always terminal
)
_SP3 = ("C_3", "N_3", "O_3", "B_3", "Si3", "P_3+3", "P_3+5", "S_3+2", "S_3+4", "S_3+6", "Se3+2")
UNEXERCISED = (
    {(t, "zeta") for t in UFF_TYPES}  # exponential-6 shape: the LJ form never uses it
    | {(t, "theta0") for t in _TERMINAL}
    | {(t, "u_sp2") for t in _NO_U}
    | {(t, "v_sp3") for t in UFF_TYPES if t not in _SP3}  # V is read for sp3-sp3 bonds only
)


def test_every_table_value_is_checked_by_a_getter() -> None:
    tally = run(TYPE_MOLECULES | REFERENCE_MOLECULES)
    assert tally.mismatches == []
    fields = ("r1", "theta0", "x1", "d1", "zeta", "z_star", "v_sp3", "u_sp2", "chi")
    everything = {(t, f) for t in UFF_TYPES for f in fields}
    # Every value is exercised except the documented ones, and none of those is secretly exercised.
    assert everything - tally.used == UNEXERCISED
    print(
        f"\nUFF table: {len(tally.used)} of {len(everything)} values checked against RDKit getters"
    )


def test_nci_first_200_match_rdkit() -> None:
    tally = Tally()
    skipped: list[str] = []
    molecules = 0
    for name, mol in nci_molecules(NCI_COUNT):
        if not ffh.UFFHasAllMoleculeParams(mol):
            skipped.append(name)
            continue
        compare_molecule(name, mol, tally)
        molecules += 1
    print(
        f"\nNCI first {NCI_COUNT}: {molecules} molecules compared, {len(skipped)} skipped "
        f"(RDKit's UFF cannot type them: {', '.join(skipped)}); terms compared: {tally.compared}"
    )
    assert tally.mismatches == [], "\n".join(tally.mismatches[:20])
    assert molecules >= 190
    assert tally.compared["bond"] > 5000
    assert tally.compared["angle"] > 8000
    assert tally.compared["torsion"] > 10000
    assert tally.compared["inversion"] > 500


def test_torsion_cases() -> None:
    # UFF 1992 rules (see ffaudit.estimate.uff.torsion); independent arithmetic on the table values.
    assert uff.torsion("C_3", "C_3", "sp3", "sp3", 1.0) == (2.119, 3, 0.0, 180.0)
    o_o = uff.torsion("O_3", "O_3", "sp3", "sp3", 1.0)
    assert (o_o.v, o_o.n, o_o.phase) == (2.0, 2, 0.0)
    s_o = uff.torsion("S_3+2", "O_3", "sp3", "sp3", 1.0)
    assert s_o.v == pytest.approx(math.sqrt(6.8 * 2.0))
    c2c2 = uff.torsion("C_2", "C_2", "sp2", "sp2", 2.0)
    assert (c2c2.n, c2c2.phase) == (2, 180.0)
    assert c2c2.v == pytest.approx(5 * 2 * (1 + 4.18 * math.log(2)))
    assert uff.torsion("C_3", "C_2", "sp3", "sp2", 1.0) == (1.0, 6, 180.0, 0.0)
    assert uff.torsion("C_3", "C_2", "sp3", "sp2", 1.0, end_atom_sp2=True) == (2.0, 3, 0.0, 180.0)
    o_c = uff.torsion("O_3", "C_R", "sp3", "sp2", 1.0)
    assert o_c.v == pytest.approx(10.0)
    assert (o_c.n, o_c.phase) == (2, 0.0)
    with pytest.raises(ValueError):
        uff.torsion("C_1", "C_3", "sp", "sp3", 1.0)
    with pytest.raises(ValueError):
        uff.bond_r0("C_3", "C_3", 0.0)
    with pytest.raises(KeyError, match="no UFF type"):
        uff.bond_r0("C_9", "C_3", 1.0)


def test_inversion_values() -> None:
    # UFF 1992: K = 6 (sp2 C, N, O), 50 for C bound to sp2 O; RDKit divides by the 3 terms per centre.
    assert uff.inversion_k("C") == pytest.approx(2.0)
    assert uff.inversion_k("C", bound_to_sp2_oxygen=True) == pytest.approx(50.0 / 3.0)
    assert uff.inversion_k("N", bound_to_sp2_oxygen=True) == pytest.approx(2.0)
    assert uff.inversion_k_centre("C", True) == pytest.approx(50.0)
    with pytest.raises(ValueError):
        uff.inversion_k("S")


def test_typing_reasons() -> None:
    mol = with_h("CC(N)=O")
    n = assign_uff_type(mol.GetAtomWithIdx(2))
    assert n.label == "N_R" and "conjugated" in n.reason
    se = assign_uff_type(with_h("c1cc[se]c1").GetAtomWithIdx(3))
    assert se.label is None and "selenium" in se.reason
    fe = assign_uff_type(Chem.MolFromSmiles("[Fe]").GetAtomWithIdx(0))
    assert fe.label is None and "Fe" in fe.reason


def test_amide_rule_is_optional() -> None:
    mol = with_h("CC(N)=O")
    cn = mol.GetBondBetweenAtoms(1, 2)
    assert bond_order(cn) == 1.0  # what RDKit's UFF uses
    assert bond_order(cn, amide_rule=True) == pytest.approx(1.41)  # what the UFF paper prescribes
    cc = mol.GetBondBetweenAtoms(0, 1)
    assert bond_order(cc, amide_rule=True) == 1.0
