"""Term enumeration: which bonded and nonbonded terms a molecule has, atoms in canonical order.

This is the reference implementation: plain loops over each atom's neighbour list, written to be
obviously correct. Any faster (batched) enumerator must give exactly the same list for the same
input.

Graph conventions (all read from the RDKit molecule as given, nothing is re-perceived):

- The molecule carries explicit hydrogens (the audit calls ``Chem.AddHs`` first); atom indices in
  every term are 0-based indices of that molecule.
- Aromaticity is RDKit's default model as perceived at sanitisation (the aromatic flags and
  ``AROMATIC`` bond types the molecule carries); hybridisation and ring membership are likewise
  RDKit's, as perceived at sanitisation.
- A *linear atom* is an atom with SP hybridisation and exactly two neighbours (alkyne and nitrile
  carbons, the centre of an allene, of CO2 or of an azide). Dihedrals about a bond to a linear atom
  are not enumerated unless the set's header says ``dihedrals_about_linear: true``: with a 180
  degree angle on either side the torsion angle is undefined.
"""

from __future__ import annotations

import itertools
from collections import Counter
from collections.abc import Collection, Iterable, Iterator, Sequence
from dataclasses import dataclass

from rdkit import Chem

from ffaudit.paramset.canonical import canonical_term
from ffaudit.paramset.model import KINDS, Header


@dataclass(frozen=True)
class Term:
    """One term of a molecule.

    ``atoms`` are 0-based indices in the molecule with explicit hydrogens, in the canonical order of
    ``classes`` (see :func:`ffaudit.paramset.canonical.canonical_term`); unassigned classes are ``"?"``.
    ``bond_order`` / ``in_ring`` describe the bond (bond, charge_increment) or the central bond (dihedral)
    and are None for other kinds.
    """

    kind: str
    atoms: tuple[int, ...]
    classes: tuple[str, ...]
    bond_order: str | None = None
    in_ring: bool | None = None


DEFAULT_KINDS: tuple[str, ...] = ("bond", "angle", "dihedral", "out_of_plane", "nonbonded")
"""Kinds enumerated when none are asked for (``charge_increment``, ``stretch_bend`` on request)."""

OUT_OF_PLANE_CENTRES: tuple[str, ...] = ("none", "trigonal", "planar")
"""Accepted values of :attr:`Header.out_of_plane_centres`."""

_BOND_ORDER_NAMES: dict[Chem.BondType, str] = {
    Chem.BondType.SINGLE: "single",
    Chem.BondType.DOUBLE: "double",
    Chem.BondType.TRIPLE: "triple",
    Chem.BondType.AROMATIC: "aromatic",
}

# (atom indices in enumeration order, bond order, in ring) before canonical ordering.
_Raw = tuple[tuple[int, ...], str | None, bool | None]


def bond_order_name(bond: Chem.Bond) -> str:
    """``single`` / ``double`` / ``triple`` / ``aromatic``; any other RDKit bond type by its
    lowercased name (``dative``, ``zero``, ``other``, ...). Never fails."""
    bond_type = bond.GetBondType()
    name = _BOND_ORDER_NAMES.get(bond_type)
    return name if name is not None else str(bond_type).lower()


def is_linear_atom(atom: Chem.Atom) -> bool:
    """True for an atom with SP hybridisation and exactly two neighbours (see module docstring)."""
    return atom.GetHybridization() == Chem.HybridizationType.SP and atom.GetDegree() == 2


def enumerate_terms(
    mol: Chem.Mol,
    classes: Sequence[str | None],
    header: Header,
    kinds: Collection[str] | None = None,
) -> list[Term]:
    """Every term of ``mol`` of the requested ``kinds``, atoms and classes in canonical order.

    ``classes[i]`` is the class id of atom ``i`` or None (written ``"?"``). ``kinds`` defaults to
    :data:`DEFAULT_KINDS`. What is enumerated:

    - bond, charge_increment: every bond, with its bond order and ring membership;
    - angle, stretch_bend: every pair of neighbours of every atom (that atom is the apex, in the
      middle);
    - dihedral: every path i-j-k-l over a bond j-k with i, j, k, l distinct (so a 3-ring gives no
      i = l pseudo-dihedral), skipping bonds to a linear atom unless
      ``header.dihedrals_about_linear``; bond order and ring membership are the central bond's;
    - out_of_plane: per ``header.out_of_plane_centres``: ``none``, ``trigonal`` (every atom with
      exactly three neighbours) or ``planar`` (three neighbours and SP2 hybridisation or aromatic);
      one term per centre, the centre first, its three neighbours ordered by (class, index);
    - nonbonded: one term per atom.

    The result is ordered by kind (in :data:`ffaudit.paramset.model.KINDS` order), then by canonical
    atom tuple; the same molecule and classes always give the same list.

    Raises ``ValueError`` when ``classes`` does not have one entry per atom, when a kind or the
    header's ``out_of_plane_centres`` is unknown, when the molecule is not sanitised (stale property
    cache), or when an atom still carries implicit hydrogens (they would get no terms; call
    ``Chem.AddHs`` first).
    """
    wanted = _check_kinds(kinds)
    _check_molecule(mol, classes)
    if header.out_of_plane_centres not in OUT_OF_PLANE_CENTRES:
        raise ValueError(
            f"unknown out_of_plane_centres {header.out_of_plane_centres!r} "
            f"(expected one of {', '.join(OUT_OF_PLANE_CENTRES)})"
        )

    neighbours = [sorted(n.GetIdx() for n in atom.GetNeighbors()) for atom in mol.GetAtoms()]
    terms: list[Term] = []
    for kind in KINDS:
        if kind not in wanted:
            continue
        if kind in ("bond", "charge_increment"):
            raw = _bonds(mol)
        elif kind in ("angle", "stretch_bend"):
            raw = _angles(neighbours)
        elif kind == "dihedral":
            raw = _dihedrals(mol, neighbours, header.dihedrals_about_linear)
        elif kind == "out_of_plane":
            raw = _out_of_plane(mol, neighbours, header.out_of_plane_centres)
        else:
            raw = (((i,), None, None) for i in range(mol.GetNumAtoms()))
        terms.extend(_canonical_sorted(kind, raw, classes))
    return terms


def count_terms(terms: Iterable[Term]) -> dict[str, int]:
    """Number of terms per kind, for the kinds present, in :data:`ffaudit.paramset.model.KINDS`
    order (any kind not in KINDS after them, alphabetically). Never fails."""
    counts = Counter(term.kind for term in terms)
    order = {kind: n for n, kind in enumerate(KINDS)}
    return {
        kind: counts[kind] for kind in sorted(counts, key=lambda k: (order.get(k, len(order)), k))
    }


def _check_kinds(kinds: Collection[str] | None) -> frozenset[str]:
    wanted = frozenset(DEFAULT_KINDS if kinds is None else kinds)
    unknown = sorted(wanted.difference(KINDS))
    if unknown:
        raise ValueError(
            f"unknown term kind(s) {', '.join(map(repr, unknown))} "
            f"(expected any of {', '.join(KINDS)})"
        )
    return wanted


def _check_molecule(mol: Chem.Mol, classes: Sequence[str | None]) -> None:
    n_atoms = mol.GetNumAtoms()
    if len(classes) != n_atoms:
        raise ValueError(f"{len(classes)} class entries for a molecule of {n_atoms} atoms")
    if mol.NeedsUpdatePropertyCache():
        raise ValueError(
            "molecule is not sanitised (stale property cache); sanitise it before enumeration"
        )
    for atom in mol.GetAtoms():
        hydrogens = atom.GetTotalNumHs()
        if hydrogens:
            raise ValueError(
                f"atom {atom.GetIdx()} ({atom.GetSymbol()}) carries {hydrogens} implicit "
                "hydrogen(s), which would get no terms; call Chem.AddHs first"
            )


def _canonical_sorted(kind: str, raw: Iterable[_Raw], classes: Sequence[str | None]) -> list[Term]:
    terms = []
    for atoms, bond_order, in_ring in raw:
        canon_atoms, canon_classes = canonical_term(kind, atoms, [classes[i] for i in atoms])
        terms.append(Term(kind, canon_atoms, canon_classes, bond_order, in_ring))
    terms.sort(key=lambda term: term.atoms)
    return terms


def _bonds(mol: Chem.Mol) -> Iterator[_Raw]:
    for bond in mol.GetBonds():
        atoms = (bond.GetBeginAtomIdx(), bond.GetEndAtomIdx())
        yield atoms, bond_order_name(bond), bond.IsInRing()


def _angles(neighbours: Sequence[Sequence[int]]) -> Iterator[_Raw]:
    for apex, around in enumerate(neighbours):
        for a, c in itertools.combinations(around, 2):
            yield (a, apex, c), None, None


def _dihedrals(
    mol: Chem.Mol, neighbours: Sequence[Sequence[int]], about_linear: bool
) -> Iterator[_Raw]:
    linear = [is_linear_atom(atom) for atom in mol.GetAtoms()]
    for bond in mol.GetBonds():
        j, k = bond.GetBeginAtomIdx(), bond.GetEndAtomIdx()
        if not about_linear and (linear[j] or linear[k]):
            continue
        order, ring = bond_order_name(bond), bond.IsInRing()
        for i in neighbours[j]:
            if i == k:
                continue
            for m in neighbours[k]:
                if m != j and m != i:
                    yield (i, j, k, m), order, ring


def _out_of_plane(
    mol: Chem.Mol, neighbours: Sequence[Sequence[int]], centres: str
) -> Iterator[_Raw]:
    if centres == "none":
        return
    for atom in mol.GetAtoms():
        centre = atom.GetIdx()
        around = neighbours[centre]
        if len(around) != 3:
            continue
        if centres == "planar" and not (
            atom.GetHybridization() == Chem.HybridizationType.SP2 or atom.GetIsAromatic()
        ):
            continue
        yield (centre, *around), None, None
