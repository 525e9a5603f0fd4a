"""Resolution tiers on hand-built parameter sets (no loader involved)."""

from ffaudit.paramset.model import (
    Entry,
    EnvClass,
    FourierTerm,
    Header,
    ParameterSet,
    SourceLocation,
)
from ffaudit.resolve.driver import Resolver
from ffaudit.terms import Term

LOC = SourceLocation("hand.yaml", 1)


def _set(entries, classes=None):
    classes = classes or (
        EnvClass("c", "C", ("[#6]",)),
        EnvClass("c4", "C", ("[CX4]",), parent="c"),
        EnvClass("c4r", "C", ("[CX4;R]",), parent="c4"),
        EnvClass("h", "H", ("[#1]",)),
        EnvClass("o", "O", ("[#8]",)),
    )
    tables = {k: {} for k in ("bond", "angle", "dihedral", "out_of_plane", "nonbonded")}
    for e in entries:
        tables[e.kind][e.key] = e
    return ParameterSet(Header("hand", "1"), {}, tuple(classes), tables)


def _bond(a, b, order=None, ring=None, line=1):
    return Entry(
        "bond",
        (a, b),
        "harmonic",
        {"k": 600.0, "r0": 1.5},
        SourceLocation("hand.yaml", line),
        bond_order=order,
        in_ring=ring,
    )


def _dihedral(classes, line):
    return Entry(
        "dihedral",
        classes,
        "fourier",
        {},
        SourceLocation("hand.yaml", line),
        fourier=(FourierTerm(3, 0.0, 0.15),),
    )


def test_exact_match_and_qualifier_specificity():
    pset = _set([_bond("c4", "h", line=1), _bond("c4", "h", order="single", line=2)])
    r = Resolver(pset).resolve(Term("bond", (0, 1), ("c4", "h"), "single", False))
    assert r.tier == "exact" and r.score == 1.0
    assert r.entry.location.line == 2  # the qualified entry is more specific than the plain one
    r = Resolver(pset).resolve(Term("bond", (0, 1), ("c4", "h"), "double", False))
    assert r.tier == "exact" and r.entry.location.line == 1


def test_wildcard_most_specific_wins_and_ties_are_deterministic():
    pset = _set(
        [
            _dihedral(("*", "c4", "c4", "*"), 1),
            _dihedral(("*", "c4", "c4", "h"), 2),
            _dihedral(("*", "c4", "c4", "o"), 3),
        ]
    )
    r = Resolver(pset).resolve(Term("dihedral", (0, 1, 2, 3), ("h", "c4", "c4", "o")))
    assert r.tier == "wildcard"
    # one wildcard beats two; between the two one-wildcard candidates the smaller canonical key wins:
    # (*,c4,c4,h) < (*,c4,c4,o)
    assert r.entry.location.line == 2
    assert r.score < 1.0
    r = Resolver(pset).resolve(Term("dihedral", (0, 1, 2, 3), ("c", "c4", "c4", "c")))
    assert r.entry.location.line == 1


def test_parent_chain_fallback_names_substitutions():
    pset = _set([_bond("c", "h")])
    r = Resolver(pset).resolve(Term("bond", (0, 1), ("c4r", "h"), "single", True))
    assert r.tier == "parent"
    assert r.substitutions == ((0, "c4r", "c"),)
    one_step = _set([_bond("c4", "h")])
    r1 = Resolver(one_step).resolve(Term("bond", (0, 1), ("c4r", "h"), "single", True))
    assert r1.tier == "parent" and r1.score > r.score  # fewer steps, higher score


def test_parent_tier_can_be_switched_off():
    pset = _set([_bond("c", "h")])
    r = Resolver(pset, tiers=frozenset()).resolve(
        Term("bond", (0, 1), ("c4", "h"), "single", False)
    )
    assert r.tier == "missing" and r.cause == "no-parameter"


def test_missing_and_unclassified():
    pset = _set([_bond("c", "h")])
    r = Resolver(pset).resolve(Term("bond", (0, 1), ("o", "h"), "single", False))
    assert r.tier == "missing" and "o-h" in r.reason and r.score == 0.0
    r = Resolver(pset).resolve(Term("bond", (3, 7), ("?", "h"), "single", False))
    assert r.tier == "missing" and r.cause == "no-class" and "3" in r.reason
    r = Resolver(pset).resolve(Term("angle", (0, 1, 2), ("h", "c", "h")))
    assert r.tier == "missing" and "no angle parameters at all" in r.reason


def test_no_class_reason_names_each_terms_own_atoms():
    # A cached outcome must not carry the atom indices of the first term that produced it.
    pset = _set([_bond("c", "h")])
    resolver = Resolver(pset, tiers=frozenset())
    first = resolver.resolve(Term("nonbonded", (6,), ("?",)))
    second = resolver.resolve(Term("nonbonded", (1,), ("?",)))
    assert "atom 6" in first.reason and "atom 1" in second.reason
