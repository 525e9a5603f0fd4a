"""The JSON Schemas of the audit output, and validation against them.

``schemas/audit-molecule.schema.json`` describes one molecule object (one ``--format jsonl`` line) and
``schemas/audit-report.schema.json`` the ``--format json`` document, which refers to the molecule schema by its
``$id`` (resolved through a :class:`referencing.Registry`, never over the network).

Two entry points over one error generator each, in the style of :mod:`jsonschema`: ``iter_*_errors`` yields
every error, ``validate_*`` raises the most relevant one. The report check adds the bookkeeping a schema cannot
express, as errors of the same type: the summary accounts for every record (``records`` equals the number of
molecules and the sum of the status counts, statuses and term counts agree with the molecules) and molecule
``index`` values run 0, 1, 2, ... in order.
"""

from __future__ import annotations

import json
import math
import statistics
from collections.abc import Iterator, Mapping
from functools import cache
from importlib import resources
from typing import Any

import jsonschema
from jsonschema import Draft202012Validator
from jsonschema.exceptions import ValidationError
from referencing import Registry, Resource

MOLECULE_SCHEMA = "audit-molecule"
REPORT_SCHEMA = "audit-report"
SCHEMA_NAMES: tuple[str, ...] = (MOLECULE_SCHEMA, REPORT_SCHEMA)


def load_schema(name: str) -> dict[str, Any]:
    """A fresh copy of the packaged schema ``name`` (``"audit-molecule"`` or ``"audit-molecule.schema.json"``).

    Raises ``FileNotFoundError`` naming the file when there is no such schema in the package.
    """
    filename = name if name.endswith(".json") else f"{name}.schema.json"
    resource = resources.files("ffaudit").joinpath("schemas").joinpath(filename)
    if not resource.is_file():
        raise FileNotFoundError(f"no packaged schema {filename!r} in ffaudit/schemas")
    data: dict[str, Any] = json.loads(resource.read_text(encoding="utf-8"))
    return data


@cache
def _registry() -> Registry[Any]:
    registry: Registry[Any] = Registry()
    for name in SCHEMA_NAMES:
        schema = load_schema(name)
        registry = registry.with_resource(schema["$id"], Resource.from_contents(schema))
    return registry


@cache
def _validator(name: str) -> Draft202012Validator:
    return Draft202012Validator(load_schema(name), registry=_registry())


def iter_molecule_errors(obj: Any) -> Iterator[ValidationError]:
    """Every schema error of the molecule ``obj``, then (if the schema holds) every bookkeeping error."""
    errors = list(_validator(MOLECULE_SCHEMA).iter_errors(obj))
    yield from errors
    if not errors:
        yield from _molecule_errors(obj, ())


def validate_molecule(obj: Any) -> None:
    """Raise :class:`jsonschema.exceptions.ValidationError` (the best match) if ``obj`` is not a valid molecule."""
    _raise_best(iter_molecule_errors(obj))


def iter_report_errors(obj: Any) -> Iterator[ValidationError]:
    """Every schema error of the report document ``obj``, then (if the schema holds) every bookkeeping error."""
    errors = list(_validator(REPORT_SCHEMA).iter_errors(obj))
    yield from errors
    if not errors:
        for position, molecule in enumerate(obj["molecules"]):
            yield from _molecule_errors(molecule, ("molecules", position), obj["terms_mode"])
        yield from _report_errors(obj)


def validate_report(obj: Any) -> None:
    """Raise :class:`jsonschema.exceptions.ValidationError` (the best match) if ``obj`` is not a valid report."""
    _raise_best(iter_report_errors(obj))


def _raise_best(errors: Iterator[ValidationError]) -> None:
    best = jsonschema.exceptions.best_match(errors)
    if best is not None:
        raise best


def _error(message: str, path: tuple[str | int, ...], instance: Any) -> ValidationError:
    return ValidationError(message, validator="ffaudit-bookkeeping", path=path, instance=instance)


def _add_counts(total: dict[str, dict[str, int]], counts: Mapping[str, Mapping[str, int]]) -> None:
    for kind, tiers in counts.items():
        per_kind = total.setdefault(kind, {})
        for tier, n in tiers.items():
            per_kind[tier] = per_kind.get(tier, 0) + n


def _molecule_errors(
    molecule: Mapping[str, Any], where: tuple[str | int, ...], terms_mode: str | None = None
) -> Iterator[ValidationError]:
    """What the molecule schema cannot say: classes per atom, listed terms against counts, the score.

    With ``terms_mode`` (known in a report document) the listed terms must be exactly those of the mode.
    """
    atoms = molecule["atoms"]
    if len(molecule["atom_classes"]) != atoms:
        yield _error(
            f"atom_classes has {len(molecule['atom_classes'])} items for {atoms} atoms",
            (*where, "atom_classes"),
            molecule["atom_classes"],
        )
    counts = molecule["counts"]
    listed: dict[str, dict[str, int]] = {}
    for number, term in enumerate(molecule["terms"]):
        per_kind = listed.setdefault(term["kind"], {})
        per_kind[term["tier"]] = per_kind.get(term["tier"], 0) + 1
        if any(atom >= atoms for atom in term["atoms"]):
            yield _error(
                f"term {number} names atoms {term['atoms']} of a molecule of {atoms} atoms",
                (*where, "terms", number, "atoms"),
                term["atoms"],
            )
    for kind, tiers in listed.items():
        for tier, n in tiers.items():
            counted = counts.get(kind, {}).get(tier, 0)
            if n > counted:
                yield _error(
                    f"{n} {kind} terms of tier {tier} are listed but counts has {counted}",
                    (*where, "counts"),
                    counts,
                )
    if terms_mode is not None:
        expected = {
            kind: {
                tier: n
                for tier, n in tiers.items()
                if n and (terms_mode == "all" or (terms_mode == "problems" and tier != "exact"))
            }
            for kind, tiers in counts.items()
        }
        expected = {kind: tiers for kind, tiers in expected.items() if tiers}
        if listed != expected:
            yield _error(
                f"the listed terms {listed} are not those of terms mode {terms_mode!r} {expected}",
                (*where, "terms"),
                molecule["terms"],
            )
    total = sum(n for tiers in counts.values() for n in tiers.values())
    score = molecule["score"]
    if (score is None) != (total == 0):
        yield _error(
            f"score is {score} for a molecule with {total} terms (null exactly when there are none)",
            (*where, "score"),
            score,
        )
    lowest = min((term["score"] for term in molecule["terms"]), default=None)
    if score is not None and lowest is not None and score > lowest:
        yield _error(
            f"score {score} is above the lowest listed term score {lowest}",
            (*where, "score"),
            score,
        )


def _report_errors(report: Mapping[str, Any]) -> Iterator[ValidationError]:
    molecules = report["molecules"]
    summary = report["summary"]
    records = summary["records"]
    if records != len(molecules):
        yield _error(
            f"summary.records is {records} but the document has {len(molecules)} molecules",
            ("summary", "records"),
            records,
        )
    status_total = sum(summary["status"].values())
    if status_total != records:
        yield _error(
            f"the status counts add up to {status_total}, not to summary.records ({records})",
            ("summary", "status"),
            summary["status"],
        )
    seen_status: dict[str, int] = dict.fromkeys(summary["status"], 0)
    term_total: dict[str, dict[str, int]] = {}
    for position, molecule in enumerate(molecules):
        if molecule["index"] != position:
            yield _error(
                f"molecule {position} has index {molecule['index']} (indices must run 0, 1, 2, ...)",
                ("molecules", position, "index"),
                molecule["index"],
            )
        seen_status[molecule["status"]] += 1
        _add_counts(term_total, molecule["counts"])
    if seen_status != dict(summary["status"]):
        yield _error(
            f"summary.status {dict(summary['status'])} differs from the molecules' statuses {seen_status}",
            ("summary", "status"),
            summary["status"],
        )
    if term_total != {kind: dict(tiers) for kind, tiers in summary["terms"].items()}:
        yield _error(
            "summary.terms differs from the sum of the molecules' counts",
            ("summary", "terms"),
            summary["terms"],
        )
    yield from _score_errors(molecules, summary["score"])
    unreadable = [m["index"] for m in molecules if m["status"] == "unreadable"]
    listed = [u["index"] for u in summary["unreadable"]]
    if listed != unreadable[: len(listed)] or (unreadable and not listed):
        yield _error(
            f"summary.unreadable lists records {listed}, the unreadable molecules are {unreadable}",
            ("summary", "unreadable"),
            summary["unreadable"],
        )


def _score_errors(
    molecules: list[Mapping[str, Any]], score: Mapping[str, Any]
) -> Iterator[ValidationError]:
    scores = sorted(m["score"] for m in molecules if m["score"] is not None)
    low = scores[0] if scores else None
    median = statistics.median(scores) if scores else None
    if score["min"] != low or not _close(score["median"], median):
        yield _error(
            f"summary.score min/median {score['min']}/{score['median']} differ from the molecules' "
            f"{low}/{median}",
            ("summary", "score"),
            score,
        )
    binned = sum(int(b[2]) for b in score["histogram"])
    if score["histogram"] and binned != len(scores):
        yield _error(
            f"the score histogram holds {binned} molecules, {len(scores)} have a score",
            ("summary", "score", "histogram"),
            score["histogram"],
        )


def _close(a: float | None, b: float | None) -> bool:
    if a is None or b is None:
        return a is b
    return math.isclose(a, b, rel_tol=1e-6, abs_tol=1e-9)
