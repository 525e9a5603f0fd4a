"""Term enumeration: which bonded and nonbonded terms a molecule has, with their atoms in canonical order.

(Stub for the interface; see the helper's implementation.)
"""

from __future__ import annotations

from dataclasses import dataclass


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
