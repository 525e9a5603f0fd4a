"""A batch of molecules joined into one RDKit molecule, and the arrays of its molecule-with-hydrogens graph.

The batched fast path (:mod:`ffaudit.engine.batch`) matches each class rule once per batch instead of once per
molecule, and enumerates terms with numpy over the whole batch. This module holds what both need:

- ``joined``: one RDKit molecule made of the batch's molecules in order (``RWMol.InsertMol``), so atom ``i`` of
  molecule ``m`` is atom ``starts[m] + i`` of ``joined``. Molecules are disconnected from one another, so any
  connected SMARTS pattern matches inside one molecule only.
- the *hydrogen graph*: the graph of every molecule after ``Chem.AddHs``, numbered exactly as ``AddHs`` numbers
  it (the atoms as read first, then the added hydrogens in the order of the atom each is bonded to), whether or
  not the hydrogens exist in ``joined``.

Two layouts:

- ``added_h=False`` (*heavy layout*): the molecules as read. The hydrogens ``AddHs`` would add exist only in the
  hydrogen graph (``new_h`` counts them per atom). Class rules run on ``joined`` through the translation in
  :mod:`ffaudit.perceive.batch`.
- ``added_h=True`` (*explicit layout*): the molecules after ``AddHs``; the hydrogen graph is ``joined`` itself.

Per-atom and per-bond facts are read once per molecule (atomic number, hydrogens to add: one Python call per
atom; bonds and bond orders: ``Chem.GetAdjacencyMatrix``; ring bonds: the molecule's own ``AtomRings()``;
hybridisation and aromaticity: one SMARTS query per batch), because every RDKit call from Python costs about
half a microsecond.

Failure: :func:`join_molecules` raises whatever RDKit raises for a molecule it cannot process (the batch
driver then audits the batch's records one by one); it never returns a partial batch.
"""

from __future__ import annotations

import itertools
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray
from rdkit import Chem

from ffaudit.terms import bond_order_name

IntArray = NDArray[np.int64]
BoolArray = NDArray[np.bool_]

STANDARD_BOND_ORDERS: tuple[str, ...] = ("single", "double", "triple", "aromatic")
"""Bond-order codes 0..3; other bond types get codes from a :class:`BondCodes` registry."""

_ADJACENCY_CODES = {1.0: 0, 2.0: 1, 3.0: 2, 1.5: 3}

_SP = Chem.MolFromSmarts("[^1]")
_PLANAR = Chem.MolFromSmarts("[^2,a]")
# Bonds that are not single, double, triple or aromatic (dative, zero-order, one-and-a-half, ...): their order
# cannot be read from the adjacency matrix, and ring perception may leave them out, so molecules having any
# are read bond by bond.
_UNUSUAL_BOND = Chem.MolFromSmarts("*!-&!=&!#&!:*")


class BondCodes:
    """Integer codes for bond-order names: the four usual ones first, others added as they are met."""

    def __init__(self) -> None:
        self.names: list[str] = list(STANDARD_BOND_ORDERS)
        self._codes: dict[str, int] = {name: i for i, name in enumerate(self.names)}

    def code(self, name: str) -> int:
        code = self._codes.get(name)
        if code is None:
            code = len(self.names)
            self.names.append(name)
            self._codes[name] = code
        return code


@dataclass(frozen=True)
class MoleculeFacts:
    """What the batch needs to know about one molecule, read before joining (one Python call per atom).

    ``new_h[i]`` is the number of hydrogens ``Chem.AddHs`` adds to atom ``i`` (0 for a molecule that already
    went through ``AddHs``).
    """

    mol: Chem.Mol
    z: tuple[int, ...]
    new_h: tuple[int, ...]

    @property
    def n_atoms(self) -> int:
        return len(self.z)


def read_facts(mol: Chem.Mol, *, hydrogens_added: bool) -> MoleculeFacts:
    """Atomic numbers and hydrogens-to-add of ``mol``. Raises what RDKit raises (e.g. no valences computed)."""
    get = mol.GetAtomWithIdx
    atoms = [get(i) for i in range(mol.GetNumAtoms())]
    z = tuple(a.GetAtomicNum() for a in atoms)
    new_h = (0,) * len(z) if hydrogens_added else tuple(a.GetTotalNumHs() for a in atoms)
    return MoleculeFacts(mol, z, new_h)


def hydrogens_are_plain(facts: MoleculeFacts) -> bool:
    """True when every hydrogen atom of the molecule is bonded to exactly one non-hydrogen atom by a single
    bond, as the hydrogens ``Chem.AddHs`` adds are; the heavy layout needs that."""
    if 1 not in facts.z:
        return True
    mol = facts.mol
    for i, z in enumerate(facts.z):
        if z != 1:
            continue
        atom = mol.GetAtomWithIdx(i)
        if atom.GetDegree() != 1 or facts.new_h[i]:
            return False
        bond = atom.GetBonds()[0]
        if (
            bond.GetBondType() != Chem.BondType.SINGLE
            or bond.GetOtherAtom(atom).GetAtomicNum() == 1
        ):
            return False
    return True


@dataclass
class HydrogenGraph:
    """The molecule-with-hydrogens graph of a batch, as arrays over its atoms (global indices).

    Molecule ``m`` owns atoms ``starts[m]`` .. ``starts[m+1] - 1``; local index = global - ``starts[m]``, which
    is the atom's index in ``Chem.AddHs(mol)``. ``source[a]`` is the atom of ``joined`` the atom is, or for an
    added hydrogen ``-1 - p`` where ``p`` is the ``joined`` atom it is bonded to.
    """

    starts: IntArray
    molecule: IntArray
    z: IntArray
    source: IntArray
    sp: BoolArray
    planar: BoolArray
    bonds: IntArray  # (n_bonds, 2)
    bond_code: IntArray
    bond_ring: BoolArray

    @property
    def n_atoms(self) -> int:
        return len(self.z)


@dataclass
class MolBatch:
    """Molecules joined into one RDKit molecule (see the module docstring for the two layouts)."""

    joined: Chem.RWMol
    added_h: bool
    facts: tuple[MoleculeFacts, ...]
    starts: IntArray  # (n_mols + 1,) first joined atom of each molecule
    z: IntArray  # per joined atom
    new_h: IntArray  # per joined atom
    bonds: IntArray  # (n_bonds, 2) joined atom indices
    bond_code: IntArray
    bond_ring: BoolArray
    sp: BoolArray
    planar: BoolArray
    ring_info_copied: bool

    @property
    def n_mols(self) -> int:
        return len(self.facts)

    @property
    def molecule_of_atom(self) -> IntArray:
        counts = np.diff(self.starts)
        return np.repeat(np.arange(len(counts), dtype=np.int64), counts)

    def hydrogen_neighbour(self) -> IntArray:
        """For every joined atom that is a hydrogen, its one neighbour; -1 elsewhere (heavy layout only)."""
        out = np.full(len(self.z), -1, dtype=np.int64)
        if len(self.bonds):
            a, b = self.bonds[:, 0], self.bonds[:, 1]
            h_a = self.z[a] == 1
            out[a[h_a]] = b[h_a]
            h_b = self.z[b] == 1
            out[b[h_b]] = a[h_b]
        return out

    def fragments_per_molecule(self) -> IntArray:
        """Connected components per molecule (hydrogens never change the count: each has one neighbour)."""
        frags = Chem.GetMolFrags(self.joined)
        if not frags:
            return np.zeros(self.n_mols, dtype=np.int64)
        first = np.fromiter((f[0] for f in frags), dtype=np.int64, count=len(frags))
        owner = np.searchsorted(self.starts, first, side="right") - 1
        return np.bincount(owner, minlength=self.n_mols).astype(np.int64)

    def hydrogen_graph(self) -> HydrogenGraph:
        """The batch's molecule-with-hydrogens graph, numbered as ``Chem.AddHs`` numbers each molecule."""
        n_mols = self.n_mols
        n_joined = len(self.z)
        mol_of = self.molecule_of_atom
        added_per_mol = np.bincount(mol_of, weights=self.new_h, minlength=n_mols).astype(np.int64)
        atoms_per_mol = np.diff(self.starts) + added_per_mol
        h_starts = np.zeros(n_mols + 1, dtype=np.int64)
        np.cumsum(atoms_per_mol, out=h_starts[1:])
        # joined atom -> global index in the hydrogen graph
        local = np.arange(n_joined, dtype=np.int64) - self.starts[mol_of]
        index = h_starts[mol_of] + local
        total = int(h_starts[-1])
        z = np.ones(total, dtype=np.int64)
        z[index] = self.z
        source = np.empty(total, dtype=np.int64)
        source[index] = np.arange(n_joined, dtype=np.int64)
        sp = np.zeros(total, dtype=bool)
        sp[index] = self.sp
        planar = np.zeros(total, dtype=bool)
        planar[index] = self.planar
        molecule = np.repeat(np.arange(n_mols, dtype=np.int64), atoms_per_mol)
        bonds = index[self.bonds] if len(self.bonds) else np.zeros((0, 2), dtype=np.int64)
        codes = self.bond_code
        rings = self.bond_ring
        n_added = int(self.new_h.sum())
        if n_added:
            parents = np.repeat(np.arange(n_joined, dtype=np.int64), self.new_h)
            # position of each added hydrogen among its molecule's added hydrogens (AddHs order: by parent)
            first_added = np.zeros(n_mols + 1, dtype=np.int64)
            np.cumsum(added_per_mol, out=first_added[1:])
            rank = np.arange(n_added, dtype=np.int64) - first_added[mol_of[parents]]
            mol_p = mol_of[parents]
            h_index = h_starts[mol_p] + (self.starts[mol_p + 1] - self.starts[mol_p]) + rank
            source[h_index] = -1 - parents
            bonds = np.concatenate([bonds, np.stack([index[parents], h_index], axis=1)])
            codes = np.concatenate([codes, np.zeros(n_added, dtype=np.int64)])
            rings = np.concatenate([rings, np.zeros(n_added, dtype=bool)])
        return HydrogenGraph(h_starts, molecule, z, source, sp, planar, bonds, codes, rings)


def join_molecules(
    facts: Sequence[MoleculeFacts], *, added_h: bool, bond_codes: BondCodes, copy_ring_info: bool
) -> MolBatch:
    """Join the molecules of ``facts`` into one :class:`MolBatch`.

    ``copy_ring_info``: copy every molecule's own ring information into the joined molecule (needed when a
    class rule asks about rings: ring counts and sizes then match the molecule's own exactly). Otherwise the
    joined molecule gets ring membership only (``Chem.FastFindRings``), which is all the rules' ring
    primitives then need. Bond ring flags come from each molecule's own rings either way.
    Raises what RDKit raises.
    """
    joined = Chem.RWMol()
    starts = np.zeros(len(facts) + 1, dtype=np.int64)
    begin_parts: list[IntArray] = []
    end_parts: list[IntArray] = []
    order_parts: list[NDArray[np.float64]] = []
    ring_copies: list[tuple[int, int, Chem.Mol]] = []
    ring_parts: list[tuple[int, tuple[tuple[int, ...], ...]]] = []
    atom_offset = 0
    bond_offset = 0
    for m, fact in enumerate(facts):
        mol = fact.mol
        joined.InsertMol(mol)
        n = fact.n_atoms
        rings = mol.GetRingInfo().AtomRings()
        if rings:
            ring_parts.append((atom_offset, rings))
        if copy_ring_info:
            ring_copies.append((atom_offset, bond_offset, mol))
        if mol.GetNumBonds():
            adjacency = Chem.GetAdjacencyMatrix(mol, useBO=True, force=True)
            i, j = np.nonzero(adjacency)
            upper = i < j  # each bond once, in the order of the upper triangle
            i, j = i[upper], j[upper]
            order_parts.append(adjacency[i, j])
            begin_parts.append(i + atom_offset)
            end_parts.append(j + atom_offset)
        atom_offset += n
        bond_offset += mol.GetNumBonds()
        starts[m + 1] = atom_offset
    if order_parts:  # the bonds of all molecules, each molecule's in the adjacency matrix's order
        bonds = np.stack(
            [np.concatenate(begin_parts), np.concatenate(end_parts)], axis=1
        ).astype(np.int64)
        orders = np.concatenate(order_parts)
        codes = np.full(len(orders), -1, dtype=np.int64)
        for value, c in _ADJACENCY_CODES.items():
            codes[orders == value] = c
    else:
        bonds = np.zeros((0, 2), dtype=np.int64)
        codes = np.zeros(0, dtype=np.int64)
    if copy_ring_info:
        info = joined.GetRingInfo()
        any_ring = False
        for a0, b0, mol in ring_copies:
            ri = mol.GetRingInfo()
            for atom_ring, bond_ring in zip(ri.AtomRings(), ri.BondRings(), strict=True):
                info.AddRing([a + a0 for a in atom_ring], [b + b0 for b in bond_ring])
                any_ring = True
        if not any_ring:
            Chem.FastFindRings(joined)
    else:
        Chem.FastFindRings(joined)
    n_total = atom_offset
    chain = itertools.chain.from_iterable
    z = np.fromiter(chain([f.z for f in facts]), dtype=np.int64, count=n_total)
    new_h = np.fromiter(chain([f.new_h for f in facts]), dtype=np.int64, count=n_total)
    ring = _ring_bond_mask(bonds, ring_parts, n_total)
    unusual = joined.GetSubstructMatches(_UNUSUAL_BOND, uniquify=True, maxMatches=n_total * 8 + 8)
    odd = {int(np.searchsorted(starts, pair[0], side="right")) - 1 for pair in unusual}
    if len(codes):
        odd.update((np.searchsorted(starts, bonds[codes < 0, 0], side="right") - 1).tolist())
    if odd:
        # Ring perception leaves some of these bonds out; read such molecules bond by bond from their own
        # ring information.
        bonds, codes, ring = _replace_bonds(
            bonds, codes, ring, starts, facts, sorted(odd), bond_codes
        )
    sp = _atom_mask(joined, _SP, n_total)
    planar = _atom_mask(joined, _PLANAR, n_total)
    return MolBatch(
        joined=joined,
        added_h=added_h,
        facts=tuple(facts),
        starts=starts,
        z=z,
        new_h=new_h,
        bonds=bonds,
        bond_code=codes,
        bond_ring=ring,
        sp=sp,
        planar=planar,
        ring_info_copied=copy_ring_info,
    )


def _replace_bonds(
    bonds: IntArray,
    codes: IntArray,
    ring: BoolArray,
    starts: IntArray,
    facts: Sequence[MoleculeFacts],
    molecules: Sequence[int],
    bond_codes: BondCodes,
) -> tuple[IntArray, IntArray, BoolArray]:
    """``bonds``/``codes``/``ring`` with the bonds of ``molecules`` read one by one from each molecule."""
    owner = (
        np.searchsorted(starts, bonds[:, 0], side="right") - 1
        if len(bonds)
        else np.zeros(0, np.int64)
    )
    keep = ~np.isin(owner, np.array(molecules, dtype=np.int64))
    pairs, new_codes, new_ring = [], [], []
    for m in molecules:
        offset = int(starts[m])
        for bond in facts[m].mol.GetBonds():
            pairs.append((bond.GetBeginAtomIdx() + offset, bond.GetEndAtomIdx() + offset))
            new_codes.append(bond_codes.code(bond_order_name(bond)))
            new_ring.append(bond.IsInRing())
    extra = np.array(pairs, dtype=np.int64).reshape(-1, 2)
    return (
        np.concatenate([bonds[keep], extra]),
        np.concatenate([codes[keep], np.array(new_codes, dtype=np.int64)]),
        np.concatenate([ring[keep], np.array(new_ring, dtype=bool)]),
    )


def _atom_mask(mol: Chem.Mol, query: Chem.Mol, n: int) -> BoolArray:
    mask = np.zeros(n, dtype=bool)
    matches = mol.GetSubstructMatches(query, uniquify=False, maxMatches=n + 1)
    if matches:
        mask[np.fromiter((m[0] for m in matches), dtype=np.int64, count=len(matches))] = True
    return mask


def _ring_bond_mask(
    bonds: IntArray, ring_parts: Sequence[tuple[int, Sequence[Sequence[int]]]], n: int
) -> BoolArray:
    """Which rows of ``bonds`` are ring bonds: bonds between consecutive atoms of a ring of their molecule's
    own ring information (``ring_parts``: each molecule's first atom and ``AtomRings()``). Every bond in a
    cycle lies on a ring of a cycle basis such as the SSSR, so this is what ``Bond.IsInRing()`` says."""
    if not len(bonds) or not ring_parts:
        return np.zeros(len(bonds), dtype=bool)
    chain = itertools.chain.from_iterable
    all_rings = [ring for _, rings in ring_parts for ring in rings]
    atoms = np.fromiter(chain(all_rings), dtype=np.int64)
    sizes = np.fromiter(map(len, all_rings), dtype=np.int64, count=len(all_rings))
    per_molecule = [sum(map(len, rings)) for _, rings in ring_parts]
    atoms += np.repeat(np.array([offset for offset, _ in ring_parts], dtype=np.int64), per_molecule)
    ends = np.cumsum(sizes)
    following = np.roll(atoms, -1)  # the next atom along each ring; the last one closes it
    following[ends - 1] = atoms[ends - sizes]
    keys = np.minimum(atoms, following) * n + np.maximum(atoms, following)
    bond_keys = np.minimum(bonds[:, 0], bonds[:, 1]) * n + np.maximum(bonds[:, 0], bonds[:, 1])
    return np.isin(bond_keys, keys)
