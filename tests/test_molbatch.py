"""The bonds of a joined batch against RDKit's own per-molecule view of them.

``join_molecules`` reads each molecule's bonds from its adjacency matrix and its ring bonds from its own
``AtomRings()``; the reference (``ffaudit.terms``) asks every bond ``Bond.IsInRing()`` and names its order with
``bond_order_name``. Both must agree on every bond.
"""

import os

import pytest
from rdkit import Chem, RDConfig

from ffaudit.molbatch import BondCodes, join_molecules, read_facts
from ffaudit.terms import bond_order_name

NCI_5K = os.path.join(RDConfig.RDDataDir, "NCI", "first_5K.smi")

# ring systems where a bond lies on several rings or on none of the smallest ones a naive count would pick
# (SMILES written for these tests; the ring facts are RDKit's)
CAGES = [
    "C12C3C4C1C5C2C3C45",  # cubane: every bond on two four-membered rings
    "C1C2CC3CC1CC(C2)C3",  # adamantane
    "C1CC2(C1)CC2",  # spiro[2.3]hexane: two rings sharing one atom, no shared bond
    "C1CC2CCC1C2",  # norbornane: a bridge bond on two rings
    "c1ccc(cc1)-c1ccccc1",  # biphenyl: the bond between the rings is in none
    "C1CC1C1CC1",  # bicyclopropyl
    "C12(CC1)CC2",  # spiropentane
    "C1CCCCCCCCCCCCCCCCCCCCCCCCCCCCCCC1",  # a 32-membered ring
]


def _molecules():
    with open(NCI_5K) as handle:
        texts = [line.split()[0] for line in handle if line.strip()][:2000] + CAGES
    mols = []
    for text in texts:
        mol = Chem.MolFromSmiles(text)
        if mol is not None and mol.GetNumAtoms():
            mols.append(mol)
    return mols


@pytest.mark.parametrize("copy_ring_info", [False, True])
def test_joined_bonds_are_each_molecules_bonds_with_their_order_and_ring_flag(copy_ring_info):
    mols = _molecules()
    codes = BondCodes()
    seen = 0
    rings_seen = 0
    for first in range(0, len(mols), 50):
        group = mols[first : first + 50]
        batch = join_molecules(
            [read_facts(m, hydrogens_added=False) for m in group],
            added_h=False,
            bond_codes=codes,
            copy_ring_info=copy_ring_info,
        )
        expected = {}
        for m, mol in enumerate(group):
            offset = int(batch.starts[m])
            for bond in mol.GetBonds():
                i, j = sorted((bond.GetBeginAtomIdx() + offset, bond.GetEndAtomIdx() + offset))
                expected[i, j] = (bond_order_name(bond), bond.IsInRing())
        got = {}
        for (i, j), code, ring in zip(
            batch.bonds.tolist(), batch.bond_code.tolist(), batch.bond_ring.tolist(), strict=True
        ):
            got[min(i, j), max(i, j)] = (codes.names[code], ring)
        assert got == expected
        seen += len(expected)
        rings_seen += sum(ring for _, ring in expected.values())
    print(f"{seen} bonds, {rings_seen} of them ring bonds")
    assert seen > 30_000 and rings_seen > 10_000  # NCI records: about 16 bonds between heavy atoms each
