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


# --- the indexed donor search against the plain definition ----------------------------------------------


def _plain_find(finder, term):
    """The analogy donor by the module's definition: every entry of the kind, every orientation, scored;
    the lowest (cost, donor classes) wins, the first seen among equals."""
    from ffaudit.resolve.analogy import _orientations

    best = None
    for entry in (finder.index.tables.get(term.kind) or {}).values():
        if entry.bond_order not in (None, term.bond_order) or entry.in_ring not in (
            None,
            term.in_ring,
        ):
            continue
        for orientation in _orientations(term.kind, entry.classes):
            match = finder._score(term, entry, orientation)
            if match is not None and (best is None or (match.cost, entry.classes) < best[:2]):
                best = (match.cost, entry.classes, match)
    return None if best is None else best[2]


def test_indexed_donor_search_equals_the_plain_scan_on_a_real_library():
    """Every tuple of the first 400 NCI first_5K molecules (RDKit's shipped data), resolved against the
    embedded set: the element-indexed search finds the same donor and substitutions as scoring the whole
    table, and it does find donors (else the check would be empty)."""
    from rdkit import RDConfig

    from ffaudit.audit import AuditContext
    from ffaudit.paramset.load import load_parameter_set
    from ffaudit.read.open import iter_records
    from ffaudit.resolve.analogy import AnalogyFinder

    context = AuditContext(load_parameter_set())
    finder = AnalogyFinder(context.resolver.index)
    path = f"{RDConfig.RDDataDir}/NCI/first_5K.smi"
    tuples = {}
    for n, record in enumerate(iter_records(path)):
        if n == 400:
            break
        for resolution in context.audit_record(record).table:
            term = resolution.term
            tuples[(term.kind, term.classes, term.bond_order, term.in_ring)] = term
    found = 0
    for term in tuples.values():
        expected = _plain_find(finder, term)
        assert finder.find(term) == expected, term
        found += expected is not None
    assert found >= 20, found


def test_indexed_donor_search_keeps_wildcards_qualifiers_and_unknown_classes():
    """Hand-made cases: a wildcard donor position matches any element, a qualified donor only its own bond
    order, and a class the set does not declare matches nothing but a wildcard."""
    from ffaudit.resolve.analogy import AnalogyFinder

    wild = Entry(
        "angle",
        ("*", "c4", "n3"),
        "harmonic",
        {"k": 100.0, "theta0": 109.5},
        SourceLocation("hand.yaml", 4),
    )
    double = Entry(
        "bond",
        ("c4", "n3"),
        "harmonic",
        {"k": 900.0, "r0": 1.3},
        SourceLocation("hand.yaml", 5),
        bond_order="double",
    )
    pset = _set([_bond("c4", "h", 1), double, wild])
    finder = AnalogyFinder(Resolver(pset).index)
    cases = [
        Term("angle", (0, 1, 2), ("h", "c3", "n3"), None, None),
        Term("angle", (0, 1, 2), ("zz", "c3", "n3"), None, None),
        Term("bond", (0, 1), ("c3", "n3"), "double", False),
        Term("bond", (0, 1), ("c3", "n3"), "single", False),
        Term("bond", (0, 1), ("c3", "zz"), "single", False),
        Term("bond", (0, 1), ("c3", "h"), "single", False),
    ]
    results = [finder.find(t) for t in cases]
    assert results == [_plain_find(finder, t) for t in cases]
    # the wildcard donor serves both the H and the undeclared first class; the double bond only a double
    assert [r is not None for r in results] == [True, True, True, False, False, True]
