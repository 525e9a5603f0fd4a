"""Tests for ffaudit.terms (term enumeration).

Check values come from outside the enumerator:
- the graph formulas N_bonds = number of bonds, N_angles = sum_atoms C(deg, 2),
  N_dihedrals = sum_bonds (d_j - 1)(d_k - 1) - 3 N_triangles (the i = l pseudo-paths of 3-rings
  removed), with the per-molecule values of /work/shared/reference/check_values.md section 5
  ([C]: formula, networkx path count and RDKit MMFF94 term log agree);
- RDKit's own perception (hybridisation, aromaticity, ring membership, SMARTS matching);
- RDKit's shipped NCI data sets (rdkit/Data/NCI/first_200.props.sdf and first_5K.smi).
"""

from __future__ import annotations

import itertools
import os
from collections.abc import Iterator

import numpy as np
import pytest
from rdkit import Chem, RDConfig, RDLogger

from ffaudit.paramset.canonical import canonical_classes
from ffaudit.paramset.model import KINDS, Header
from ffaudit.terms import DEFAULT_KINDS, Term, count_terms, enumerate_terms, is_linear_atom

NCI_DIR = os.path.join(RDConfig.RDDataDir, "NCI")
LINEAR = Chem.MolFromSmarts(
    "[D2;^1]"
)  # SMARTS ^1 = SP hybridisation (RDKit extension), D2 = 2 neighbours
PLANAR = Chem.MolFromSmarts("[D3&^2,D3&a]")  # 3 neighbours and (SP2 or aromatic)
TRIGONAL = Chem.MolFromSmarts("[D3]")


def header(**kw: object) -> Header:
    return Header(name="t", version="0", **kw)  # type: ignore[arg-type]


def with_h(smiles: str) -> Chem.Mol:
    mol = Chem.MolFromSmiles(smiles)
    assert mol is not None, smiles
    return Chem.AddHs(mol)


def elements(mol: Chem.Mol) -> list[str | None]:
    return [a.GetSymbol() for a in mol.GetAtoms()]


def counts(smiles: str, **kw: object) -> dict[str, int]:
    mol = with_h(smiles)
    return count_terms(enumerate_terms(mol, elements(mol), header(**kw)))


# --- known counts ---------------------------------------------------------------------------------

# (name, SMILES, bonds, angles, dihedrals): check_values.md section 5, explicit H, [C] (formula,
# path count and RDKit MMFF94 log agree). Cyclopropane 24 = 27 - 3, bicyclo[1.1.0]butane
# 39 = 45 - 6 (3-ring pseudo-paths removed).
KNOWN_COUNTS = [
    ("ethane", "CC", 7, 12, 9),
    ("ethylene", "C=C", 5, 6, 4),
    ("benzene", "c1ccccc1", 12, 18, 24),
    ("acetone", "CC(=O)C", 9, 15, 12),
    ("methylamine", "CN", 6, 9, 6),
    ("H2O2", "OO", 3, 2, 1),
    ("cyclopropane", "C1CC1", 9, 18, 24),
    ("bicyclo[1.1.0]butane", "C1C2CC12", 11, 24, 39),
]


@pytest.mark.parametrize(("name", "smiles", "n_bonds", "n_angles", "n_dihedrals"), KNOWN_COUNTS)
def test_known_counts(
    name: str, smiles: str, n_bonds: int, n_angles: int, n_dihedrals: int
) -> None:
    got = counts(smiles)
    n_atoms = with_h(smiles).GetNumAtoms()
    assert got["bond"] == n_bonds, name
    assert got["angle"] == n_angles, name
    assert got.get("dihedral", 0) == n_dihedrals, name
    assert got["nonbonded"] == n_atoms, name
    # none of these has a linear atom, so the linear switch must not change anything
    assert counts(smiles, dihedrals_about_linear=True).get("dihedral", 0) == n_dihedrals, name


def test_h2o2_dihedral_is_the_h_o_o_h_path() -> None:
    # HOOH (atoms O0 O1 H2 H3 after AddHs): the one dihedral is H2-O0-O1-H3 about the O-O bond.
    mol = with_h("OO")
    (term,) = [t for t in enumerate_terms(mol, elements(mol), header()) if t.kind == "dihedral"]
    assert term == Term("dihedral", (2, 0, 1, 3), ("H", "O", "O", "H"), "single", False)


# (name, SMILES, dihedrals with linear exclusion, without): check_values.md section 5 [C]; RDKit's
# MMFF94 log has 0 torsions for both, the pure graph formula gives 4 and 3.
LINEAR_COUNTS = [
    ("propyne", "CC#C", 0, 4),
    ("acetonitrile", "CC#N", 0, 3),
]


@pytest.mark.parametrize(("name", "smiles", "excluded", "included"), LINEAR_COUNTS)
def test_dihedrals_about_linear_atoms(name: str, smiles: str, excluded: int, included: int) -> None:
    assert counts(smiles).get("dihedral", 0) == excluded, name
    assert counts(smiles, dihedrals_about_linear=True).get("dihedral", 0) == included, name


# (name, SMILES, centres rule, number of out-of-plane terms). Planar centres: three neighbours and
# sp2/aromatic by RDKit's perception; ethylene 2 C, benzene 6 C, acetone the carbonyl C (O has one
# neighbour), methylamine none (sp3 N). Trigonal: every 3-neighbour atom, so methylamine's N counts.
# Hand counts from the structures (check_values.md section 5 lists 3x these as MMFF-style tuples).
OOP_COUNTS = [
    ("ethylene", "C=C", "planar", 2),
    ("benzene", "c1ccccc1", "planar", 6),
    ("acetone", "CC(=O)C", "planar", 1),
    ("methylamine", "CN", "planar", 0),
    ("methylamine", "CN", "trigonal", 1),
    ("benzene", "c1ccccc1", "trigonal", 6),
    ("benzene", "c1ccccc1", "none", 0),
    ("ethane", "CC", "trigonal", 0),
]


@pytest.mark.parametrize(("name", "smiles", "centres", "n_oop"), OOP_COUNTS)
def test_out_of_plane_counts(name: str, smiles: str, centres: str, n_oop: int) -> None:
    assert counts(smiles, out_of_plane_centres=centres).get("out_of_plane", 0) == n_oop, name


def test_out_of_plane_term_shape() -> None:
    # acetone: the carbonyl carbon (atom 1) is the only planar centre; outer atoms sorted by
    # (class, index): C0, C3, O2 (classes "C" < "O").
    mol = with_h("CC(=O)C")
    (term,) = [t for t in enumerate_terms(mol, elements(mol), header()) if t.kind == "out_of_plane"]
    assert term == Term("out_of_plane", (1, 0, 3, 2), ("C", "C", "C", "O"))


def test_methylamine_trigonal_centre_is_nitrogen() -> None:
    mol = with_h("CN")
    terms = enumerate_terms(mol, elements(mol), header(out_of_plane_centres="trigonal"))
    (term,) = [t for t in terms if t.kind == "out_of_plane"]
    assert term.classes == ("N", "C", "H", "H")
    assert mol.GetAtomWithIdx(term.atoms[0]).GetSymbol() == "N"


# --- bond qualifiers ------------------------------------------------------------------------------


def test_bond_orders_and_rings() -> None:
    # 4-vinylbenzonitrile: RDKit's default aromaticity marks the 6-ring aromatic.
    mol = with_h("C=Cc1ccc(C#N)cc1")
    terms = enumerate_terms(mol, elements(mol), header())
    heavy_bonds = [t for t in terms if t.kind == "bond" and "H" not in t.classes]
    orders = sorted((t.bond_order, t.in_ring) for t in heavy_bonds)
    assert orders == sorted(
        [("double", False), ("single", False), ("single", False), ("triple", False)]
        + [("aromatic", True)] * 6
    )
    for t in terms:
        if t.kind in ("angle", "out_of_plane", "nonbonded"):
            assert t.bond_order is None and t.in_ring is None
        if t.kind == "dihedral":
            central = mol.GetBondBetweenAtoms(t.atoms[1], t.atoms[2])
            assert t.in_ring == central.IsInRing()


def test_dative_bond_order_name() -> None:
    mol = Chem.MolFromSmiles("[NH3]->[Cu+2]")
    mol = Chem.AddHs(mol)
    bonds = [t for t in enumerate_terms(mol, elements(mol), header()) if "Cu" in t.classes]
    assert [t.bond_order for t in bonds if t.kind == "bond"] == ["dative"]


# --- optional kinds, order, input errors ----------------------------------------------------------


def test_optional_kinds_follow_bonds_and_angles() -> None:
    mol = with_h("CC(=O)N")
    h = header()
    all_terms = enumerate_terms(mol, elements(mol), h, kinds=KINDS)
    by_kind = {k: [t for t in all_terms if t.kind == k] for k in KINDS}
    assert [(t.atoms, t.classes, t.bond_order, t.in_ring) for t in by_kind["charge_increment"]] == [
        (t.atoms, t.classes, t.bond_order, t.in_ring) for t in by_kind["bond"]
    ]
    assert [(t.atoms, t.classes) for t in by_kind["stretch_bend"]] == [
        (t.atoms, t.classes) for t in by_kind["angle"]
    ]
    # default kinds leave the optional two out; kind order follows KINDS
    default = enumerate_terms(mol, elements(mol), h)
    assert {t.kind for t in default} == set(DEFAULT_KINDS)
    kind_positions = [KINDS.index(t.kind) for t in all_terms]
    assert kind_positions == sorted(kind_positions)
    only = enumerate_terms(mol, elements(mol), h, kinds=["angle"])
    assert only == by_kind["angle"]


def test_unassigned_classes_are_question_marks() -> None:
    mol = with_h("CO")
    classes: list[str | None] = [None] * mol.GetNumAtoms()
    classes[0] = "c4"
    terms = enumerate_terms(mol, classes, header())
    assert all(c in ("c4", "?") for t in terms for c in t.classes)
    assert Term("nonbonded", (1,), ("?",)) in terms


def test_deterministic_under_repeat() -> None:
    mol = with_h("OC(=O)c1ccccc1N")
    first = enumerate_terms(mol, elements(mol), header(), kinds=KINDS)
    second = enumerate_terms(mol, elements(mol), header(), kinds=list(reversed(KINDS)))
    assert first == second


def test_bad_input_raises() -> None:
    ethane = with_h("CC")
    classes = elements(ethane)
    with pytest.raises(ValueError, match="unknown term kind"):
        enumerate_terms(ethane, classes, header(), kinds=["torsion"])
    with pytest.raises(ValueError, match="out_of_plane_centres"):
        enumerate_terms(ethane, classes, header(out_of_plane_centres="all"))
    with pytest.raises(ValueError, match="class entries"):
        enumerate_terms(ethane, classes[:-1], header())
    no_h = Chem.MolFromSmiles("CC")
    with pytest.raises(ValueError, match="implicit hydrogen"):
        enumerate_terms(no_h, elements(no_h), header())
    raw = Chem.MolFromSmiles("[CH3][CH3]", sanitize=False)
    with pytest.raises(ValueError, match="not sanitised"):
        enumerate_terms(raw, elements(raw), header())


def test_count_terms() -> None:
    terms = [Term("angle", (0, 1, 2), ("a", "b", "c")), Term("bond", (0, 1), ("a", "b"))] * 2
    assert list(count_terms(terms).items()) == [("bond", 2), ("angle", 2)]
    assert count_terms([]) == {}


# --- the NCI sets: formulas and structural checks on every molecule -------------------------------


def nci_200() -> list[Chem.Mol]:
    path = os.path.join(NCI_DIR, "first_200.props.sdf")
    mols = [m for m in Chem.SDMolSupplier(path) if m is not None]
    assert len(mols) == 200  # every record of the shipped file parses with this RDKit
    return [Chem.AddHs(m) for m in mols]


def nci_5k_rings_and_linear() -> list[Chem.Mol]:
    """first_5K.smi molecules with a 3-ring or a linear atom (corrections the SDF lacks)."""
    RDLogger.DisableLog("rdApp.*")  # type: ignore[attr-defined]
    try:
        supplier = Chem.SmilesMolSupplier(
            os.path.join(NCI_DIR, "first_5K.smi"), delimiter="\t", titleLine=False
        )
        ring3 = Chem.MolFromSmarts("[r3]")
        picked = [
            Chem.AddHs(m)
            for m in supplier
            if m is not None and (m.HasSubstructMatch(ring3) or m.HasSubstructMatch(LINEAR))
        ]
    finally:
        RDLogger.EnableLog("rdApp.*")  # type: ignore[attr-defined]
    assert len(picked) > 300  # 44 with a 3-ring, 320 with a linear atom (measured, RDKit 2026.09)
    return picked


def formula_counts(mol: Chem.Mol, exclude_linear: bool) -> dict[str, int]:
    """Counts from the adjacency matrix alone (independent of the enumerator's loops)."""
    adj = Chem.GetAdjacencyMatrix(mol).astype(np.int64)
    deg = adj.sum(axis=1)
    common = adj @ adj  # common[j, k] = number of shared neighbours of j and k
    j_idx, k_idx = np.nonzero(np.triu(adj))
    keep = np.ones(len(j_idx), dtype=bool)
    if exclude_linear:
        linear = np.zeros(len(deg), dtype=bool)
        linear[[m[0] for m in mol.GetSubstructMatches(LINEAR)]] = True
        keep = ~(linear[j_idx] | linear[k_idx])
    dihedrals = int(((deg[j_idx] - 1) * (deg[k_idx] - 1) - common[j_idx, k_idx])[keep].sum())
    if not exclude_linear:
        # sum over bonds of shared neighbours = 3 * triangles = trace(A^3) / 2
        triangles = int(np.trace(common @ adj)) // 6
        assert dihedrals == int(((deg[j_idx] - 1) * (deg[k_idx] - 1)).sum()) - 3 * triangles
    return {
        "bond": len(j_idx),
        "angle": int((deg * (deg - 1) // 2).sum()),
        "dihedral": dihedrals,
        "nonbonded": mol.GetNumAtoms(),
    }


def check_structure(mol: Chem.Mol, terms: list[Term], classes: list[str | None]) -> None:
    """Canonical order, real bonded paths, no duplicates, sorted output."""
    seen: set[tuple[str, tuple[int, ...]]] = set()
    for t in terms:
        assert t.classes == tuple(classes[i] for i in t.atoms)
        assert canonical_classes(t.kind, t.classes)[0] == t.classes
        a = t.atoms
        assert len(set(a)) == len(a)
        if t.kind in ("bond", "charge_increment"):
            bond = mol.GetBondBetweenAtoms(*a)
            assert bond is not None and t.in_ring == bond.IsInRing()
        elif t.kind in ("angle", "stretch_bend"):
            assert t.classes <= t.classes[::-1]
            assert mol.GetBondBetweenAtoms(a[0], a[1]) and mol.GetBondBetweenAtoms(a[1], a[2])
        elif t.kind == "dihedral":
            assert t.classes <= t.classes[::-1]
            for x, y in itertools.pairwise(a):
                assert mol.GetBondBetweenAtoms(x, y) is not None
            if t.classes == t.classes[::-1]:
                assert a <= a[::-1]  # ties broken by atom index
        elif t.kind == "out_of_plane":
            centre = mol.GetAtomWithIdx(a[0])
            assert sorted(a[1:]) == sorted(n.GetIdx() for n in centre.GetNeighbors())
            assert list(zip(t.classes[1:], a[1:], strict=True)) == sorted(
                zip(t.classes[1:], a[1:], strict=True)
            )
        key = (t.kind, min(a, a[::-1]) if t.kind != "out_of_plane" else a)
        assert key not in seen
        seen.add(key)
    order = [(KINDS.index(t.kind), t.atoms) for t in terms]
    assert order == sorted(order)


def all_nci() -> Iterator[tuple[str, Chem.Mol]]:
    for n, mol in enumerate(nci_200()):
        yield f"first_200.props.sdf#{n + 1}", mol
    for n, mol in enumerate(nci_5k_rings_and_linear()):
        yield f"first_5K.smi subset #{n + 1}", mol


def test_nci_counts_match_formulas() -> None:
    n_mols = 0
    n_linear_mols = 0
    for label, mol in all_nci():
        classes = elements(mol)
        for about_linear in (False, True):
            h = header(dihedrals_about_linear=about_linear, out_of_plane_centres="planar")
            got = count_terms(enumerate_terms(mol, classes, h))
            want = formula_counts(mol, exclude_linear=not about_linear)
            want["out_of_plane"] = len(mol.GetSubstructMatches(PLANAR))
            want = {k: v for k, v in want.items() if v}
            assert got == want, (label, about_linear)
        trigonal = enumerate_terms(mol, classes, header(out_of_plane_centres="trigonal"))
        assert count_terms(trigonal).get("out_of_plane", 0) == len(
            mol.GetSubstructMatches(TRIGONAL)
        )
        n_mols += 1
        n_linear_mols += any(is_linear_atom(a) for a in mol.GetAtoms())
    assert n_mols > 500
    assert n_linear_mols > 300


def test_nci_structure_and_canonical_order() -> None:
    for label, mol in all_nci():
        classes = elements(mol)
        h = header(dihedrals_about_linear=True, out_of_plane_centres="trigonal")
        terms = enumerate_terms(mol, classes, h, kinds=KINDS)
        try:
            check_structure(mol, terms, classes)
        except AssertionError as exc:
            raise AssertionError(label) from exc


def test_planar_centre_by_aromatic_flag_alone() -> None:
    # RDKit marks every aromatic atom SP2 at sanitisation (0 exceptions in first_200.props.sdf,
    # measured), so the "or aromatic" half of the planar rule is checked on a molecule whose
    # hybridisation is overwritten.
    mol = with_h("c1ccccc1")
    mol.GetAtomWithIdx(0).SetHybridization(Chem.HybridizationType.SP3)
    mol.GetAtomWithIdx(1).SetHybridization(Chem.HybridizationType.SP3)
    mol.GetAtomWithIdx(1).SetIsAromatic(False)
    oop = [t for t in enumerate_terms(mol, elements(mol), header()) if t.kind == "out_of_plane"]
    assert [t.atoms[0] for t in oop] == [0, 2, 3, 4, 5]
