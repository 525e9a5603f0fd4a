"""Tier ``parent``: replace classes by their parent classes (the set's fallback chains) and look again.

Candidates are tried in order of the total number of generalisation steps (one class one step up first),
then by position; each candidate is looked up exactly and then with wildcards. The result names every
substitution made.
"""

from __future__ import annotations

import itertools

from ffaudit.paramset.canonical import canonical_classes
from ffaudit.paramset.model import Entry
from ffaudit.resolve.index import TableIndex
from ffaudit.resolve.wildcard import match_wildcard_classes
from ffaudit.terms import Term

Substitution = tuple[int, str, str]
"""(position in the canonical term tuple, class, replacement)."""

MAX_STEPS = 8


def match_parent(
    index: TableIndex, term: Term
) -> tuple[Entry, tuple[Substitution, ...], int] | None:
    """Return (entry, substitutions, steps) for the least generalised parent tuple that has an entry."""
    chains = [(c,) + index.parents.get(c, ()) for c in term.classes]
    if all(len(chain) == 1 for chain in chains):
        return None
    options = [range(len(chain)) for chain in chains]
    candidates = sorted(
        (sum(levels), levels) for levels in itertools.product(*options) if sum(levels) > 0
    )
    for steps, levels in candidates:
        if steps > MAX_STEPS:
            break
        classes = tuple(chain[level] for chain, level in zip(chains, levels, strict=True))
        canonical, _ = canonical_classes(term.kind, classes)
        entry = index.get(term.kind, canonical, term.bond_order, term.in_ring)
        if entry is None:
            entry = match_wildcard_classes(
                index, term.kind, canonical, term.bond_order, term.in_ring
            )
        if entry is not None:
            subs = tuple(
                (i, chain[0], chain[level])
                for i, (chain, level) in enumerate(zip(chains, levels, strict=True))
                if level
            )
            return entry, subs, steps
    return None
