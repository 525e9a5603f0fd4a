"""The look-up shortcuts of the exact and wildcard tiers against plain look-ups in the set's tables.

``TableIndex.get`` answers "absent" from a set of class tuples before trying qualifiers, and the wildcard
tier skips a tuple whose kept classes (the middle pair of a dihedral, the centre of an out-of-plane tuple)
no entry with wildcards has. Both must give exactly what looking every candidate up in the tables gives.
"""

import itertools

import pytest

from ffaudit.paramset.canonical import canonical_classes
from ffaudit.paramset.model import WILDCARD, Entry, SourceLocation
from ffaudit.resolve.index import TableIndex, qualifier_variants
from ffaudit.resolve.wildcard import match_wildcard_classes, wildcard_candidates, wildcard_core
from test_resolve import _dihedral, _set


def _plain_get(pset, kind, classes, order, ring):
    table = pset.tables.get(kind) or {}
    for o, r in qualifier_variants(order, ring):
        if (classes, o, r) in table:
            return table[classes, o, r]
    return None


def _plain_wildcard(pset, kind, classes, order, ring):
    for _, candidate in wildcard_candidates(kind, classes):
        entry = _plain_get(pset, kind, candidate, order, ring)
        if entry is not None:
            return entry
    return None


def _asked(pset, n_molecules):
    """(kind, canonical classes, order, ring) of every term of the first ``n_molecules`` of NCI first_5K
    (RDKit's shipped data) audited with ``pset``, each also with its classes replaced by their parents in
    every combination (the tuples the parent tier asks about), and every wildcard entry of the set with
    its wildcards filled by classes of the set (tuples that do match)."""
    from rdkit import RDConfig

    from ffaudit.audit import AuditContext
    from ffaudit.read.open import iter_records

    context = AuditContext(pset)
    index = context.resolver.index
    path = f"{RDConfig.RDDataDir}/NCI/first_5K.smi"
    asked = set()
    for n, record in enumerate(iter_records(path)):
        if n == n_molecules:
            break
        for resolution in context.audit_record(record).table:
            t = resolution.term
            chains = [(c, *index.parents.get(c, ())) for c in t.classes]
            for classes in itertools.product(*chains):
                canonical, _ = canonical_classes(t.kind, classes)
                asked.add((t.kind, canonical, t.bond_order, t.in_ring))
    fillers = [c.id for c in pset.classes][:6]
    for kind, table in pset.tables.items():
        for entry in table.values():
            if not entry.wildcards:
                continue
            holes = [i for i, c in enumerate(entry.classes) if c == WILDCARD]
            for fill in itertools.product(fillers, repeat=len(holes)):
                classes = list(entry.classes)
                for i, c in zip(holes, fill, strict=True):
                    classes[i] = c
                canonical, _ = canonical_classes(kind, tuple(classes))
                for order, ring in ((entry.bond_order, entry.in_ring), (None, None)):
                    asked.add((kind, canonical, order, ring))
    return asked


@pytest.fixture(scope="module")
def default_set():
    from ffaudit.paramset.load import load_parameter_set

    return load_parameter_set()


@pytest.fixture(scope="module")
def asked(default_set):
    return _asked(default_set, 150)


@pytest.mark.parametrize(
    ("shortcut", "plain", "least_found"),
    [
        (lambda index, *asked: index.get(*asked), _plain_get, 100),
        (match_wildcard_classes, _plain_wildcard, 50),
    ],
    ids=["table-lookup", "wildcard-tier"],
)
def test_shortcut_equals_the_plain_lookup(default_set, asked, shortcut, plain, least_found):
    index = TableIndex(default_set)
    found = 0
    for kind, classes, order, ring in asked:
        expected = plain(default_set, kind, classes, order, ring)
        assert shortcut(index, kind, classes, order, ring) is expected, (kind, classes, order, ring)
        found += expected is not None
    # both outcomes occur often (else the check would be empty)
    assert found >= least_found and len(asked) - found >= 1000, (found, len(asked))


def test_wildcard_core_is_the_same_for_a_tuple_and_its_reverse():
    # the canonical order of a dihedral may reverse it: the core must not depend on that
    assert wildcard_core("dihedral", ("a", "b", "c", "d")) == wildcard_core(
        "dihedral", ("d", "c", "b", "a")
    )
    assert wildcard_core("out_of_plane", ("n", "a", "b", "c")) == ("n",)
    assert wildcard_core("bond", ("a", "b")) == ()


def test_wildcard_entry_stored_reversed_is_still_found():
    """A dihedral entry whose canonical order reverses the term's middle pair, and an out-of-plane entry
    with outer wildcards: found by the tier as by the plain look-up."""
    pset = _set(
        [
            _dihedral(canonical_classes("dihedral", ("*", "c4", "c3", "h"))[0], 1),
            Entry(
                "out_of_plane",
                ("n3", "*", "*", "o"),
                "harmonic",
                {"k": 1.0},
                SourceLocation("hand.yaml", 2),
            ),
        ]
    )
    index = TableIndex(pset)
    cases = [
        ("dihedral", ("h", "c3", "c4", "o")),  # reversed relative to the entry
        ("dihedral", ("o", "c4", "c3", "h")),
        ("dihedral", ("o", "c4", "c4", "h")),  # other middle pair: no match
        ("out_of_plane", ("n3", "c", "h", "o")),
        ("out_of_plane", ("c3", "c", "h", "o")),  # other centre: no match
    ]
    results = [
        match_wildcard_classes(index, k, canonical_classes(k, c)[0], None, None) for k, c in cases
    ]
    assert results == [
        _plain_wildcard(pset, k, canonical_classes(k, c)[0], None, None) for k, c in cases
    ]
    assert [r is not None for r in results] == [True, True, False, True, False]
