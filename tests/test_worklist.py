"""The worklist: rankings and coverage curve on a library whose answer is worked out by hand; input checks;
the command line.

The hand library (molecule dicts in the audit output contract, built by ``_molecule``). Classes a, b, c, d
are elements C, N, O, S (``ELEMENTS``); tuples:

    A = bond a-b      B = bond a-c      C = angle a-b-c      D = bond b-d      F = bond c-c
    E = angle b-a-b   (resolved by analogy: a blocker only with include_estimated)
    U = bond ?P-a     (atom 0 is a phosphorus without a class: no parameter fixes it)

    index  blockers     note
    0      -            covered
    1      A
    2      A
    3      A, B
    4      B, C         C twice (two angle terms), so C has 5 terms in 4 molecules
    5      B, C
    6      B, C
    7      C, D
    8      D, U         needs a class
    9      -            unreadable
    10     (E)          estimated
    11     F

Worked out by hand, default mode (blocking tier: missing):
records 12 = unreadable 1 + complete 2 (0, 10) + coverable 8 (1-7, 11) + needs a class 1 (8); can be
covered 10.
Per tuple (molecules, only blocker): A (3, 2), B (4, 0), C (4, 0), D (2, 0), F (1, 1).
Alone ranking (only blocker, then molecules, then key with bonds before angles): A, F, B, C, D.
Greedy: start 2 complete. A completes 1, 2 (-> 4); now 3 waits on B only: B and F complete 1 each, B blocks
more molecules (4 > 1) -> B completes 3 (-> 5); C completes 4, 5, 6 (-> 8); D and F complete 1 each, D
blocks more (2 > 1) -> D completes 7 (-> 9); F completes 11 (-> 10). Molecule 8 still waits on U.
Curve 2, 4, 5, 8, 9, 10: it ends at the 10 molecules that can be covered.

With include_estimated: molecule 10 is blocked by E (only blocker), so complete 1 and coverable 9, can be
covered still 10. Greedy A (-> 3), B (-> 4; B beats E and F on molecules), C (-> 7), D (-> 8), then F and E
tie on everything but the key: bond F before angle E (-> 9, -> 10).
"""

from __future__ import annotations

import io
import json
from pathlib import Path
from typing import Any

import jsonschema
import pytest

from ffaudit.cli.main import run
from ffaudit.errors import InputFileError
from ffaudit.worklist import (
    WorklistBuilder,
    build_worklist,
    iter_results,
    tuple_label,
)

ROOT = Path(__file__).resolve().parents[1]
SAMPLE = ROOT / "sample_sets" / "formulation-lab.smi"
SCHEMA = json.loads((ROOT / "src" / "ffaudit" / "schemas" / "worklist.schema.json").read_text())
ELEMENTS = {"a": "C", "b": "N", "c": "O", "d": "S"}

A = ("bond", ("a", "b"))
B = ("bond", ("a", "c"))
C = ("angle", ("a", "b", "c"))
D = ("bond", ("b", "d"))
E = ("angle", ("b", "a", "b"))
F = ("bond", ("c", "c"))
U = ("bond", ("?", "a"))


def _molecule(
    index: int, blockers: list[tuple[str, tuple[str, ...]]], tier: str = "missing"
) -> dict[str, Any]:
    """A molecule dict: one exact bond a-a plus one term per blocker (atoms 0.. in order; atom 0 is a
    classless phosphorus when a blocker has '?')."""
    terms: list[dict[str, Any]] = [
        {"kind": "bond", "atoms": [1, 2], "classes": ["a", "a"], "tier": "exact", "score": 1.0}
    ]
    for kind, classes in blockers:
        atoms = list(range(len(classes)))
        terms.append(
            {"kind": kind, "atoms": atoms, "classes": list(classes), "tier": tier, "score": 0.0}
        )
    counts: dict[str, dict[str, int]] = {}
    for term in terms:
        per = counts.setdefault(
            term["kind"],
            dict.fromkeys(("exact", "wildcard", "parent", "analogy", "estimate", "missing"), 0),
        )
        per[term["tier"]] += 1
    unclassified = any("?" in c for _, c in blockers)
    status = "covered" if not blockers else ("incomplete" if tier == "missing" else "estimated")
    return {
        "index": index,
        "source": {"path": "hand.smi", "record": index + 1, "line": index + 1},
        "name": f"m{index}",
        "smiles": "C" * (index + 1),
        "status": status,
        "reason": None if status == "covered" else "hand-made",
        "score": 0.0,
        "score_term": None,
        "atoms": 4,
        "fragments": 1,
        "atom_classes": [None if unclassified else "a", "a", "a", "a"],
        "counts": counts,
        "findings": [],
        "proposed_classes": [{"atom": 0, "id": "p_x", "element": "P", "smarts": "[#15]"}]
        if unclassified
        else [],
        "terms": terms,
    }


def _unreadable(index: int) -> dict[str, Any]:
    return {
        "index": index,
        "source": {"path": "hand.smi", "record": index + 1, "line": index + 1},
        "name": f"m{index}",
        "smiles": None,
        "status": "unreadable",
        "reason": "bad SMILES",
        "score": None,
        "score_term": None,
        "atoms": 0,
        "fragments": 0,
        "atom_classes": [],
        "counts": {},
        "findings": [],
        "terms": [],
    }


def _library() -> list[dict[str, Any]]:
    rows: list[list[tuple[str, tuple[str, ...]]]] = [
        [],
        [A],
        [A],
        [A, B],
        [B, C, C],
        [B, C],
        [B, C],
        [C, D],
        [D, U],
    ]
    library = [_molecule(i, blockers) for i, blockers in enumerate(rows)]
    library.append(_unreadable(9))
    library.append(_molecule(10, [E], tier="analogy"))
    library.append(_molecule(11, [F]))
    return library


def _label(kind_classes: tuple[str, tuple[str, ...]]) -> str:
    return tuple_label((kind_classes[0], kind_classes[1], None))


def test_hand_library_default_mode():
    worklist = build_worklist(_library(), class_elements=ELEMENTS)
    # Molecule counts worked out by hand (module docstring).
    assert (worklist.records, worklist.unreadable, worklist.complete) == (12, 1, 2)
    assert (worklist.coverable, worklist.needs_class, worklist.can_be_covered) == (8, 1, 10)
    assert (
        worklist.records
        == worklist.unreadable + worklist.complete + worklist.coverable + worklist.needs_class
    )
    assert [t.label for t in worklist.tuples] == [_label(x) for x in (A, B, C, D, F)]
    assert [t.completes for t in worklist.tuples] == [2, 1, 3, 1, 1]
    assert worklist.curve == (2, 4, 5, 8, 9, 10)
    assert worklist.curve[-1] == worklist.can_be_covered
    assert [t.label for t in worklist.by_alone()] == [_label(x) for x in (A, F, B, C, D)]
    stats = {t.label: (t.molecules, t.alone, t.terms) for t in worklist.tuples}
    assert stats[_label(A)] == (3, 2, 3)
    assert stats[_label(C)] == (4, 0, 5)  # two C terms in molecule 4
    assert stats[_label(F)] == (1, 1, 1)
    # E resolved by analogy: not a blocker here.
    assert _label(E) not in stats
    # U has an atom without a class: named ?P, not ranked, listed as an environment without parameters.
    assert [t.label for t in worklist.without_parameters] == ["bond ?P-a"]
    assert [(g.element, g.atoms, g.molecules) for g in worklist.unclassified] == [("P", 1, 1)]


def test_hand_library_include_estimated():
    worklist = build_worklist(_library(), include_estimated=True, class_elements=ELEMENTS)
    assert (worklist.complete, worklist.coverable, worklist.can_be_covered) == (1, 9, 10)
    assert [t.label for t in worklist.tuples] == [_label(x) for x in (A, B, C, D, F, E)]
    assert worklist.curve == (1, 3, 4, 7, 8, 9, 10)
    e = next(t for t in worklist.tuples if t.label == _label(E))
    assert dict(e.tiers) == {"analogy": 1} and e.alone == 1


def test_counts_by_kind_element_and_class():
    worklist = build_worklist(_library(), class_elements=ELEMENTS)
    # By hand: bond tuples A, B, D, F, U (terms 3 + 4 + 2 + 1 + 1 = 11; molecules 1-8 and 11 = 9);
    # the angle tuple C (5 terms in molecules 4-7).
    assert dict(worklist.by_kind["bond"]) == {"tuples": 5, "terms": 11, "molecules": 9}
    assert dict(worklist.by_kind["angle"]) == {"tuples": 1, "terms": 5, "molecules": 4}
    # Sulfur (class d) only in D: 2 terms in molecules 7 and 8; phosphorus only in U.
    assert dict(worklist.by_element["S"]) == {"tuples": 1, "terms": 2, "molecules": 2}
    assert dict(worklist.by_element["P"]) == {"tuples": 1, "terms": 1, "molecules": 1}
    # Class c: B, C and F; molecules 3-7 and 11.
    assert dict(worklist.by_class["c"]) == {"tuples": 3, "terms": 10, "molecules": 6}


def test_deterministic_whatever_the_input_order():
    library = _library()
    forward = build_worklist(library, class_elements=ELEMENTS).to_dict()
    backward = build_worklist(list(reversed(library)), class_elements=ELEMENTS).to_dict()
    # The examples name molecules by position, which is the same; the rankings do not depend on order.
    assert [t["label"] for t in forward["tuples"]] == [t["label"] for t in backward["tuples"]]
    assert forward["coverage_curve"] == backward["coverage_curve"]


def test_bond_order_is_part_of_the_key_when_known():
    single = _molecule(0, [A])
    double = _molecule(1, [A])
    single["terms"][1]["order"] = "single"
    double["terms"][1]["order"] = "double"
    worklist = build_worklist([single, double])
    assert [t.label for t in worklist.tuples] == ["bond a-b (double)", "bond a-b (single)"]
    assert worklist.orders_unknown == 0
    merged = build_worklist([_molecule(0, [A]), _molecule(1, [A])])
    assert [t.label for t in merged.tuples] == ["bond a-b"]
    assert merged.orders_unknown == 2
    assert any("bond order" in note for note in merged.notes())


def test_terms_left_out_are_detected():
    molecule = _molecule(0, [A])
    molecule["terms"] = []  # as written by --terms none; counts still show the missing bond
    with pytest.raises(InputFileError, match=r"results.jsonl:7: .*--terms"):
        WorklistBuilder().add(molecule, "results.jsonl:7")


def test_results_file_errors_name_file_and_line(tmp_path: Path):
    path = tmp_path / "results.jsonl"
    path.write_text(json.dumps(_molecule(0, [A])) + "\n\n{not json\n", encoding="utf-8")
    with pytest.raises(InputFileError, match=r"results.jsonl:3:2: not a JSON object"):
        list(iter_results(str(path)))
    path.write_text('{"index": 0}\n', encoding="utf-8")
    with pytest.raises(InputFileError, match=r"results.jsonl:1: the molecule has no 'status'"):
        build_worklist(iter_results(str(path)))


def test_json_document_matches_schema():
    document = {
        "format": "ffaudit-worklist",
        "format_version": 1,
        "input": {"path": "hand.jsonl", "kind": "results"},
        "parameter_set": {"name": "hand", "version": "1", "hash": ""},
        "cautions": [],
        **build_worklist(_library(), class_elements=ELEMENTS).to_dict(top=2),
        "fragments": None,
    }
    jsonschema.Draft202012Validator(SCHEMA).validate(document)
    assert len(document["tuples"]) == 2 and document["tuples_total"] == 5
    assert len(document["coverage_curve"]) == 6  # the curve is always whole


def _cli(*argv: str) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    code = run(list(argv), out, err)
    return code, out.getvalue(), err.getvalue()


def test_cli_library_and_results_agree(tmp_path: Path):
    code, text, err = _cli("worklist", str(SAMPLE), "--include-estimated", "--format", "json")
    assert code == 0, err
    from_library = json.loads(text)
    jsonschema.Draft202012Validator(SCHEMA).validate(from_library)
    results = tmp_path / "results.jsonl"
    code, _, err = _cli(
        "audit",
        str(SAMPLE),
        "--format",
        "jsonl",
        "--terms",
        "problems",
        "-j",
        "1",
        "-o",
        str(results),
    )
    assert code in (0, 1), (
        err
    )  # 1: the sample has incomplete molecules (the audit's --fail-on policy)
    out = tmp_path / "worklist.json"
    code, _, err = _cli(
        "worklist", str(results), "--include-estimated", "--format", "json", "-o", str(out)
    )
    assert code == 0, err
    from_results = json.loads(out.read_text(encoding="utf-8"))
    assert from_results["input"]["kind"] == "results" and from_library["input"]["kind"] == "library"
    assert from_results["molecules"] == from_library["molecules"]
    assert from_results["coverage_curve"][-1] == from_library["coverage_curve"][-1]
    # The sample library: 30 records, 7 covered and 23 blocked with estimates counted (as the audit of the
    # same file reports: 7 covered, 21 estimated, 2 incomplete).
    assert from_library["molecules"]["records"] == 30
    assert from_library["molecules"]["complete"] == 7
    curve = from_library["coverage_curve"]
    assert curve[-1]["complete"] == from_library["molecules"]["can_be_covered"]
    assert [p["complete"] for p in curve] == sorted(p["complete"] for p in curve)


def test_cli_table_is_100_columns_and_explains_terms_none(tmp_path: Path):
    code, text, err = _cli("worklist", str(SAMPLE), "--include-estimated", "--top", "5")
    assert code == 0, err
    assert max(len(line) for line in text.splitlines()) <= 100
    assert "Worklist" in text and "Environments without parameters" in text
    results = tmp_path / "none.jsonl"
    _cli(
        "audit", str(SAMPLE), "--format", "jsonl", "--terms", "none", "-j", "1", "-o", str(results)
    )
    code, _, err = _cli("worklist", str(results))
    assert code == 2
    assert "--terms problems" in err and "none.jsonl:" in err
