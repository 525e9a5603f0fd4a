"""The SMILES parse without stereo assignment gives the molecule RDKit's ``MolFromSmiles`` gives.

:func:`ffaudit.read.smiles.parse_smiles` skips RDKit's stereo assignment for a SMILES with no stereo
marks (it finds nothing there). These tests compare its molecules with ``Chem.MolFromSmiles`` itself,
atom by atom and bond by bond, on RDKit's shipped NCI first_5K.smi (an open dataset in the rdkit wheel)
and on hand-picked SMILES that exercise each step of RDKit's sanitisation, in RDKit's legacy stereo
perception and in its newer one.
"""

from __future__ import annotations

from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pytest
from rdkit import Chem, RDConfig, rdBase

from ffaudit.read.smiles import _parse_without_stereo, _stereo_free, parse_smiles

NCI = Path(RDConfig.RDDataDir) / "NCI" / "first_5K.smi"

# SMILES chosen to exercise RDKit's sanitisation steps (common practice in RDKit's own tests; written for
# this file): aromaticity and kekulisation, charges and zwitterions, aromatic N-H, hypervalent atoms,
# dative bonds, isotopes, radicals, metals and salts, fused and bridged rings, organometallic clean-up.
HAND_PICKED = [
    "c1ccccc1",
    "c1ccc2ccccc2c1",
    "c1cc[nH]c1",
    "O=[N+]([O-])c1ccccc1",
    "[O-][n+]1ccccc1",
    "C[N+](C)(C)C.[Cl-]",
    "OS(=O)(=O)O",
    "CP(=O)(O)O",
    "F[P-](F)(F)(F)(F)F",
    "[NH3]->[Cu+2]<-[NH3]",
    "[13CH4]",
    "[CH3]",
    "[Na+].[O-]C(=O)c1ccccc1",
    "C1CC2CCC1C2",
    "C12C3C4C1C5C2C3C45",
    "c1ccc2c(c1)[nH]c1ccccc12",
    "O=c1cc[nH]cc1",
    "Cn1cnc2c1c(=O)n(C)c(=O)n2C",
    "C[Si](C)(C)O[Si](C)(C)C",
    "[Fe]",
    "N#N",
    "C=C=C",
    "CCOC(=O)C",
    "[2H]C",  # a hydrogen atom: left to MolFromSmiles
    "[H]C([H])([H])[H]",  # explicit hydrogens: left to MolFromSmiles
    "*C",  # a dummy atom: left to MolFromSmiles
]

STEREO = ["C[C@H](N)O", "F/C=C/F", "F\\C=C/F", "C[C@@H]1CCCO1", "CC |$R;$|"]


def nci_smiles() -> list[str]:
    return [line.split()[0] for line in NCI.read_text().splitlines() if line.strip()]


def atom_facts(mol: Chem.Mol) -> list[tuple[Any, ...]]:
    return [
        (
            a.GetAtomicNum(), a.GetIsotope(), a.GetFormalCharge(), a.GetNumRadicalElectrons(),
            a.GetIsAromatic(), str(a.GetHybridization()), a.GetTotalNumHs(), a.GetNumExplicitHs(),
            a.GetNoImplicit(), a.GetTotalValence(), str(a.GetChiralTag()), a.IsInRing(),
        )
        for a in mol.GetAtoms()
    ]  # fmt: skip


def bond_facts(mol: Chem.Mol) -> list[tuple[Any, ...]]:
    return [
        (
            b.GetBeginAtomIdx(), b.GetEndAtomIdx(), str(b.GetBondType()), b.GetIsAromatic(),
            b.GetIsConjugated(), str(b.GetStereo()), str(b.GetBondDir()), b.IsInRing(),
        )
        for b in mol.GetBonds()
    ]  # fmt: skip


def same_molecule(ours: Chem.Mol, rdkit: Chem.Mol) -> None:
    assert ours.GetNumAtoms() == rdkit.GetNumAtoms()
    assert atom_facts(ours) == atom_facts(rdkit)
    assert bond_facts(ours) == bond_facts(rdkit)
    assert ours.GetRingInfo().AtomRings() == rdkit.GetRingInfo().AtomRings()
    assert Chem.MolToSmiles(ours) == Chem.MolToSmiles(rdkit)
    assert Chem.MolToSmiles(ours, canonical=False) == Chem.MolToSmiles(rdkit, canonical=False)
    assert ours.GetPropsAsDict(False, False) == rdkit.GetPropsAsDict(False, False)
    # RDKit's private, computed CIP ranks are the one difference the shortcut leaves (see its docstring)
    assert [a.GetPropsAsDict(False, False) for a in ours.GetAtoms()] == [
        a.GetPropsAsDict(False, False) for a in rdkit.GetAtoms()
    ]


@pytest.fixture(params=[True, False], ids=["legacy-stereo", "new-stereo"])
def stereo_perception(request: pytest.FixtureRequest) -> Iterator[bool]:
    before = Chem.GetUseLegacyStereoPerception()
    Chem.SetUseLegacyStereoPerception(request.param)
    try:
        yield request.param
    finally:
        Chem.SetUseLegacyStereoPerception(before)


def test_nci_molecules_equal_rdkits_own(stereo_perception: bool) -> None:
    taken = 0
    with rdBase.BlockLogs():
        for text in nci_smiles():
            expected = Chem.MolFromSmiles(text)
            ours = parse_smiles(text).mol
            assert (ours is None) == (expected is None), text
            if expected is None:
                continue
            same_molecule(ours, expected)
            taken += _stereo_free(text) and _parse_without_stereo(text) is not None
    # NCI first_5K has no stereo marks: nearly every record takes the shortcut, so it is what is compared
    assert taken > 4900


def test_hand_picked_molecules_equal_rdkits_own(stereo_perception: bool) -> None:
    for text in HAND_PICKED + STEREO:
        expected = Chem.MolFromSmiles(text)
        assert expected is not None, text
        ours = parse_smiles(text).mol
        assert ours is not None, text
        same_molecule(ours, expected)
        # a stereo centre or double bond assigned after the shortcut is what the shortcut must not miss
        Chem.AssignStereochemistry(ours, cleanIt=True, force=True)
        assert Chem.MolToSmiles(ours) == Chem.MolToSmiles(expected), text


def test_shortcut_is_refused_where_it_could_differ() -> None:
    for text in STEREO:
        assert not _stereo_free(text), text
    for text in ("[2H]C", "[H]C([H])([H])[H]", "*C", "c1cccc1", "C(C)(C)(C)(C)C", "C1CC", ""):
        assert _parse_without_stereo(text) is None, text
    assert _parse_without_stereo("c1ccccc1") is not None


def test_failures_keep_rdkits_reasons() -> None:
    # bad valence and a non-kekulisable ring sanitise badly; an unclosed ring does not parse (RDKit's
    # messages: "Explicit valence ... greater than permitted", "Can't kekulize mol", "unclosed ring")
    for text, words in (
        ("C(C)(C)(C)(C)C", "valence"),
        ("c1cccc1", "kekulize"),
        ("C1CC", "unclosed ring"),
    ):
        result = parse_smiles(text)
        assert result.mol is None
        assert result.reason is not None and words in result.reason.lower(), result.reason
