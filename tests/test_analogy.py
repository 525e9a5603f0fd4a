"""Analogy tier: same element only, nearest class wins, substitutions named."""

from ffaudit.paramset.model import Entry, EnvClass, Header, ParameterSet, SourceLocation
from ffaudit.resolve.driver import Resolver
from ffaudit.terms import Term

CLASSES = (
    EnvClass("c4", "C", ("[CX4]",), hybridisation="sp3"),
    EnvClass("c3", "C", ("[CX3]",), hybridisation="sp2"),
    EnvClass("c3ar", "C", ("[c]",), hybridisation="sp2", aromatic=True),
    EnvClass("c3x", "C", ("[CX3]",), hybridisation="sp2", equivalent=("c3ar",)),
    EnvClass("n3", "N", ("[NX3]",), hybridisation="sp3"),
    EnvClass("h", "H", ("[#1]",)),
)


def _bond(a, b, line):
    return Entry(
        "bond", (a, b), "harmonic", {"k": 600.0, "r0": 1.5}, SourceLocation("hand.yaml", line)
    )


def _set(entries):
    tables = {k: {} for k in ("bond", "angle", "dihedral", "out_of_plane", "nonbonded")}
    for e in entries:
        tables[e.kind][e.key] = e
    return ParameterSet(Header("hand", "1"), {}, CLASSES, tables)


def test_nearest_same_element_class_is_the_donor():
    pset = _set([_bond("c4", "h", 1), _bond("c3ar", "h", 2), _bond("h", "n3", 3)])
    r = Resolver(pset).resolve(Term("bond", (0, 1), ("c3", "h"), "single", False))
    # c3 (sp2, not aromatic) -> c3ar costs base + aromatic (0.5); -> c4 costs base + hybridisation (0.7)
    assert r.tier == "analogy"
    assert r.entry.location.line == 2
    assert r.substitutions == ((0, "c3", "c3ar"),)
    assert 0 < r.score < 1


def test_declared_equivalence_is_cheapest():
    pset = _set([_bond("c3", "h", 1), _bond("c3ar", "h", 2)])
    r = Resolver(pset).resolve(Term("bond", (0, 1), ("c3x", "h"), "single", False))
    assert r.tier == "analogy" and r.entry.location.line == 2


def test_no_cross_element_analogy():
    pset = _set([_bond("c4", "h", 1)])
    r = Resolver(pset).resolve(Term("bond", (0, 1), ("h", "n3"), "single", False))
    assert r.tier == "missing"


def test_analogy_can_be_switched_off():
    pset = _set([_bond("c4", "h", 1)])
    r = Resolver(pset, tiers=frozenset({"wildcard", "parent"})).resolve(
        Term("bond", (0, 1), ("c3", "h"), "single", False)
    )
    assert r.tier == "missing"
