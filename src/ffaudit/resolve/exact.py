"""Tier ``exact``: the term's own class tuple is in the table."""

from __future__ import annotations

from ffaudit.paramset.model import Entry
from ffaudit.resolve.index import TableIndex
from ffaudit.terms import Term


def match_exact(index: TableIndex, term: Term) -> Entry | None:
    """Return the entry keyed by the term's canonical classes (qualifiers most specific first), or None."""
    return index.get(term.kind, term.classes, term.bond_order, term.in_ring)
