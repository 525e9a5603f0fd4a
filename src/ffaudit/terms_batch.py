"""Batched term enumeration: the terms of every molecule of a batch at once, with numpy.

Gives, molecule by molecule, exactly the list :func:`ffaudit.terms.enumerate_terms` gives (the reference: same
terms, atoms and classes in the same canonical order, the same sort), for the molecule-with-hydrogens graph of a
:class:`ffaudit.molbatch.HydrogenGraph`. Classes enter as *ranks*: the position of the class id in the sorted
list of all ids (with ``"?"`` for atoms without a class), so comparing ranks compares the ids as strings, which is
what the reference's canonical order does.

- bond, charge_increment: every bond; the reversed pair is taken when it is smaller as (classes, atoms);
- angle, stretch_bend: every pair of neighbours of every atom, the same way;
- dihedral: every path i-j-k-l over each bond j-k with i, j, k, l distinct; bonds to a linear atom (sp, two
  neighbours) skipped unless ``dihedrals_about_linear``; the reverse taken when smaller;
- out_of_plane: centres with three neighbours (and sp2 or aromatic for ``planar``), outer atoms by (class, index);
- nonbonded: every atom.

Within a kind, terms are sorted by their (global) atom tuple, which sorts by molecule first since each molecule's
atoms are numbered after the previous molecule's.

Failure: raises ``ValueError`` for an unknown kind or out-of-plane setting (as the reference does); never
returns partial results.
"""

from __future__ import annotations

from collections.abc import Collection
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from ffaudit.molbatch import HydrogenGraph
from ffaudit.paramset.model import KINDS, Header
from ffaudit.terms import DEFAULT_KINDS, OUT_OF_PLANE_CENTRES

IntArray = NDArray[np.int64]

NO_QUALIFIER = -1
"""Bond-order code / ring flag of terms that have none (angles, out-of-plane, nonbonded)."""


@dataclass(frozen=True)
class KindTerms:
    """All terms of one kind in a batch: ``atoms`` and ``ranks`` are (n, arity) in canonical order (global
    atom indices), ``code`` the bond-order code and ``ring`` 1/0 (or :data:`NO_QUALIFIER`), ``molecule`` the
    molecule of each term; rows sorted by atom tuple."""

    kind: str
    atoms: IntArray
    ranks: IntArray
    code: IntArray
    ring: IntArray
    molecule: IntArray

    def __len__(self) -> int:
        return len(self.molecule)

    def bounds(self, n_mols: int) -> IntArray:
        """``bounds[m]`` .. ``bounds[m+1]``: the rows of molecule ``m``."""
        return np.searchsorted(self.molecule, np.arange(n_mols + 1, dtype=np.int64)).astype(
            np.int64
        )


class _Neighbours:
    """Sorted neighbour lists as CSR arrays."""

    def __init__(self, graph: HydrogenGraph) -> None:
        n = graph.n_atoms
        b = graph.bonds
        src = np.concatenate([b[:, 0], b[:, 1]])
        dst = np.concatenate([b[:, 1], b[:, 0]])
        order = np.lexsort((dst, src))
        self.dst = dst[order]
        self.degree = np.bincount(src, minlength=n).astype(np.int64)
        self.start = np.zeros(n + 1, dtype=np.int64)
        np.cumsum(self.degree, out=self.start[1:])


def _lex_less(a: list[IntArray], b: list[IntArray]) -> NDArray[np.bool_]:
    """Row-wise ``tuple(a) < tuple(b)`` for columns given as lists of equal length."""
    n = len(a[0])
    less = np.zeros(n, dtype=bool)
    decided = np.zeros(n, dtype=bool)
    for x, y in zip(a, b, strict=True):
        lt = x < y
        less |= ~decided & lt
        decided |= lt | (x > y)
    return less


def _sorted(
    kind: str,
    atoms: IntArray,
    ranks: IntArray,
    code: IntArray,
    ring: IntArray,
    molecule_of: IntArray,
) -> KindTerms:
    if len(atoms):
        order = np.lexsort(tuple(atoms[:, c] for c in range(atoms.shape[1] - 1, -1, -1)))
        atoms, ranks, code, ring = atoms[order], ranks[order], code[order], ring[order]
    return KindTerms(
        kind,
        atoms,
        ranks,
        code,
        ring,
        molecule_of[atoms[:, 0]] if len(atoms) else np.zeros(0, np.int64),
    )


def _none(n: int) -> IntArray:
    return np.full(n, NO_QUALIFIER, dtype=np.int64)


def _bonds(kind: str, graph: HydrogenGraph, rank: IntArray) -> KindTerms:
    a, b = graph.bonds[:, 0], graph.bonds[:, 1]
    ra, rb = rank[a], rank[b]
    rev = (rb < ra) | ((rb == ra) & (b < a))
    first = np.where(rev, b, a)
    second = np.where(rev, a, b)
    atoms = np.stack([first, second], axis=1)
    return _sorted(
        kind,
        atoms,
        rank[atoms],
        graph.bond_code.copy(),
        graph.bond_ring.astype(np.int64),
        graph.molecule,
    )


def _angles(kind: str, graph: HydrogenGraph, nb: _Neighbours, rank: IntArray) -> KindTerms:
    deg = nb.degree
    apex_all = np.arange(graph.n_atoms, dtype=np.int64)
    combos = deg * deg
    apex = np.repeat(apex_all, combos)
    offset = np.arange(len(apex), dtype=np.int64) - np.repeat(np.cumsum(combos) - combos, combos)
    d = deg[apex]
    p, q = offset // np.maximum(d, 1), offset % np.maximum(d, 1)
    keep = p < q
    apex, p, q = apex[keep], p[keep], q[keep]
    i = nb.dst[nb.start[apex] + p]
    k = nb.dst[nb.start[apex] + q]
    ri, rk = rank[i], rank[k]
    rev = (rk < ri) | ((rk == ri) & (k < i))
    first = np.where(rev, k, i)
    last = np.where(rev, i, k)
    atoms = np.stack([first, apex, last], axis=1)
    n = len(atoms)
    return _sorted(kind, atoms, rank[atoms], _none(n), _none(n), graph.molecule)


def _dihedrals(
    graph: HydrogenGraph, nb: _Neighbours, rank: IntArray, about_linear: bool
) -> KindTerms:
    deg = nb.degree
    j_all, k_all = graph.bonds[:, 0], graph.bonds[:, 1]
    keep_bond = np.ones(len(j_all), dtype=bool)
    if not about_linear:
        linear = graph.sp & (deg == 2)
        keep_bond = ~(linear[j_all] | linear[k_all])
    bond_index = np.nonzero(keep_bond)[0]
    j_b, k_b = j_all[bond_index], k_all[bond_index]
    combos = deg[j_b] * deg[k_b]
    rep = np.repeat(np.arange(len(bond_index), dtype=np.int64), combos)
    offset = np.arange(len(rep), dtype=np.int64) - np.repeat(np.cumsum(combos) - combos, combos)
    dk = deg[k_b][rep]
    pi, pl = offset // np.maximum(dk, 1), offset % np.maximum(dk, 1)
    j, k = j_b[rep], k_b[rep]
    i = nb.dst[nb.start[j] + pi]
    m = nb.dst[nb.start[k] + pl]
    keep = (i != k) & (m != j) & (m != i)
    i, j, k, m, rep = i[keep], j[keep], k[keep], m[keep], rep[keep]
    ri, rj, rk, rm = rank[i], rank[j], rank[k], rank[m]
    rev = _lex_less([rm, rk, rj, ri, m, k, j, i], [ri, rj, rk, rm, i, j, k, m])
    atoms = np.stack(
        [np.where(rev, m, i), np.where(rev, k, j), np.where(rev, j, k), np.where(rev, i, m)], axis=1
    )
    code = graph.bond_code[bond_index][rep]
    ring = graph.bond_ring[bond_index][rep].astype(np.int64)
    return _sorted("dihedral", atoms, rank[atoms], code, ring, graph.molecule)


def _out_of_plane(graph: HydrogenGraph, nb: _Neighbours, rank: IntArray, centres: str) -> KindTerms:
    if centres == "none":
        empty = np.zeros((0, 4), dtype=np.int64)
        return KindTerms(
            "out_of_plane", empty, empty.copy(), _none(0), _none(0), np.zeros(0, np.int64)
        )
    mask = nb.degree == 3
    if centres == "planar":
        mask &= graph.planar
    centre = np.nonzero(mask)[0]
    outer = (
        np.stack([nb.dst[nb.start[centre] + t] for t in range(3)], axis=1)
        if len(centre)
        else np.zeros((0, 3), np.int64)
    )
    key = rank[outer] * (graph.n_atoms + 1) + outer
    outer = np.take_along_axis(outer, np.argsort(key, axis=1, kind="stable"), axis=1)
    atoms = np.concatenate([centre[:, None], outer], axis=1)
    n = len(atoms)
    return _sorted("out_of_plane", atoms, rank[atoms], _none(n), _none(n), graph.molecule)


def enumerate_batch(
    graph: HydrogenGraph, rank: IntArray, header: Header, kinds: Collection[str] | None = None
) -> list[KindTerms]:
    """The terms of every molecule of ``graph`` per kind, kinds in :data:`ffaudit.paramset.model.KINDS`
    order (only those asked for). ``rank[a]`` is the class rank of atom ``a``.

    Raises ``ValueError`` for an unknown kind or ``header.out_of_plane_centres`` value.
    """
    wanted = frozenset(DEFAULT_KINDS if kinds is None else kinds)
    unknown = sorted(wanted.difference(KINDS))
    if unknown:
        raise ValueError(f"unknown term kind(s) {', '.join(map(repr, unknown))}")
    if header.out_of_plane_centres not in OUT_OF_PLANE_CENTRES:
        raise ValueError(f"unknown out_of_plane_centres {header.out_of_plane_centres!r}")
    nb = _Neighbours(graph)
    out: list[KindTerms] = []
    for kind in KINDS:
        if kind not in wanted:
            continue
        if kind in ("bond", "charge_increment"):
            out.append(_bonds(kind, graph, rank))
        elif kind in ("angle", "stretch_bend"):
            out.append(_angles(kind, graph, nb, rank))
        elif kind == "dihedral":
            out.append(_dihedrals(graph, nb, rank, header.dihedrals_about_linear))
        elif kind == "out_of_plane":
            out.append(_out_of_plane(graph, nb, rank, header.out_of_plane_centres))
        else:
            atoms = np.arange(graph.n_atoms, dtype=np.int64)[:, None]
            n = len(atoms)
            out.append(
                KindTerms(
                    "nonbonded", atoms, rank[atoms], _none(n), _none(n), graph.molecule.copy()
                )
            )
    return out
