"""The real driver's output against the schemas: ffaudit.audit builds molecule dicts and the summary for a few
RDKit molecules, the JSON and JSONL reporters write them, and the result must validate (schema and
bookkeeping) in every terms mode. Catches drift between the driver and the documented output contract.

The parameter set is built here in memory with made-up values (not parameters to rely on): enough classes
and entries that ethanol and ethane get exact and wildcard terms, the rest falling to whatever later tiers
the driver enables (analogy, estimate, or missing), and methylphosphine gets atoms with no class.
"""

from __future__ import annotations

import io
import json

import pytest
from rdkit import Chem

from ffaudit.audit import AuditContext, Summary, cautions_for, parameter_set_info
from ffaudit.paramset.model import (
    KINDS,
    Entry,
    EnvClass,
    FourierTerm,
    Header,
    ParameterSet,
    SourceLocation,
    TableKey,
)
from ffaudit.read.record import Record
from ffaudit.report.base import make_reporter
from ffaudit.report.schemas import iter_molecule_errors, iter_report_errors


def _entry(
    kind: str,
    classes: tuple[str, ...],
    form: str,
    values: dict[str, float],
    fourier: tuple[FourierTerm, ...] = (),
) -> Entry:
    location = SourceLocation("made-up.yaml", 10)
    return Entry(kind, classes, form, values, location, source="made-up", fourier=fourier)


@pytest.fixture(scope="module")
def pset() -> ParameterSet:
    classes = (
        EnvClass("c4", "C", ("[CX4]",)),
        EnvClass("h_c", "H", ("[#1][#6]",)),
        EnvClass("o2h", "O", ("[OX2H]",)),
        EnvClass("h_o", "H", ("[#1][#8]",)),
        EnvClass("n3", "N", ("[NX3]",)),  # never assigned in these molecules
    )
    entries = [
        _entry("bond", ("c4", "c4"), "harmonic", {"k": 600.0, "r0": 1.53}),
        _entry("bond", ("c4", "h_c"), "harmonic", {"k": 660.0, "r0": 1.09}),
        _entry("bond", ("c4", "o2h"), "harmonic", {"k": 700.0, "r0": 1.42}),
        _entry("bond", ("h_o", "o2h"), "harmonic", {"k": 1100.0, "r0": 0.96}),
        _entry("angle", ("h_c", "c4", "h_c"), "harmonic", {"k": 70.0, "theta0": 109.5}),
        _entry(
            "dihedral", ("*", "c4", "c4", "*"), "fourier", {}, fourier=(FourierTerm(3, 0.0, 0.15),)
        ),
        _entry("nonbonded", ("c4",), "lennard_jones", {"rmin_half": 1.9, "epsilon": 0.1}),
        _entry("nonbonded", ("h_c",), "lennard_jones", {"rmin_half": 1.3, "epsilon": 0.02}),
    ]
    tables: dict[str, dict[TableKey, Entry]] = {kind: {} for kind in KINDS}
    for entry in entries:
        tables[entry.kind][entry.key] = entry
    header = Header("contract-test", "0.0.1", demonstration=True)
    return ParameterSet(header, {}, classes, tables, ("made-up.yaml",), "0" * 64)


def _records() -> list[Record]:
    smiles = [("ethanol", "CCO"), ("broken", None), ("ethane", "CC"), ("methylphosphine", "CP")]
    return [
        Record(
            i,
            "t.smi",
            i + 1,
            i + 1,
            name,
            Chem.MolFromSmiles(s) if s else None,
            None if s else "bad",
        )
        for i, (name, s) in enumerate(smiles)
    ]


@pytest.mark.parametrize("mode", ["all", "problems", "none"])
def test_driver_output_validates(pset: ParameterSet, mode: str) -> None:
    context = AuditContext(pset)
    summary = Summary(pset)
    run = {
        "parameter_set": parameter_set_info(pset),
        "cautions": cautions_for(pset),
        "terms_mode": mode,
    }
    document, lines = io.StringIO(), io.StringIO()
    reporters = [make_reporter("json", document), make_reporter("jsonl", lines)]
    for reporter in reporters:
        reporter.start(run)
    for record in _records():
        audit = context.audit_record(record)
        summary.add(audit)
        for reporter in reporters:
            reporter.add(audit.to_dict(pset, mode))
    for reporter in reporters:
        reporter.finish(summary.to_dict())

    doc = json.loads(document.getvalue())
    assert [e.message for e in iter_report_errors(doc)] == []
    molecules = [json.loads(line) for line in lines.getvalue().splitlines()]
    assert molecules == doc["molecules"]
    for molecule in molecules:
        assert [e.message for e in iter_molecule_errors(molecule)] == []
    # The molecules exercise several statuses and tiers, so the check is not vacuous.
    statuses = {m["status"] for m in molecules}
    assert "unreadable" in statuses and len(statuses) >= 2, statuses
    tiers = {
        tier for m in molecules for kind in m["counts"].values() for tier, n in kind.items() if n
    }
    assert {"exact", "wildcard"} <= tiers and len(tiers) >= 3, tiers
