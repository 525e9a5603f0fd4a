"""TermTable (ffaudit.termtable): the compact store of a molecule's resolutions against the plain definitions.

The check data is the definition of each answer over the materialised tuple of resolutions, the way the
reference path computes it (``min`` for the lowest score, a filter for the listed terms, ``Counter`` for
the counts, :func:`resolution_dict` and the JSONL encoder for the output), on tables made at random by
hypothesis and on the embedded default set's real entries. The fast path's tables on RDKit's NCI first_5K
are checked against the reference path in tests/test_fast_path.py.
"""

from __future__ import annotations

import itertools
import pickle
from collections import Counter
from collections.abc import Sequence

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from ffaudit.audit import MoleculeAudit, decide_status, estimated_entry_finding
from ffaudit.paramset.load import load_parameter_set
from ffaudit.paramset.model import Entry, ParameterSet
from ffaudit.read.record import Record
from ffaudit.report.jsonl import dump_compact
from ffaudit.resolve.driver import Resolution, SharedEstimate
from ffaudit.score import TIERS
from ffaudit.termdict import resolution_dict
from ffaudit.terms import Term
from ffaudit.termtable import (
    ESTIMATED,
    OWN,
    PROBLEM_TIERS,
    AtomRows,
    KeyRows,
    SharedOutcome,
    TermTable,
    named_classes,
)

PSET = load_parameter_set()
SIZES = {"bond": 2, "angle": 3, "dihedral": 4, "out_of_plane": 4, "nonbonded": 1}
ENTRIES: dict[str, list[Entry]] = {kind: list(PSET.entries(kind).values())[:4] for kind in SIZES}


def _outcome(kind: str, tier: str, score: float, pick: int) -> SharedOutcome:
    entry = None if tier == "missing" else ENTRIES[kind][pick % len(ENTRIES[kind])]
    classes = entry.classes if entry is not None else ("zz",) * SIZES[kind]
    order = "single" if kind in ("bond", "dihedral") else None
    subs = ((0, "a", "b"),) if tier in ("parent", "analogy") else ()
    reason = "no parameter" if tier == "missing" else None
    return SharedOutcome(kind, classes, order, None, tier, entry, score, reason, None, subs)


def _real_estimates() -> list[SharedEstimate]:
    """Shared rule estimates the resolver made for real molecules with the embedded set: every kind, and
    terms with an unclassified atom (phosphorus, whose reason names the atom)."""
    from rdkit import Chem

    from ffaudit.audit import AuditContext
    from ffaudit.engine.batch import audit_records

    context = AuditContext(PSET)
    smiles = ["CP(=O)(O)c1ccccc1N=Nc1ccc(C#N)cc1", "C=CC(=O)Nc1ncccc1S(=O)(=O)N", "CC#CC(=O)OC"]
    records = [
        Record(i, "<test>", i + 1, i + 1, s, Chem.MolFromSmiles(s)) for i, s in enumerate(smiles)
    ]
    found: dict[int, SharedEstimate] = {}
    for audit in audit_records(context, records):
        for item, _ in audit.table.listed("all"):
            if isinstance(item, SharedEstimate):
                found[id(item)] = item
    return list(found.values())


ESTIMATES = _real_estimates()


def test_real_estimates_cover_the_kinds_and_unclassified_atoms() -> None:
    """The pool the random tables draw from is what it claims to be."""
    assert {e.kind for e in ESTIMATES} >= {"bond", "angle", "dihedral", "out_of_plane"}
    assert any(e.cause == "no-class" for e in ESTIMATES)


outcomes_st = st.lists(
    st.builds(
        _outcome,
        st.sampled_from(sorted(SIZES)),
        st.sampled_from([t for t in TIERS if t != "estimate"]),
        st.sampled_from([0.0, 0.25, 0.5, 1.0]),  # few values: ties are common
        st.integers(0, 3),
    ),
    min_size=1,
    max_size=6,
)


@st.composite
def tables(draw: st.DrawFn) -> tuple[TermTable, tuple[Resolution, ...]]:
    """A random table and the plain tuple of resolutions it must stand for."""
    outcomes = dict(enumerate(draw(outcomes_st)))
    n = draw(st.integers(0, 30))
    keys: list[int] = []
    raw: list[int] = []  # the key drawn for each term, before OWN or ESTIMATED replaced it
    atoms: list[tuple[int, ...] | None] = []
    own: dict[int, Resolution] = {}
    estimated: dict[int, SharedEstimate] = {}
    expected: list[Resolution] = []
    for i in range(n):
        key = draw(st.integers(0, len(outcomes) - 1))
        raw.append(key)
        kind = outcomes[key].kind
        a = tuple(draw(st.lists(st.integers(0, 40), min_size=SIZES[kind], max_size=SIZES[kind])))
        pick = draw(st.integers(0, 4))
        if pick == 1:  # a shared rule estimate
            shared = draw(st.sampled_from(ESTIMATES))
            size = SIZES[shared.kind]
            a = tuple(draw(st.lists(st.integers(0, 40), min_size=size, max_size=size)))
            estimated[i] = shared
            keys.append(ESTIMATED)
            atoms.append(a)
            expected.append(shared.resolution(a))
        elif pick == 2 and draw(st.booleans()):  # its own: missing, an atom without a class
            classes = tuple("?" if draw(st.booleans()) else c for c in ENTRIES[kind][0].classes)
            r = Resolution(
                Term(kind, a, classes, outcomes[key].order, None),
                "missing",
                reason="atom has no class",
                cause="no-class",
            )
            own[i] = r
            keys.append(OWN)
            atoms.append(None)
            expected.append(r)
        elif pick == 0:  # a term with a resolution of its own
            entry = ENTRIES[kind][0]
            term = Term(kind, a, entry.classes, outcomes[key].order, None)
            r = Resolution(
                term,
                "estimate",
                entry,
                draw(st.sampled_from([0.25, 0.5])),
                "no parameter",
                details={"rule": "test-rule", "inputs": {"atoms": list(a)}},
            )
            own[i] = r
            keys.append(OWN)
            atoms.append(None)
            expected.append(r)
        else:
            keys.append(key)
            atoms.append(a)
            expected.append(outcomes[key].resolution(a))
    if draw(
        st.booleans()
    ):  # the fast path's storage: rows of integer arrays, one per run of a width
        atoms = _as_rows(
            [
                a if a is not None else (0,) * SIZES[expected[i].term.kind]
                for i, a in enumerate(atoms)
            ]
        )
    stored: Sequence[int] = keys
    if draw(st.booleans()):  # the fast path's storage: array slices and the replaced positions
        cut = sorted(draw(st.lists(st.integers(0, len(raw)), max_size=3)))
        bounds = [0, *cut, len(raw)]
        stored = KeyRows(
            [np.array(raw[a:b], dtype=np.int64) for a, b in itertools.pairwise(bounds)],
            {i: k for i, k in enumerate(keys) if k in (OWN, ESTIMATED)},
        )
    return TermTable(atoms, stored, outcomes, own, estimated), tuple(expected)


def _as_rows(atoms: list[tuple[int, ...]]) -> AtomRows:
    """``atoms`` as an :class:`AtomRows` of one array per run of equally long tuples."""
    parts: list[list[tuple[int, ...]]] = []
    for a in atoms:
        if parts and len(parts[-1][0]) == len(a):
            parts[-1].append(a)
        else:
            parts.append([a])
    return AtomRows([np.array(p, dtype=np.int64) for p in parts])


@settings(max_examples=100, deadline=None)
@given(
    st.lists(
        st.sampled_from([2, 3, 4]).flatmap(
            lambda n: st.lists(st.integers(0, 500), min_size=n, max_size=n).map(tuple)
        ),
        max_size=25,
    ),
    st.data(),
)
def test_atom_rows_answer_as_the_list_of_tuples(
    atoms: list[tuple[int, ...]], data: st.DataObject
) -> None:
    rows = _as_rows(atoms)
    assert len(rows) == len(atoms)
    for i in range(-len(atoms), len(atoms)):  # one row at a time, before anything is converted
        assert _as_rows(atoms)[i] == atoms[i]
        assert type(_as_rows(atoms)[i]) is tuple
    for bad in (len(atoms), -len(atoms) - 1):
        with pytest.raises(IndexError):
            _as_rows(atoms)[bad]
    lo = data.draw(st.integers(0, len(atoms)))
    assert rows[lo:] == atoms[lo:]
    assert rows.materialise() == atoms and list(rows) == atoms


@settings(max_examples=100, deadline=None)
@given(st.lists(st.integers(0, 10**15), max_size=30), st.data())
def test_key_rows_answer_as_the_list_of_keys(raw: list[int], data: st.DataObject) -> None:
    replaced = {
        i: data.draw(st.sampled_from([OWN, ESTIMATED]))
        for i in data.draw(st.sets(st.integers(0, max(0, len(raw) - 1)))) if i < len(raw)
    }
    expected = [replaced.get(i, k) for i, k in enumerate(raw)]
    cut = sorted(data.draw(st.lists(st.integers(0, len(raw)), max_size=4)))
    bounds = [0, *cut, len(raw)]
    parts = [np.array(raw[a:b], dtype=np.int64) for a, b in itertools.pairwise(bounds)]

    def rows() -> KeyRows:
        return KeyRows(parts, replaced)

    assert len(rows()) == len(expected)
    for i in range(-len(expected), len(expected)):  # one key at a time, before anything is converted
        assert rows()[i] == expected[i] and type(rows()[i]) is int
    for bad in (len(expected), -len(expected) - 1):
        with pytest.raises(IndexError):
            rows()[bad]
    lo = data.draw(st.integers(0, len(expected)))
    assert rows()[lo:] == expected[lo:]
    assert list(rows()) == expected and rows().materialise() == expected
    if expected:
        value = data.draw(st.sampled_from(expected))
        assert rows().index(value) == expected.index(value)


@settings(max_examples=150, deadline=None)
@given(tables())
def test_table_answers_as_its_resolutions(case: tuple[TermTable, tuple[Resolution, ...]]) -> None:
    table, items = case
    assert len(table) == len(items)
    assert tuple(table) == items and table == items and table == TermTable.of(items)
    assert table.tier_counts() == Counter((r.term.kind, r.tier) for r in items)
    # the reference's rule: the lowest score, the first in term order on ties
    lowest = min(items, key=lambda r: r.score, default=None)
    assert table.lowest_term() == (None if lowest is None else (lowest.score, lowest.term))
    assert table.lowest() == lowest
    for tiers in (("missing",), PROBLEM_TIERS, ("exact",), ()):
        assert table.positions(tiers) == [i for i, r in enumerate(items) if r.tier in tiers]
    plain = TermTable.of(items)
    elements = [("C", "N", "?")[i % 3] for i in range(41)]
    assert table.missing_tuples(elements) == Counter(
        (r.term.kind, named_classes(r.term, elements)) for r in items if r.tier == "missing"
    )
    assert decide_status(table, []) == decide_status(plain, [])
    assert estimated_entry_finding(table) == estimated_entry_finding(plain)
    for terms, listed in (
        ("all", list(items)),
        ("problems", [r for r in items if r.tier != "exact"]),
        ("none", []),
    ):
        dicts = [resolution_dict(r, PSET) for r in listed]
        assert table.term_dicts(PSET, terms) == dicts
        assert table.terms_json(PSET, terms) == dump_compact(dicts)
    assert pickle.loads(pickle.dumps(table)) == items


def test_shared_output_is_made_per_parameter_set() -> None:
    """The cached output belongs to one set: a second set gets its own (its name is in the provenance)."""
    entry = ENTRIES["bond"][0]
    outcome = SharedOutcome(
        "bond", entry.classes, "single", None, "exact", entry, 1.0, None, None, ()
    )
    table = TermTable([(0, 1), (1, 2)], [7, 7], {7: outcome}, {})
    first = table.terms_json(PSET, "all")
    assert '"set":"generic-organic' in first
    other = _renamed(PSET, "another-set")
    second = table.terms_json(other, "all")
    assert '"set":"another-set' in second and second != first
    assert second == dump_compact([resolution_dict(r, other) for r in table])


def _renamed(pset: ParameterSet, name: str) -> ParameterSet:
    from dataclasses import replace

    return replace(pset, header=replace(pset.header, name=name))


def test_outcome_with_details_is_refused() -> None:
    entry = ENTRIES["bond"][0]
    term = Term("bond", (0, 1), entry.classes, "single", None)
    estimate = Resolution(term, "estimate", entry, 0.5, details={"rule": "x"})
    with pytest.raises(ValueError, match="per-term details"):
        SharedOutcome.of(estimate)
    plain = Resolution(term, "exact", entry, 1.0)
    assert SharedOutcome.of(plain).resolution((0, 1)) == plain


def test_table_rejects_mismatched_lengths() -> None:
    with pytest.raises(ValueError, match="atom tuples"):
        TermTable([(0, 1)], [], {}, {})


def test_audit_wraps_any_sequence_and_keeps_equality() -> None:
    """A hand-made audit with a tuple equals the same audit given the tuple's table."""
    entry = ENTRIES["bond"][0]
    r = Resolution(Term("bond", (0, 1), entry.classes, "single", None), "exact", entry, 1.0)
    record = Record(0, "<test>", 1, 1, "x", None)
    plain = MoleculeAudit(record, "covered", None, resolutions=(r,))
    assert isinstance(plain.resolutions, TermTable)
    assert plain == MoleculeAudit(record, "covered", None, resolutions=TermTable.of([r]))
    assert plain.resolutions == (r,) and plain.score == 1.0
    assert plain.to_json(PSET) == dump_compact(plain.to_dict(PSET))
