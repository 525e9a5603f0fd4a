"""Dense numbers for the fast path's tuple keys, and what the per-batch totals read of each key's outcome.

The fast path (:mod:`ffaudit.engine.batch`) packs each term's (kind, classes, qualifiers) into one int64 key
and resolves each new key once. A :class:`KeyStore` gives every key it has seen a dense number (0, 1, 2, ...
in order of first sight) and keeps, as numpy columns indexed by that number, what the totals of a batch
need: the (kind, tier) number, the rank of the score, whether the outcome is missing, whether it comes from
a set entry marked estimated, and whether the key's terms are resolved one by one (no shared outcome). A
batch then looks its keys up with one ``searchsorted`` instead of one dict lookup per key.

Nothing here raises for valid input; :meth:`KeyStore.add` raises ``ValueError`` for a key it already has.
"""

from __future__ import annotations

import bisect
from collections.abc import Sequence
from typing import TYPE_CHECKING

import numpy as np
from numpy.typing import NDArray

if TYPE_CHECKING:
    from ffaudit.termtable import SharedOutcome

IntArray = NDArray[np.int64]
BoolArray = NDArray[np.bool_]


class KeyStore:
    """Keys seen so far, their dense numbers and the columns the totals read (see the module docstring).

    ``kind_tiers`` lists the (kind, tier) pairs in order of their numbers, ``scores`` the distinct scores
    of the shared outcomes in ascending order (a score's rank is its index), ``missing_tuples`` the (kind,
    classes) of every number whose outcome is missing.
    """

    def __init__(self) -> None:
        self._sorted_keys = np.zeros(0, np.int64)
        self._sorted_numbers = np.zeros(0, np.int64)
        self.count = 0
        capacity = 64
        self._kind_tier = np.zeros(capacity, np.int64)
        self._rank = np.zeros(capacity, np.int64)
        self._missing = np.zeros(capacity, bool)
        self._unreviewed = np.zeros(capacity, bool)
        self._single = np.zeros(capacity, bool)
        self._kind_tier_numbers: dict[tuple[str, str], int] = {}
        self.kind_tiers: list[tuple[str, str]] = []
        self.scores: list[float] = []
        self.missing_tuples: dict[int, tuple[str, tuple[str, ...]]] = {}

    # --- look-up ----------------------------------------------------------------------------------

    def numbers(self, keys: IntArray) -> IntArray:
        """The dense number of each of ``keys`` (sorted, distinct), -1 for a key not seen yet."""
        out = np.full(len(keys), -1, dtype=np.int64)
        if not self.count or not len(keys):
            return out
        at = np.searchsorted(self._sorted_keys, keys)
        inside = at < self.count
        known = inside.copy()
        known[inside] = self._sorted_keys[at[inside]] == keys[inside]
        out[known] = self._sorted_numbers[at[known]]
        return out

    def columns(self) -> tuple[IntArray, IntArray, BoolArray, BoolArray, BoolArray]:
        """(kind-tier number, score rank, missing, unreviewed, one by one), each indexed by number."""
        n = self.count
        return (
            self._kind_tier[:n],
            self._rank[:n],
            self._missing[:n],
            self._unreviewed[:n],
            self._single[:n],
        )

    # --- adding -------------------------------------------------------------------------------------

    def add(self, keys: Sequence[int], outcomes: Sequence[SharedOutcome | None]) -> list[int]:
        """Number ``keys`` (new ones; None outcome: resolved one by one) and note their outcomes' facts.

        Returns their numbers. Raises ``ValueError`` when a key was added before.
        """
        if not keys:
            return []
        new_keys = np.array(keys, np.int64)
        distinct = np.unique(new_keys)
        if len(distinct) < len(keys) or (self.numbers(distinct) >= 0).any():
            raise ValueError("a key was numbered before")
        start = self.count
        self._reserve(start + len(keys))
        for offset, outcome in enumerate(outcomes):
            self._note(start + offset, outcome)
        self.count = start + len(keys)
        numbers = list(range(start, self.count))
        order = np.argsort(new_keys)
        keys_sorted, numbers_sorted = new_keys[order], np.array(numbers, np.int64)[order]
        at = np.searchsorted(self._sorted_keys, keys_sorted)
        self._sorted_keys = np.insert(self._sorted_keys, at, keys_sorted)
        self._sorted_numbers = np.insert(self._sorted_numbers, at, numbers_sorted)
        return numbers

    def _note(self, number: int, outcome: SharedOutcome | None) -> None:
        if outcome is None:
            self._single[number] = True
            return
        kind_tier = self._kind_tier_numbers.get(outcome.kind_tier)
        if kind_tier is None:
            kind_tier = self._kind_tier_numbers[outcome.kind_tier] = len(self.kind_tiers)
            self.kind_tiers.append(outcome.kind_tier)
        self._kind_tier[number] = kind_tier
        rank = bisect.bisect_left(self.scores, outcome.score)
        if rank == len(self.scores) or self.scores[rank] != outcome.score:
            self.scores.insert(rank, outcome.score)
            ranks = self._rank[
                :number
            ]  # the ranks of the higher scores move up (on a new score only)
            ranks[ranks >= rank] += 1
        self._rank[number] = rank
        if outcome.tier == "missing":
            self._missing[number] = True
            self.missing_tuples[number] = (outcome.kind, outcome.classes)
        self._unreviewed[number] = outcome.unreviewed

    def _reserve(self, size: int) -> None:
        capacity = len(self._single)
        if size <= capacity:
            return
        while capacity < size:
            capacity *= 2
        for name in ("_kind_tier", "_rank", "_missing", "_unreviewed", "_single"):
            old = getattr(self, name)
            new = np.zeros(capacity, old.dtype)
            new[: len(old)] = old
            setattr(self, name, new)
