"""Structure lint rules, the registry and the driver.

Fixtures: tests/data/lint/<rule-id>.yaml, one broken set per rule (each says at its top how it was made and
what is wrong), plus two small reference libraries. Expected lines are found by searching the fixture text
(:func:`where`), never by asking the YAML parser, so a wrong position from the loader or a rule fails.
"""

from __future__ import annotations

import shutil
import textwrap
import types
from pathlib import Path

import pytest

from ffaudit.errors import UsageError
from ffaudit.findings import Finding, Severity
from ffaudit.lint import driver as driver_module
from ffaudit.lint.driver import (
    LintFailed,
    iter_lint_findings,
    lint,
    lint_is_clean,
    raise_for_lint_errors,
)
from ffaudit.lint.registry import (
    FALLBACK_RULE,
    RuleModuleError,
    _rule_from_module,
    all_rules,
    default_preset,
    get_rule,
    rule_for_load_code,
)
from ffaudit.lint.rules.wildcard_tie import overlap
from ffaudit.paramset.load import embedded_set_path

ROOT = Path(__file__).resolve().parents[1]
LINT = Path(__file__).parent / "data" / "lint"
SMALL_REFERENCE = LINT / "reference-small.smi"
SHIPPED_REFERENCE = ROOT / "sample_sets" / "reference" / "generic-organic-reference.smi"
DEFAULT = embedded_set_path("generic-organic")
STRUCTURE = [r.id for r in all_rules() if r.family == "structure"]


def where(path: Path, needle: str, occurrence: int = 1) -> tuple[int, int]:
    """1-based (line, column) of the n-th occurrence of ``needle`` outside comment lines."""
    seen = 0
    for number, line in enumerate(path.read_text(encoding="utf-8").splitlines(), start=1):
        if line.lstrip().startswith("#"):
            continue
        start = 0
        while (col := line.find(needle, start)) >= 0:
            seen += 1
            if seen == occurrence:
                return number, col + 1
            start = col + 1
    raise AssertionError(f"{needle!r} (occurrence {occurrence}) not in {path}")


def of_rule(findings: list[Finding] | tuple[Finding, ...], rule: str) -> list[Finding]:
    return [f for f in findings if f.rule == rule]


# -- one broken set per rule -------------------------------------------------------------------------

# (rule, reference library or None, finding code, needle marking the expected line and column,
#  occurrence of the needle, severity)
CASES = [
    ("schema", None, "schema", "stiff", 1, Severity.ERROR),
    ("yaml-duplicate-key", None, "duplicate-key", "k: 650.0", 1, Severity.ERROR),
    ("unknown-reference", None, "unknown-class", "hc]", 1, Severity.ERROR),
    ("unknown-reference", None, "unknown-source", "crc2005", 1, Severity.ERROR),
    ("parent-cycle", None, "parent-cycle", "c}", 1, Severity.ERROR),
    ("invalid-smarts", None, "invalid-smarts", '"[OX2"', 1, Severity.ERROR),
    ("duplicate-entry", None, "duplicate-entry", "- classes: [o2, c4, c4, h_c]", 1, Severity.ERROR),
    ("wildcard-tie", None, "wildcard-tie", "- classes: [h_c, c4, c4", 1, Severity.WARNING),
    ("shadowed-class", None, "shadowed-class", '"[C;X3]"', 1, Severity.WARNING),
    ("shadowed-class", SMALL_REFERENCE, "shadowed-class", "id: o1", 1, Severity.WARNING),
    ("unused-class", SMALL_REFERENCE, "unused-class", "id: n3", 1, Severity.INFO),
    ("unused-entry", SMALL_REFERENCE, "unused-entry", "- classes: [o2, o2]", 1, Severity.INFO),
]


@pytest.mark.parametrize(
    ("rule", "reference", "code", "needle", "occurrence", "severity"),
    CASES,
    ids=[f"{c[0]}-{c[2]}-{'ref' if c[1] else 'noref'}" for c in CASES],
)
def test_rule_triggers_at_the_right_line(
    rule: str, reference: Path | None, code: str, needle: str, occurrence: int, severity: Severity
) -> None:
    fixture = LINT / f"{rule}.yaml"
    result = lint(str(fixture), reference=str(reference) if reference else None)
    line, column = where(fixture, needle, occurrence)
    hits = [f for f in of_rule(result.findings, rule) if f.code == code and f.line == line]
    assert hits, [f.format() for f in result.findings]
    finding = hits[0]
    assert finding.path == str(fixture)
    assert finding.severity == severity
    assert finding.hint, "every finding carries a fix hint"
    if rule not in (
        "wildcard-tie",
        "duplicate-entry",
        "unused-entry",
        "shadowed-class",
        "unused-class",
    ):
        assert finding.column == column  # field-level findings point at the value itself


def test_each_structure_fixture_fires_only_its_own_rule() -> None:
    for rule in STRUCTURE:
        fixture = LINT / f"{rule}.yaml"
        assert fixture.is_file(), f"no broken set for rule {rule}"
        reference = None
        if get_rule(rule).needs_reference:
            unreadable = rule == "reference-unreadable"
            reference = str(LINT / "reference-unreadable.smi" if unreadable else SMALL_REFERENCE)
        result = lint(str(fixture), reference=reference, enable_only=STRUCTURE)
        fired = {f.rule for f in result.findings}
        assert rule in fired, (rule, [f.format() for f in result.findings])
        assert fired == {rule}, (rule, [f.format() for f in result.findings])


def test_reference_unreadable_points_at_the_record_line() -> None:
    library = LINT / "reference-unreadable.smi"
    result = lint(str(LINT / "reference-unreadable.yaml"), reference=str(library))
    (finding,) = of_rule(result.findings, "reference-unreadable")
    assert (finding.path, finding.line, finding.record) == (
        str(library),
        where(library, "C1CC")[0],
        2,
    )
    assert finding.molecule == "ring-never-closed"
    assert "unclosed ring" in finding.message  # RDKit's own reason is quoted
    assert result.reference == {"path": str(library), "records": 3, "unreadable": 1}


def test_wildcard_tie_message_names_both_lines_and_the_winner() -> None:
    fixture = LINT / "wildcard-tie.yaml"
    (finding,) = of_rule(lint(str(fixture)).findings, "wildcard-tie")
    first = where(fixture, '- classes: ["*", c4, c4, o2]')[0]
    second = where(fixture, "- classes: [h_c, c4, c4")[0]
    assert f"(line {first})" in finding.message and f"(line {second})" in finding.message
    assert "[h_c, c4, c4, o2]" in finding.message  # the tuple both match
    # the out-of-plane pair overlaps too, but [c4, h_c, o2, *] decides it: one finding only


@pytest.mark.parametrize(
    ("kind", "a", "b", "expected"),
    [
        # the docstring's example: one wildcard at each end meet in the full tuple
        (
            "dihedral",
            ("*", "c4", "c4", "o2"),
            ("h_c", "c4", "c4", "*"),
            [("h_c", "c4", "c4", "o2")],
        ),
        # reversal: (*, b, c, d) against (d, c, b, *) written the other way round
        (
            "dihedral",
            ("*", "c3", "c4", "o2"),
            ("*", "c4", "c3", "h_c"),
            [("h_c", "c3", "c4", "o2")],
        ),
        # different central bonds never overlap
        ("dihedral", ("*", "c4", "c4", "o2"), ("*", "c4", "o2", "*"), []),
        # out-of-plane: outer classes are a multiset; [x, *, *] and [y, *, *] meet in [x, y, *]
        (
            "out_of_plane",
            ("c3", "*", "*", "h_c"),
            ("c3", "*", "*", "o1"),
            [("c3", "*", "h_c", "o1")],
        ),
        # ... but not when together they need four outer atoms
        ("out_of_plane", ("c3", "*", "o1", "o1"), ("c3", "*", "h_c", "h_c"), []),
        ("out_of_plane", ("c3", "*", "*", "h_c"), ("n3", "*", "*", "h_c"), []),
    ],
)
def test_overlap_of_wildcard_patterns(
    kind: str, a: tuple[str, ...], b: tuple[str, ...], expected: list[tuple[str, ...]]
) -> None:
    assert overlap(kind, a, b) == expected
    assert overlap(kind, b, a) == expected


def test_shadowed_class_with_reference_names_the_rule_that_takes_the_atoms() -> None:
    fixture = LINT / "shadowed-class.yaml"
    found = of_rule(lint(str(fixture), reference=str(SMALL_REFERENCE)).findings, "shadowed-class")
    by_line = {f.line: f for f in found}
    o1 = by_line[where(fixture, "id: o1")[0]]
    assert "never chosen on the reference library" in o1.message
    assert "o (1)" in o1.message  # acetaldehyde's carbonyl O, taken by the general class o
    # c3o is reported once, as an identical pattern, not again from the library
    assert len([f for f in found if "c3o" in f.message]) == 1


def test_unused_class_mentions_children() -> None:
    fixture = LINT / "unused-class.yaml"
    found = of_rule(lint(str(fixture), reference=str(SMALL_REFERENCE)).findings, "unused-class")
    o2 = [f for f in found if f.line == where(fixture, "id: o2,")[0]]
    assert o2 and "parent of o2h" in o2[0].message
    assert {f.line for f in found} == {where(fixture, "id: o2,")[0], where(fixture, "id: n3")[0]}


# -- the default set and its shipped reference library -----------------------------------------------


def test_default_set_lints_without_errors() -> None:
    result = lint("generic-organic")
    assert not result.has_errors(), [
        f.format() for f in result.findings if f.severity >= Severity.ERROR
    ]
    assert result.parameter_sets[0]["name"] == "generic-organic"


def test_default_set_with_its_reference_library() -> None:
    result = lint("generic-organic", reference=str(SHIPPED_REFERENCE))
    assert not result.has_errors(), [
        f.format() for f in result.findings if f.severity >= Severity.ERROR
    ]
    assert result.reference == {"path": str(SHIPPED_REFERENCE), "records": 39, "unreadable": 0}
    # the shipped library assigns every class of the default set (measured: all 34)
    structure = {f.rule for f in result.findings}
    assert "unused-class" not in structure and "shadowed-class" not in structure
    assert "reference-unreadable" not in structure
    assert len(of_rule(result.findings, "unused-entry")) < 60  # measured 30 of ~270 entries
    assert all(f.severity == Severity.INFO for f in of_rule(result.findings, "unused-entry"))
    names = [line.split()[1] for line in SHIPPED_REFERENCE.read_text().splitlines()[1:]]
    assert len(names) == len(set(names)) == 39  # stable, unique names: CI output refers to them


# -- docstring examples: Passing is clean, Failing fires --------------------------------------------

_HEADER = """\
format: ffaudit-parameter-set/1
header:
  name: docstring-example
  version: "1"
  units: {length: angstrom, angle: degree, energy: kcal/mol}
  conventions: {bond: half, angle: half, out_of_plane: half, dihedral: full}
"""
_CLASSES = """\
classes:
  - {id: h_c, element: H, smarts: ["[#1][#6]"]}
  - {id: h_o, element: H, smarts: ["[#1][#8]"]}
  - {id: c4, element: C, smarts: ["[CX4]"]}
  - {id: o2, element: O, smarts: ["[OX2]"]}
"""


def _example_files(tmp_path: Path, rule_id: str, label: str) -> tuple[Path, Path | None]:
    rule = get_rule(rule_id)
    block = rule.passing if label == "Passing" else rule.failing
    if rule.example_language != "yaml":  # reference-unreadable: the example is a SMILES library
        library = tmp_path / f"{label}.smi"
        library.write_text(block + "\n", encoding="utf-8")
        return LINT / "reference-unreadable.yaml", library
    library = None
    lines = block.splitlines()
    if lines and lines[0].startswith("# reference library (SMILES):"):
        smiles = [s.strip() for s in lines[0].split(":", 1)[1].split(",")]
        library = tmp_path / f"{label}.smi"
        library.write_text(
            "".join(f"{s} m{i}\n" for i, s in enumerate(smiles, 1)), encoding="utf-8"
        )
    text = _HEADER + ("" if "\nclasses:" in "\n" + block else _CLASSES) + block + "\n"
    path = tmp_path / f"{label}.yaml"
    path.write_text(text, encoding="utf-8")
    return path, library


@pytest.mark.parametrize("rule_id", STRUCTURE)
def test_docstring_examples(tmp_path: Path, rule_id: str) -> None:
    for label, fires in (("Passing", False), ("Failing", True)):
        path, library = _example_files(tmp_path, rule_id, label)
        result = lint(str(path), reference=str(library) if library else None, enable_only=[rule_id])
        hits = of_rule(result.findings, rule_id)
        assert bool(hits) == fires, (rule_id, label, [f.format() for f in result.findings])
        others = [f for f in result.findings if f.rule != rule_id]
        assert not others, (rule_id, label, [f.format() for f in others])


# -- registry -----------------------------------------------------------------------------------------


def test_registry_matches_the_modules_and_the_preset() -> None:
    modules = {
        p.stem for p in (ROOT / "src/ffaudit/lint/rules").glob("*.py") if p.stem != "__init__"
    }
    ids = [r.id for r in all_rules()]
    assert {i.replace("-", "_") for i in ids} == modules
    assert list(default_preset()) == ids
    from ffaudit.lint import registry

    assert default_preset() == registry.DEFAULT_PRESET
    for rule in all_rules():
        assert rule.summary and rule.passing and rule.failing
        assert dict(default_preset()[rule.id]) == dict(rule.options)


def test_every_documented_loader_code_belongs_to_a_rule() -> None:
    # the "Finding codes" table of docs/parameter-set-format.md lists every code the loader produces
    text = (ROOT / "docs" / "parameter-set-format.md").read_text(encoding="utf-8")
    table = text.split("## Finding codes", 1)[1]
    codes = [line.split("`")[1] for line in table.splitlines() if line.startswith("| `")]
    assert len(codes) >= 20
    claimed = {code for r in all_rules() for code in r.load_codes}
    assert set(codes) <= claimed, sorted(set(codes) - claimed)
    assert rule_for_load_code("duplicate-key") == "yaml-duplicate-key"
    assert rule_for_load_code("no-such-code") == FALLBACK_RULE


def _module(name: str, **attributes: object) -> types.ModuleType:
    module = types.ModuleType(f"ffaudit.lint.rules.{name}")
    module.__doc__ = attributes.pop(
        "__doc__", "Summary.\n\nPassing:\n\n    a: 1\n\nFailing:\n\n    a: 2\n"
    )  # type: ignore[assignment]
    for key, value in attributes.items():
        setattr(module, key, value)
    return module


def test_malformed_rule_modules_are_refused() -> None:
    good = {
        "ID": "some-rule",
        "SEVERITY": Severity.WARNING,
        "FAMILY": "structure",
        "check": lambda c, o: iter(()),
    }
    assert _rule_from_module("some_rule", _module("some_rule", **good)).id == "some-rule"
    bad = [
        ({**good, "ID": "Some_Rule"}, "kebab-case"),
        ({**good, "ID": "other-rule"}, "does not match the module name"),
        ({**good, "SEVERITY": "warning"}, "Severity"),
        ({**good, "FAMILY": "style"}, "FAMILY"),
        ({k: v for k, v in good.items() if k != "check"}, "does not define check"),
        ({**good, "NEEDS_REFERENCE": "yes"}, "NEEDS_REFERENCE"),
        ({**good, "__doc__": "Summary only."}, "Passing:"),
    ]
    for attributes, message in bad:
        with pytest.raises(RuleModuleError, match=message):
            _rule_from_module("some_rule", _module("some_rule", **attributes))


# -- driver --------------------------------------------------------------------------------------------


def test_header_disable_suppresses_and_is_counted(tmp_path: Path) -> None:
    text = (LINT / "wildcard-tie.yaml").read_text(encoding="utf-8")
    text = text.replace(
        '  version: "1"\n',
        '  version: "1"\n  lint:\n    disable: [wildcard-tie, schema, nonsense]\n',
    )
    path = tmp_path / "tie.yaml"
    path.write_text(text, encoding="utf-8")
    result = lint(str(path))
    assert not of_rule(result.findings, "wildcard-tie")
    assert result.suppressed == (("wildcard-tie", 1),)
    codes = {f.code: f for f in of_rule(result.findings, "schema")}
    assert codes["required-lint-rule"].line == where(path, "schema,")[0]
    assert codes["unknown-lint-rule"].severity == Severity.WARNING
    assert "nonsense" in codes["unknown-lint-rule"].message


def test_layered_findings_are_located_in_their_own_file(tmp_path: Path) -> None:
    base = LINT / "wildcard-tie.yaml"
    overlay = tmp_path / "overlay.yaml"
    overlay.write_text(
        _HEADER.replace("docstring-example", "overlay")
        + 'classes:\n  - {id: c4x, element: C, smarts: ["[CX4]"]}\n',
        encoding="utf-8",
    )
    result = lint([str(base), str(overlay)])
    assert result.sources == (str(base), str(overlay))
    tie = of_rule(result.findings, "wildcard-tie")
    assert [f.path for f in tie] == [str(base)]
    (shadow,) = of_rule(
        result.findings, "shadowed-class"
    )  # c4x repeats c4's pattern, in the overlay
    assert (shadow.path, shadow.line) == (str(overlay), where(overlay, '"[CX4]"')[0])
    assert "pattern 1 of class 'c4'" in shadow.message and "(line" not in shadow.message
    # findings sorted in layer order
    assert [f.path for f in result.findings] == sorted(
        (f.path for f in result.findings), key=lambda p: result.sources.index(p)
    )


def test_rules_needing_what_is_missing_are_skipped_with_a_reason() -> None:
    result = lint(str(LINT / "schema.yaml"), reference=str(SMALL_REFERENCE))
    skipped = dict(result.skipped)
    assert skipped["wildcard-tie"] == "the set has load errors"
    assert skipped["unused-class"] == "the set has load errors"
    assert result.reference is None
    clean = lint("generic-organic")
    assert "needs a reference library" in dict(clean.skipped)["unused-entry"]


def test_selection_and_options_are_checked() -> None:
    with pytest.raises(UsageError, match="unknown lint rule"):
        lint("generic-organic", disable=["no-such-rule"])
    with pytest.raises(UsageError, match="cannot be disabled"):
        lint("generic-organic", disable=["schema"])
    with pytest.raises(UsageError, match="has no option"):
        lint("generic-organic", options={"wildcard-tie": {"x": 1}})
    only = lint("generic-organic", enable_only=["wildcard-tie"])
    assert {r.id for r in only.rules} == {"wildcard-tie"} | {
        r.id for r in all_rules() if r.required
    }
    assert "bond-wavenumber" in only.disabled


def test_missing_set_file_is_a_finding_not_an_exception(tmp_path: Path) -> None:
    result = lint(str(tmp_path / "absent.yaml"))
    assert [f.code for f in result.unreadable_sources] == ["missing-file"]
    assert result.findings[0].rule == "schema"


def test_severity_stamping_and_a_failing_rule(monkeypatch: pytest.MonkeyPatch) -> None:
    rule = get_rule("wildcard-tie")

    def chosen(ctx, options):  # type: ignore[no-untyped-def]
        yield ctx.finding("wildcard-tie", "left to the driver", ("header",))
        yield ctx.finding("wildcard-tie", "chosen", ("header",), severity=Severity.INFO)

    monkeypatch.setattr(rule.module, "check", chosen)
    monkeypatch.setattr(rule.module, "SEVERITY", Severity.ERROR)
    monkeypatch.setattr(
        driver_module,
        "all_rules",
        lambda: tuple(
            r if r.id != "wildcard-tie" else type(r)(**{**r.__dict__, "severity": Severity.ERROR})
            for r in all_rules()
        ),
    )
    found = {
        f.message: f.severity for f in of_rule(lint("generic-organic").findings, "wildcard-tie")
    }
    assert found == {"left to the driver": Severity.ERROR, "chosen": Severity.INFO}

    def broken(ctx, options):  # type: ignore[no-untyped-def]
        raise RuntimeError("boom")
        yield

    monkeypatch.setattr(rule.module, "check", broken)
    result = lint("generic-organic")
    (failed,) = [f for f in result.findings if f.code == "rule-failed"]
    assert failed.rule == "wildcard-tie" and "RuntimeError: boom" in failed.message
    assert result.has_errors()
    assert of_rule(result.findings, "bond-wavenumber"), "the other rules still ran"


def test_entry_points() -> None:
    broken = str(LINT / "parent-cycle.yaml")
    assert lint_is_clean("generic-organic")
    assert not lint_is_clean(broken)
    with pytest.raises(LintFailed, match="parent-cycle"):
        raise_for_lint_errors(broken)
    assert raise_for_lint_errors("generic-organic").sources == ("embedded:generic-organic",)
    assert [f.rule for f in iter_lint_findings(broken)] == ["parent-cycle"]


def test_result_policy_and_counts() -> None:
    result = lint(str(LINT / "wildcard-tie.yaml"))
    assert result.counts() == {"error": 0, "warning": 1, "info": 0}
    assert result.worst == Severity.WARNING
    assert not result.fails() and result.fails(strict=True)


def test_fixture_copies_are_independent_of_the_path(tmp_path: Path) -> None:
    copy = tmp_path / "elsewhere.yaml"
    shutil.copy(LINT / "duplicate-entry.yaml", copy)
    (finding,) = lint(str(copy)).findings
    assert (
        finding.path == str(copy) and finding.line == where(copy, "- classes: [o2, c4, c4, h_c]")[0]
    )
    assert textwrap.dedent(finding.message).startswith(
        "dihedral [h_c, c4, c4, o2] is defined again"
    )


def test_registry_docs_and_preset_list_the_same_rules() -> None:
    import importlib.util
    import re

    spec = importlib.util.spec_from_file_location(
        "make_lint_docs", ROOT / "tools" / "make_lint_docs.py"
    )
    assert spec is not None and spec.loader is not None
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    committed = (ROOT / "docs" / "lint-rules.md").read_text(encoding="utf-8")
    documented = re.findall(r"^### `([a-z0-9-]+)`$", committed, flags=re.MULTILINE)
    registered = [r.id for r in all_rules()]
    assert sorted(documented) == sorted(registered) == sorted(default_preset())
    assert committed == module.render(), (
        "docs/lint-rules.md is stale: run python tools/make_lint_docs.py"
    )
