"""Torsion lint rules: each against its broken set, the default set, and the reference-library case."""

from __future__ import annotations

import dataclasses
from pathlib import Path

import pytest

from ffaudit.findings import Severity
from ffaudit.lint.rules import (
    torsion_double_bond_odd,
    torsion_duplicate_periodicity,
    torsion_periodicity,
    torsion_phase,
    torsion_sp3_threefold,
)
from ffaudit.paramset.load import embedded_set_path
from ffaudit.paramset.model import Entry, FourierTerm
from lint_rule_helpers import (
    LINT_DATA,
    context,
    docstring_example,
    example_context,
    line_of,
    patched_context,
    run,
    text_context,
)

TORSION = (
    torsion_double_bond_odd,
    torsion_duplicate_periodicity,
    torsion_periodicity,
    torsion_phase,
    torsion_sp3_threefold,
)

# Reference molecules for the double-bond rule: 2-butene, ethene (central C=C double in RDKit) and
# butane (no c3 atoms), SMILES written for this test.
REFERENCE = ("CC=CC", "C=C", "CCCC")


@pytest.mark.parametrize(
    ("module", "needle", "severity"),
    [
        (torsion_phase, "phase: 90", Severity.WARNING),
        (torsion_duplicate_periodicity, "k: 0.05}", Severity.WARNING),
        (torsion_sp3_threefold, "k: 0.15}]", Severity.INFO),
        (torsion_double_bond_odd, "k: 4.9}]", Severity.WARNING),
    ],
)
def test_broken_set_flagged_at_its_line(module: object, needle: str, severity: Severity) -> None:
    path = LINT_DATA / f"{module.ID}.yaml"  # type: ignore[attr-defined]
    ctx = context(path, REFERENCE)
    findings = run(module, ctx)  # type: ignore[arg-type]
    assert [(f.code, f.line) for f in findings] == [(module.ID, line_of(path, needle))]  # type: ignore[attr-defined]
    assert findings[0].severity == severity == module.SEVERITY  # type: ignore[attr-defined]


def test_periodicity_out_of_range_at_its_line(tmp_path: Path) -> None:
    # The schema refuses periodicity 7; the rule covers sets built without it (a laxer schema, code).
    path = LINT_DATA / "torsion-periodicity.yaml"
    text = path.read_text(encoding="utf-8").replace("periodicity: 7", "periodicity: 6")

    def seven(entry: Entry) -> Entry:
        if entry.kind != "dihedral":
            return entry
        terms = tuple(
            FourierTerm(7, t.phase, t.k) if t.periodicity == 6 else t for t in entry.fourier
        )
        return dataclasses.replace(entry, fourier=terms)

    findings = run(torsion_periodicity, patched_context(path, text, tmp_path, seven))
    assert [(f.code, f.line, f.severity) for f in findings] == [
        ("torsion-periodicity", line_of(path, "periodicity: 7"), Severity.ERROR)
    ]
    assert findings[0].doc_path == ("dihedrals", 0, "terms", 1, "periodicity")


def test_phase_marker_and_equivalent_phases(tmp_path: Path) -> None:
    path = LINT_DATA / "torsion-phase.yaml"
    # the 35-degree phase of the entry with the "free phase" note is not reported
    assert all(f.doc_path[1] == 1 for f in run(torsion_phase, context(path)))
    text = path.read_text(encoding="utf-8").replace("phase: 90", "phase: -180")
    assert run(torsion_phase, text_context(tmp_path, text)) == []
    unmarked = text.replace('note: "free phase: fitted to an asymmetric scan"', 'note: "fitted"')
    assert len(run(torsion_phase, text_context(tmp_path, unmarked, "unmarked.yaml"))) == 1
    assert torsion_phase.is_symmetric_phase(359.999, 0.01)
    assert not torsion_phase.is_symmetric_phase(60.0, 0.01)


def test_double_bond_rule_needs_evidence(tmp_path: Path) -> None:
    path = LINT_DATA / "torsion-double-bond-odd.yaml"
    # without reference molecules showing the bond double (butane only), the unqualified entry passes
    assert run(torsion_double_bond_odd, context(path, ("CCCC",))) == []
    # the order qualifier alone is evidence
    text = path.read_text(encoding="utf-8").replace(
        '  - classes: ["*", c3, c3, "*"]\n', '  - classes: ["*", c3, c3, "*"]\n    order: double\n'
    )
    findings = run(torsion_double_bond_odd, text_context(tmp_path, text))
    assert len(findings) == 1 and "order qualifier" in findings[0].message
    # a mixed series (n = 2 barrier plus n = 1) passes unless any_odd is set
    mixed = text.replace(
        "terms: [{periodicity: 3, phase: 0, k: 4.9}]",
        "terms: [{periodicity: 2, phase: 180, k: 4.9}, {periodicity: 1, phase: 0, k: 0.3}]",
    )
    ctx = text_context(tmp_path, mixed, "mixed.yaml")
    assert run(torsion_double_bond_odd, ctx) == []
    assert len(run(torsion_double_bond_odd, ctx, any_odd=True)) == 1


def test_default_set_lints_clean_under_torsion_rules() -> None:
    # Reference: a few small molecules with single, double and aromatic central bonds.
    ctx = context(
        embedded_set_path("generic-organic"), ("CC=CC", "CCCC", "Cc1ccccc1", "CC(=O)OC", "CCO")
    )
    findings = [f for module in TORSION for f in run(module, ctx)]
    assert findings == []


@pytest.mark.parametrize("module", TORSION, ids=lambda m: m.ID)
def test_docstring_examples(tmp_path: Path, module: object) -> None:
    # The docs are generated from these examples: the passing one must pass and the failing one fail.
    # The schema refuses periodicity 7, so that rule's failing example cannot load as a set.
    assert run(module, example_context(tmp_path, module, "Passing:")) == []  # type: ignore[arg-type]
    if module is torsion_periodicity:
        assert docstring_example(module, "Failing:")["dihedrals"][0]["terms"][0]["periodicity"] == 7
        return
    failing = run(module, example_context(tmp_path, module, "Failing:"))  # type: ignore[arg-type]
    assert failing and {f.code for f in failing} == {module.ID}  # type: ignore[attr-defined]
