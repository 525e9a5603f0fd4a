"""The fast path's key store: dense numbers for keys and the columns the per-batch totals read.

Checked against plain Python bookkeeping of the same keys (a dict of numbers, the sorted distinct scores).
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from ffaudit.engine.keystore import KeyStore
from ffaudit.termtable import SharedOutcome

TIERS = ("exact", "parent", "analogy", "missing")


def _outcome(kind: str, tier: str, score: float) -> SharedOutcome:
    return SharedOutcome(kind, ("c4", "h_c"), None, None, tier, None, score, None, None, ())


outcomes = st.one_of(
    st.none(),
    st.builds(
        _outcome,
        st.sampled_from(["bond", "angle"]),
        st.sampled_from(TIERS),
        st.sampled_from([0.0, 0.25, 0.5, 0.9, 1.0]),
    ),
)


@settings(max_examples=60, deadline=None)
@given(
    st.lists(st.lists(st.tuples(st.integers(-(2**62), 2**62), outcomes), max_size=40), max_size=6),
)
def test_store_numbers_keys_and_keeps_their_facts(
    batches: list[list[tuple[int, SharedOutcome | None]]],
) -> None:
    store = KeyStore()
    numbers: dict[int, int] = {}
    facts: dict[int, SharedOutcome | None] = {}
    for batch in batches:
        new = {k: o for k, o in batch if k not in numbers}  # one outcome per new key
        keys = list(new)
        got = store.add(keys, [new[k] for k in keys])
        assert got == list(range(len(numbers), len(numbers) + len(keys)))
        numbers.update(zip(keys, got, strict=True))
        facts.update(new)
        probe = np.array(sorted({k for k, _ in batch} | {12345, -7}), np.int64)
        assert store.numbers(probe).tolist() == [numbers.get(k, -1) for k in probe.tolist()]
    kind_tier, rank, missing, unreviewed, single = store.columns()
    shared = {n: facts[k] for k, n in numbers.items() if facts[k] is not None}
    assert store.scores == sorted({o.score for o in shared.values()})
    for k, n in numbers.items():
        o = facts[k]
        assert single[n] == (o is None)
        if o is None:
            continue
        assert store.kind_tiers[kind_tier[n]] == o.kind_tier
        assert store.scores[rank[n]] == o.score
        assert missing[n] == (o.tier == "missing")
        assert (n in store.missing_tuples) == (o.tier == "missing")
        assert not unreviewed[n]


def test_store_refuses_a_key_twice() -> None:
    store = KeyStore()
    store.add([5, 9], [None, _outcome("bond", "exact", 1.0)])
    with pytest.raises(ValueError):
        store.add([9], [None])
    with pytest.raises(ValueError):
        store.add([3, 3], [None, None])
    assert store.count == 2


def test_store_grows_past_its_first_capacity() -> None:
    store = KeyStore()
    keys = list(range(1000, 0, -1))
    store.add(keys, [_outcome("bond", "exact", k / 1000) for k in keys])
    assert store.numbers(np.array([1, 500, 1000], np.int64)).tolist() == [999, 500, 0]
    _, rank, *_ = store.columns()
    # scores k / 1000 were added in descending order: every new one was lowest so far
    assert store.scores[rank[0]] == 1.0 and store.scores[rank[999]] == 0.001
