"""Canonical order of class tuples and of the atoms that go with them.

- bond, charge_increment: (a, b) with a <= b
- angle, stretch_bend: (a, b, c) with a <= c (the apex b stays in the middle)
- dihedral: (a, b, c, d) or its reverse, whichever is smaller
- out_of_plane: the centre first, the other three sorted
- nonbonded: (a,)

Wildcards (``*``) sort like any other string; unassigned classes (``None``) are written as ``?``.
A reversal of a charge increment flips its sign and a reversal of a stretch-bend swaps ``k_ab`` and ``k_cb``;
the loader does that, this module only reports whether the tuple was reversed.
"""

from __future__ import annotations

from collections.abc import Sequence

UNASSIGNED = "?"


def canonical_classes(kind: str, classes: Sequence[str]) -> tuple[tuple[str, ...], bool]:
    """Return (canonical tuple, reversed?) for ``classes`` of term ``kind``.

    For out-of-plane tuples "reversed" means "the outer three were reordered". Raises ``ValueError`` for an
    unknown kind.
    """
    t = tuple(classes)
    if kind in ("bond", "charge_increment"):
        return (t, False) if t[0] <= t[1] else ((t[1], t[0]), True)
    if kind in ("angle", "stretch_bend"):
        return (t, False) if t[0] <= t[2] else ((t[2], t[1], t[0]), True)
    if kind == "dihedral":
        rev = t[::-1]
        return (t, False) if t <= rev else (rev, True)
    if kind == "out_of_plane":
        outer = tuple(sorted(t[1:]))
        return (t[0],) + outer, outer != t[1:]
    if kind == "nonbonded":
        return t, False
    raise ValueError(f"unknown term kind {kind!r}")


def canonical_term(
    kind: str, atoms: Sequence[int], classes: Sequence[str | None]
) -> tuple[tuple[int, ...], tuple[str, ...]]:
    """Put a term's atoms and classes in canonical order together.

    Ties between equal class tuples are broken by atom index so the order is deterministic. For out-of-plane
    the centre (first atom) stays first and the outer atoms are ordered by (class, index).
    """
    names = tuple(UNASSIGNED if c is None else c for c in classes)
    a = tuple(atoms)
    if kind == "out_of_plane":
        outer = sorted(zip(names[1:], a[1:], strict=True))
        return (a[0],) + tuple(i for _, i in outer), (names[0],) + tuple(c for c, _ in outer)
    if kind in ("bond", "charge_increment", "angle", "stretch_bend", "dihedral"):
        fwd = (names, a)
        rev = (names[::-1], a[::-1])
        best = min(fwd, rev)
        return best[1], best[0]
    return a, names
