"""The audit output schemas: valid 2020-12 schemas, units stated, and they reject what the contract forbids.

Outside reference: the JSON Schema 2020-12 meta-schema as shipped with the jsonschema package.
"""

from __future__ import annotations

import copy
from collections.abc import Callable, Iterator
from typing import Any

import pytest
from jsonschema import Draft202012Validator
from jsonschema.exceptions import ValidationError

import report_fixtures as fx
from ffaudit.paramset.model import ARITY, KINDS
from ffaudit.report.schemas import (
    SCHEMA_NAMES,
    iter_molecule_errors,
    iter_report_errors,
    load_schema,
    validate_molecule,
    validate_report,
)

Mutation = Callable[[dict[str, Any]], object]


@pytest.mark.parametrize("name", SCHEMA_NAMES)
def test_schemas_are_valid_2020_12(name: str) -> None:
    schema = load_schema(name)
    assert schema["$schema"] == "https://json-schema.org/draft/2020-12/schema"
    Draft202012Validator.check_schema(schema)  # raises SchemaError if not


def test_load_schema_by_short_or_file_name() -> None:
    assert load_schema("audit-molecule") == load_schema("audit-molecule.schema.json")
    assert load_schema("audit-report")["$id"] != load_schema("audit-molecule")["$id"]
    with pytest.raises(FileNotFoundError, match="no-such"):
        load_schema("no-such")


def test_report_schema_refers_to_the_molecule_schema_by_id() -> None:
    report = load_schema("audit-report")
    assert (
        report["properties"]["molecules"]["items"]["$ref"] == load_schema("audit-molecule")["$id"]
    )


def _nodes(node: Any, path: str = "$") -> Iterator[tuple[str, dict[str, Any]]]:
    if isinstance(node, dict):
        yield path, node
        for key, value in node.items():
            yield from _nodes(value, f"{path}.{key}")
    elif isinstance(node, list):
        for i, value in enumerate(node):
            yield from _nodes(value, f"{path}[{i}]")


@pytest.mark.parametrize("name", SCHEMA_NAMES)
def test_every_number_states_its_unit(name: str) -> None:
    numbers = [
        (path, node)
        for path, node in _nodes(load_schema(name))
        if node.get("type") == "number" or "number" in (node.get("type") or [])
    ]
    assert numbers, "the schema describes no numbers at all"
    lacking = [path for path, node in numbers if "Unit:" not in node.get("description", "")]
    assert lacking == []


def test_every_kind_has_its_values_described_with_units() -> None:
    defs = load_schema("audit-molecule")["$defs"]
    values = {name: d for name, d in defs.items() if name.startswith("values_")}
    kinds = {kind for kind in KINDS for name in values if name.startswith(f"values_{kind}_")}
    assert kinds == set(KINDS)
    for name, schema in values.items():
        for value_name, value in schema["properties"].items():
            if value.get("type") == "number":
                assert "Unit:" in value["description"], (name, value_name)


def _errors(obj: dict[str, Any], report: bool) -> list[ValidationError]:
    return list(iter_report_errors(obj) if report else iter_molecule_errors(obj))


def _term(molecule: dict[str, Any], kind: str, tier: str | None = None) -> dict[str, Any]:
    return next(t for t in molecule["terms"] if t["kind"] == kind and tier in (None, t["tier"]))


# Each mutation breaks one rule of the contract; the molecule or document must then be rejected.
MOLECULE_MUTATIONS: dict[str, tuple[Callable[[], dict[str, Any]], Mutation]] = {
    "unknown status": (fx.water, lambda m: m.update(status="ok")),
    "extra key": (fx.water, lambda m: m.update(colour="blue")),
    "key missing": (fx.water, lambda m: m.pop("counts")),
    "bond with three atoms": (fx.water, lambda m: _term(m, "bond")["atoms"].append(2)),
    "angle with two classes": (fx.water, lambda m: _term(m, "angle")["classes"].pop()),
    "score above 1": (fx.water, lambda m: m.update(score=1.5)),
    "exact term scored below 1": (fx.water, lambda m: _term(m, "bond").update(score=0.5)),
    "harmonic bond without r0": (fx.water, lambda m: _term(m, "bond")["values"].pop("r0")),
    "harmonic bond with an unnamed value": (
        fx.water,
        lambda m: _term(m, "bond").update(values={"k": 1.0, "r0": 1.0, "x0": 2.0}),
    ),
    "form of another kind": (fx.water, lambda m: _term(m, "angle").update(form="morse")),
    "value as a string": (fx.water, lambda m: _term(m, "bond")["values"].update(k="662")),
    "negative atom index": (fx.water, lambda m: _term(m, "bond")["atoms"].__setitem__(0, -1)),
    "unknown tier in counts": (fx.water, lambda m: m["counts"]["bond"].update(guess=1)),
    "tier missing in counts": (fx.water, lambda m: m["counts"]["bond"].pop("wildcard")),
    "unknown kind in counts": (fx.water, lambda m: m["counts"].update(torsion=m["counts"]["bond"])),
    "covered with a missing count": (fx.water, lambda m: m["counts"]["bond"].update(missing=1)),
    "covered with an estimate count": (fx.water, lambda m: m["counts"]["angle"].update(estimate=1)),
    "covered with a reason": (fx.water, lambda m: m.update(reason="why?")),
    "estimated without a reason": (fx.formaldehyde, lambda m: m.update(reason=None)),
    "estimated with a missing count": (
        fx.formaldehyde,
        lambda m: m["counts"]["bond"].update(missing=1),
    ),
    "linear angle not at 180": (
        fx.acetonitrile,
        lambda m: _term(m, "angle")["values"].update(theta0=170.0),
    ),
    "Morse without depth": (
        fx.formaldehyde,
        lambda m: _term(m, "bond", "estimate")["values"].pop("depth"),
    ),
    "missing term with values": (
        fx.methylphosphine,
        lambda m: _term(m, "dihedral").update(values={"k": 1.0}),
    ),
    "missing term with provenance": (
        fx.methylphosphine,
        lambda m: _term(m, "bond", "missing").update(provenance=fx._prov(1, ["c4"])),
    ),
    "missing term with a score": (
        fx.methylphosphine,
        lambda m: _term(m, "bond", "missing").update(score=0.3),
    ),
    "unknown class id": (fx.water, lambda m: _term(m, "bond")["classes"].__setitem__(0, "h o")),
    "finding without code": (fx.methylphosphine, lambda m: m["findings"][0].pop("code")),
    "unreadable with atoms": (
        lambda: fx.unreadable(0, "a", 1, 1, "x", "bad"),
        lambda m: m.update(atoms=3),
    ),
    "unreadable with a score": (
        lambda: fx.unreadable(0, "a", 1, 1, "x", "bad"),
        lambda m: m.update(score=0.0),
    ),
    "unreadable without reason": (
        lambda: fx.unreadable(0, "a", 1, 1, "x", "bad"),
        lambda m: m.update(reason=None),
    ),
    "record number 0": (fx.water, lambda m: m["source"].update(record=0)),
    # Bookkeeping the schema cannot express (checked by the same entry points):
    "a class per atom": (fx.water, lambda m: m["atom_classes"].pop()),
    "term atom beyond the molecule": (
        fx.water,
        lambda m: _term(m, "nonbonded")["atoms"].__setitem__(0, 3),
    ),
    "more listed terms than counted": (
        fx.water,
        lambda m: m["counts"]["angle"].update(exact=0, wildcard=1),
    ),
    "score above the lowest term": (fx.formaldehyde, lambda m: m.update(score=0.5)),
    "score null with terms": (fx.water, lambda m: m.update(score=None, score_term=None)),
}


def test_fixture_molecules_are_valid() -> None:
    for make in (fx.water, fx.formaldehyde, fx.acetonitrile, fx.methylphosphine):
        validate_molecule(make())
    validate_molecule(
        {
            **fx.acetonitrile(),
            "terms": [fx.fourier_dihedral()],
            "counts": {"dihedral": fx.tiers(exact=1)},
        }
    )


@pytest.mark.parametrize("case", sorted(MOLECULE_MUTATIONS))
def test_molecule_mutation_is_rejected(case: str) -> None:
    make, mutate = MOLECULE_MUTATIONS[case]
    molecule = make()
    assert _errors(molecule, report=False) == [], "the unmutated fixture must be valid"
    mutate(molecule)
    assert _errors(molecule, report=False), f"{case}: accepted"
    with pytest.raises(ValidationError):
        validate_molecule(molecule)


FOURIER_MUTATIONS: dict[str, Mutation] = {
    "periodicity 7": lambda t: t["values"]["terms"][0].update(periodicity=7),
    "periodicity 1.5": lambda t: t["values"]["terms"][0].update(periodicity=1.5),
    "empty series": lambda t: t["values"].update(terms=[]),
    "flat values": lambda t: t.update(values={"k": 0.15, "periodicity": 3, "phase": 0.0}),
}


@pytest.mark.parametrize("case", sorted(FOURIER_MUTATIONS))
def test_fourier_mutation_is_rejected(case: str) -> None:
    term = fx.fourier_dihedral()
    molecule = {**fx.acetonitrile(), "terms": [term], "counts": {"dihedral": fx.tiers(exact=1)}}
    assert _errors(molecule, report=False) == [], "the unmutated fixture must be valid"
    FOURIER_MUTATIONS[case](term)
    assert _errors(molecule, report=False), f"{case}: accepted"


def _first_molecule(doc: dict[str, Any]) -> dict[str, Any]:
    molecule: dict[str, Any] = doc["molecules"][0]
    return molecule


REPORT_MUTATIONS: dict[str, Mutation] = {
    "wrong format": lambda d: d.update(format="other"),
    "format version 2": lambda d: d.update(format_version=2),
    "no summary": lambda d: d.pop("summary"),
    "hash missing": lambda d: d["parameter_set"].pop("hash"),
    "demonstration as text": lambda d: d["parameter_set"].update(demonstration="yes"),
    "unknown terms mode": lambda d: d.update(terms_mode="some"),
    "invalid molecule inside (resolved through $ref)": lambda d: _first_molecule(d).update(
        status="ok"
    ),
    "element name": lambda d: d["summary"]["elements_without_class"].update(phosphorus=1),
    "histogram bin of two": lambda d: d["summary"]["score"]["histogram"][0].pop(),
    # Bookkeeping:
    "records not the number of molecules": lambda d: d["summary"].update(records=6),
    "status counts do not add up": lambda d: d["summary"]["status"].update(covered=3),
    "status counts swapped": lambda d: d["summary"]["status"].update(covered=1, estimated=2),
    "term totals differ": lambda d: d["summary"]["terms"]["bond"].update(exact=12),
    "indices out of order": lambda d: d["molecules"].reverse(),
    "exact terms listed in problems mode": lambda d: d.update(terms_mode="problems"),
    "terms listed in none mode": lambda d: d.update(terms_mode="none"),
    "a listed term dropped in all mode": lambda d: _first_molecule(d)["terms"].pop(),
    "median wrong": lambda d: d["summary"]["score"].update(median=1.0),
    "histogram misses a molecule": lambda d: d["summary"]["score"]["histogram"][9].__setitem__(
        2, 1
    ),
    "unreadable record not listed": lambda d: d["summary"].update(unreadable=[]),
}


@pytest.mark.parametrize("case", sorted(REPORT_MUTATIONS))
def test_report_mutation_is_rejected(case: str) -> None:
    doc = copy.deepcopy(fx.report_document(fx.mixed_stream()))
    assert _errors(doc, report=True) == [], "the unmutated fixture must be valid"
    REPORT_MUTATIONS[case](doc)
    errors = _errors(doc, report=True)
    assert errors, f"{case}: accepted"
    with pytest.raises(ValidationError):
        validate_report(doc)


def test_error_inside_a_molecule_points_at_it() -> None:
    doc = copy.deepcopy(fx.report_document(fx.mixed_stream()))
    doc["molecules"][2]["terms"][0]["values"]["k"] = "stiff"
    paths = [list(e.absolute_path) for e in iter_report_errors(doc)]
    assert ["molecules", 2, "terms", 0, "values", "k"] in paths


def test_arity_table_matches_the_model() -> None:
    # The schema's per-kind arity rules must agree with paramset.model.ARITY.
    rules = load_schema("audit-molecule")["$defs"]["arity"]["allOf"]
    arity = {
        r["if"]["properties"]["kind"]["const"]: r["then"]["properties"]["atoms"]["minItems"]
        for r in rules
    }
    assert arity == ARITY
