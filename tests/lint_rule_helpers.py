"""Helpers for the physics and torsion lint-rule tests: build a LintContext, run one rule module."""

from __future__ import annotations

import dataclasses
import textwrap
from collections.abc import Callable, Sequence
from pathlib import Path
from types import ModuleType
from typing import Any

import yaml

from ffaudit.audit import MoleculeAudit, audit_molecule
from ffaudit.findings import Finding
from ffaudit.lint.context import LintContext
from ffaudit.paramset.load import load_parameter_set
from ffaudit.paramset.model import Entry, ParameterSet
from ffaudit.paramset.yamlload import read_yaml

LINT_DATA = Path(__file__).parent / "data" / "lint"


def context(path: Path | str, reference_smiles: Sequence[str] | None = None) -> LintContext:
    """A context for the set file ``path`` (loaded; reference audits of ``reference_smiles`` if given)."""
    shown = str(path)
    pset = load_parameter_set(shown)
    reference: list[MoleculeAudit] | None = None
    if reference_smiles is not None:
        reference = [audit_molecule(s, pset) for s in reference_smiles]
    return LintContext(shown, read_yaml(shown), pset, reference)


def text_context(tmp_path: Path, text: str, name: str = "set.yaml") -> LintContext:
    """A context for a set written from ``text`` into ``tmp_path``."""
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return context(path)


def patched_context(
    path: Path, loadable_text: str, tmp_path: Path, patch: Callable[[Entry], Entry]
) -> LintContext:
    """A context whose document is ``path`` as written but whose set is loaded from ``loadable_text``
    (the same file with a value the schema refuses made acceptable, same line layout) and then patched
    entry by entry with ``patch`` - a set that a laxer schema or code could have built.

    Findings carry the original file's path and lines.
    """
    copy = tmp_path / path.name
    copy.write_text(loadable_text, encoding="utf-8")
    loaded = load_parameter_set(str(copy))
    tables = {
        kind: {
            key: dataclasses.replace(
                patch(entry), location=dataclasses.replace(entry.location, path=str(path))
            )
            for key, entry in table.items()
        }
        for kind, table in loaded.tables.items()
    }
    pset: ParameterSet = dataclasses.replace(loaded, tables=tables)
    return LintContext(str(path), read_yaml(str(path)), pset)


def run(module: ModuleType, ctx: LintContext, **options: Any) -> list[Finding]:
    """All findings of one rule module with its default options updated by ``options``."""
    merged = dict(module.OPTIONS)
    merged.update(options)
    return list(module.check(ctx, merged))


def line_of(path: Path, needle: str) -> int:
    """1-based number of the only line of ``path`` containing ``needle`` (asserts it is unique)."""
    lines = [
        i
        for i, text in enumerate(path.read_text(encoding="utf-8").splitlines(), 1)
        if needle in text
    ]
    assert len(lines) == 1, f"{needle!r} on lines {lines} of {path}"
    return lines[0]


_EXAMPLE_CLASSES = [
    {"id": "h_c", "element": "H", "smarts": ["[#1][#6]"]},
    {"id": "c3", "element": "C", "smarts": ["[CX3]=[CX3]"]},
    {"id": "c4", "element": "C", "smarts": ["[CX4]"]},
    {"id": "n3", "element": "N", "smarts": ["[NX3]"]},
    {"id": "o2", "element": "O", "smarts": ["[OX2]"]},
]


def docstring_example(module: ModuleType, label: str) -> dict[str, Any]:
    """The YAML block after ``label`` ("Passing:" / "Failing:") in a rule module's docstring."""
    doc = module.__doc__ or ""
    assert f"\n{label}\n" in doc, f"{module.__name__} has no {label} example"
    block = doc.split(f"\n{label}\n", 1)[1]
    lines: list[str] = []
    for line in block.splitlines():
        if line.strip() and not line.startswith("    "):
            break  # the next unindented paragraph ends the block
        lines.append(line)
    data = yaml.safe_load(textwrap.dedent("\n".join(lines)))
    assert isinstance(data, dict)
    return data


def example_context(tmp_path: Path, module: ModuleType, label: str) -> LintContext:
    """A context for a minimal set holding the tables of a docstring example (its header is ignored)."""
    data: dict[str, Any] = {
        "format": "ffaudit-parameter-set/1",
        "header": {
            "name": "docstring-example",
            "version": "1",
            "units": {"length": "angstrom", "angle": "degree", "energy": "kcal/mol"},
            "conventions": {
                "bond": "half",
                "angle": "half",
                "out_of_plane": "half",
                "dihedral": "full",
            },
        },
        "classes": _EXAMPLE_CLASSES,
    }
    data.update({k: v for k, v in docstring_example(module, label).items() if k != "header"})
    path = tmp_path / f"{module.ID}-{label.rstrip(':').lower()}.yaml"
    path.write_text(yaml.safe_dump(data, sort_keys=False), encoding="utf-8")
    ctx = context(path)
    ctx.reference = []
    return ctx
