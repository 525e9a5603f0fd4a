"""Machine outputs for findings: JSON (our schema), SARIF 2.1.0 (the official schema), JUnit XML (the
junit-10 schema), and the table renderer (gold file).

The SARIF and JUnit schemas are read from ../shared/reference/ relative to the repository root (see its
README); the tests that need them skip, saying so, where that folder is absent. JUnit validation needs an
XML Schema validator (lxml or xmlschema): without one installed the validation test skips with that reason,
and the structural checks below still run.
"""

from __future__ import annotations

import importlib.util
import io
import json
import os
import xml.etree.ElementTree as ET
from pathlib import Path

import pytest
from jsonschema import Draft4Validator, Draft202012Validator

from ffaudit.findings import Finding, Severity
from ffaudit.lint.driver import lint
from ffaudit.report.findings_json import findings_document, write_findings_json
from ffaudit.report.findings_report import FindingsReport, RuleDescription
from ffaudit.report.findings_table import write_findings_table
from ffaudit.report.junit import JUnitCase, junit_xml, lint_junit_cases, write_findings_junit
from ffaudit.report.sarif import artifact_uri, sarif_log, write_sarif
from ffaudit.report.schemas import load_schema

ROOT = Path(__file__).resolve().parents[1]
SHARED = ROOT.parent / "shared" / "reference"
LINT = ROOT / "tests" / "data" / "lint"
SMALL = LINT / "reference-small.smi"
NO_SHARED = f"{SHARED} is absent (it holds the official SARIF and JUnit schemas; see its README)"


def _reports() -> list[FindingsReport]:
    """Reports from real runs covering every location kind: field, entry, class, reference record,
    a missing file and a layered set."""
    cases = [
        lint(str(LINT / "schema.yaml")),
        lint(str(LINT / "shadowed-class.yaml"), reference=str(SMALL)),
        lint(
            str(LINT / "reference-unreadable.yaml"),
            reference=str(LINT / "reference-unreadable.smi"),
        ),
        lint(str(LINT / "unused-entry.yaml"), reference=str(SMALL)),
        lint([str(LINT / "wildcard-tie.yaml"), "generic-organic"]),
        lint("generic-organic"),
        lint(str(LINT / "absent.yaml")),
    ]
    reports = [c.to_report() for c in cases] + [cases[3].to_report(strict=True)]
    reports.append(_hand_made())
    return reports


def _hand_made() -> FindingsReport:
    """A report as a compare-like command could build it, with a molecule finding and an odd character."""
    return FindingsReport(
        command="compare",
        findings=(
            Finding(
                code="entry-changed",
                severity=Severity.ERROR,
                message="bond [c4, c4]: k 699.6 -> 720 kcal/mol/A^2 (+2.9 %)",
                path="sets/new set.yaml",
                line=240,
                column=5,
                doc_path=("bonds", 11),
                hint="allow it with --allow if intended",
                rule="entry-changed",
            ),
            Finding(
                code="lost-coverage",
                severity=Severity.WARNING,
                message="record 10 (dichloromethane) lost bond:c4-cl: covered -> estimated \x07",
                molecule="dichloromethane",
                record=10,
                rule="lost-coverage",
            ),
            Finding(code="note", severity=Severity.INFO, message="nothing else changed"),
        ),
        rules=(
            RuleDescription("entry-changed", "An entry's values changed.", severity=Severity.ERROR),
        ),
        sources=("git:origin/main:sets/set.yaml", "sets/new set.yaml"),
    )


# -- SARIF --------------------------------------------------------------------------------------------


@pytest.mark.skipif(not SHARED.is_dir(), reason=NO_SHARED)
def test_sarif_validates_against_the_official_schema() -> None:
    schema = json.loads((SHARED / "sarif-schema-2.1.0.json").read_text(encoding="utf-8"))
    Draft4Validator.check_schema(schema)
    validator = Draft4Validator(schema)
    for report in _reports():
        log = sarif_log(report)
        errors = [f"{list(e.absolute_path)}: {e.message}" for e in validator.iter_errors(log)]
        assert errors == [], (report.sources, errors)
    # the validator is not vacuous: a result without a message is refused
    broken = sarif_log(_reports()[0])
    del broken["runs"][0]["results"][0]["message"]
    assert list(validator.iter_errors(broken))


def test_sarif_results_point_at_the_parameter_file_line() -> None:
    fixture = LINT / "schema.yaml"
    log = sarif_log(lint(str(fixture)).to_report())
    run = log["runs"][0]
    assert run["tool"]["driver"]["name"] == "ffaudit"
    rules = run["tool"]["driver"]["rules"]
    (result,) = run["results"]
    assert rules[result["ruleIndex"]]["id"] == result["ruleId"] == "schema"
    assert rules[result["ruleIndex"]]["defaultConfiguration"]["level"] == "error"
    location = result["locations"][0]["physicalLocation"]
    lines = fixture.read_text().splitlines()
    line = next(i for i, t in enumerate(lines, 1) if "stiff" in t and not t.startswith("#"))
    assert location["region"] == {"startLine": line, "startColumn": 8}
    assert not location["artifactLocation"]["uri"].startswith(
        "/"
    )  # relative to the working directory
    assert result["level"] == "error" and "hint:" in result["message"]["text"]
    assert "T" not in json.dumps(log).split('"version"')[0]  # no timestamps anywhere near the top
    info = sarif_log(lint(str(LINT / "unused-entry.yaml"), reference=str(SMALL)).to_report())
    assert {r["level"] for r in info["runs"][0]["results"]} == {"note"}


def test_sarif_is_deterministic_and_keeps_old_call_style() -> None:
    report = _reports()[1]
    first, second = io.StringIO(), io.StringIO()
    write_sarif(first, report)
    write_sarif(second, report)
    assert first.getvalue() == second.getvalue()
    assert "Timestamp" not in first.getvalue() and "startTime" not in first.getvalue()
    # compare's call: findings only, rules described from the findings themselves
    legacy = io.StringIO()
    write_sarif(legacy, list(report.findings))
    ids = [r["id"] for r in json.loads(legacy.getvalue())["runs"][0]["tool"]["driver"]["rules"]]
    assert ids == sorted({f.rule for f in report.findings if f.rule})
    mapped = sarif_log(report.findings, {"shadowed-class": ("Shadowed.", Severity.WARNING)})
    assert (
        mapped["runs"][0]["tool"]["driver"]["rules"][0]["shortDescription"]["text"] == "Shadowed."
    )


def test_artifact_uri(tmp_path: Path) -> None:
    assert artifact_uri("sets/my set.yaml") == "sets/my%20set.yaml"
    assert artifact_uri("./sets/../sets/a.yaml") == "sets/a.yaml"
    assert artifact_uri("embedded:generic-organic") == "embedded:generic-organic"
    inside = tmp_path / "d" / "a.yaml"
    assert artifact_uri(str(inside), base=tmp_path) == "d/a.yaml"
    outside = Path(os.sep) / "elsewhere" / "a.yaml"
    assert artifact_uri(str(outside), base=tmp_path) == outside.as_uri()


# -- JUnit --------------------------------------------------------------------------------------------


def _validator_or_skip() -> object:
    xsd = SHARED / "junit-10.xsd"
    if not xsd.is_file():
        pytest.skip(NO_SHARED)
    if importlib.util.find_spec("lxml") is not None:
        from lxml import etree

        schema = etree.XMLSchema(etree.parse(str(xsd)))
        return lambda text: schema.assertValid(etree.fromstring(text.encode("utf-8")))
    if importlib.util.find_spec("xmlschema") is not None:
        import xmlschema

        return xmlschema.XMLSchema(str(xsd)).validate
    pytest.skip(
        "no XML Schema validator installed: validating against junit-10.xsd needs lxml (or xmlschema)"
    )


def test_junit_validates_against_junit_10_xsd() -> None:
    validate = _validator_or_skip()
    for report in _reports():
        out = io.StringIO()
        write_findings_junit(out, report)
        validate(out.getvalue())  # type: ignore[operator]
    validate(junit_xml("compare", [("1: ethanol", None), ("2: acetone", "lost bond:c3o-o1")]))  # type: ignore[operator]


def test_junit_one_case_per_rule() -> None:
    report = lint(str(LINT / "duplicate-entry.yaml")).to_report()
    out = io.StringIO()
    write_findings_junit(out, report)
    root = ET.fromstring(out.getvalue())
    assert root.tag == "testsuites"
    (suite,) = root.findall("testsuite")
    cases = suite.findall("testcase")
    assert [c.get("name") for c in cases] == [r.id for r in report.rules]
    failed = [c for c in cases if c.find("failure") is not None]
    assert [c.get("name") for c in failed] == ["duplicate-entry"]
    failure = failed[0].find("failure")
    assert failure is not None and "defined again" in (failure.text or "")
    skipped = [c for c in cases if c.find("skipped") is not None]
    assert len(skipped) == len([r for r in report.rules if r.status != "run"]) > 0
    assert suite.get("tests") == str(len(cases))
    assert suite.get("failures") == "1" and suite.get("skipped") == str(len(skipped))
    assert failed[0].get("classname") == "ffaudit.lint.structure"


def test_junit_warnings_fail_only_with_strict() -> None:
    result = lint(str(LINT / "wildcard-tie.yaml"))
    plain = {c.name: c for c in lint_junit_cases(result.to_report())}
    strict = {c.name: c for c in lint_junit_cases(result.to_report(strict=True))}
    assert plain["wildcard-tie"].failure is None and "wildcard-tie" in plain["wildcard-tie"].details
    assert strict["wildcard-tie"].failure is not None


def test_generic_junit_writer_accepts_compare_style_cases() -> None:
    text = junit_xml(
        "ffaudit compare",
        [
            ("1: ethanol", None),
            ("10: dichloromethane", "bond:c4-cl covered -> estimated\nsecond line"),
            ("3: x", "ffaudit.compare", None, "details only"),
            JUnitCase("4: y", skipped="unreadable record"),
            ("5: bell \x07", "ffaudit.compare", "control \x07 character", "d"),
        ],
    )
    root = ET.fromstring(text)  # parses: control characters were replaced
    cases = root.findall(".//testcase")
    assert len(cases) == 5
    failure = cases[1].find("failure")
    assert failure is not None and failure.get("message") == "bond:c4-cl covered -> estimated"
    assert "second line" in (failure.text or "")
    assert cases[2].findtext("system-out") == "details only"
    assert cases[3].find("skipped") is not None
    assert root.get("failures") == "2" and root.find("testsuite").get("skipped") == "1"  # type: ignore[union-attr]


# -- JSON ---------------------------------------------------------------------------------------------


def test_json_validates_against_our_schema() -> None:
    schema = load_schema("lint-report")
    Draft202012Validator.check_schema(schema)
    validator = Draft202012Validator(schema)
    for report in _reports():
        out = io.StringIO()
        write_findings_json(out, report)
        doc = json.loads(out.getvalue())
        assert [e.message for e in validator.iter_errors(doc)] == []
        assert (
            doc["summary"]["findings"]
            == len(doc["findings"])
            == sum(doc["summary"][s] for s in ("error", "warning", "info"))
        )
    doc = findings_document(lint(str(LINT / "unknown-reference.yaml")).to_report())
    assert doc["result"] == "fail" and doc["summary"]["worst"] == "error"
    assert [f["code"] for f in doc["findings"]] == ["unknown-class", "unknown-source"]
    assert {f["rule"] for f in doc["findings"]} == {"unknown-reference"}
    assert doc["findings"][0]["doc_path"] == "bonds[0].classes[1]"
    bad = dict(doc, summary={**doc["summary"], "worst": "fatal"})
    assert list(validator.iter_errors(bad))


# -- table --------------------------------------------------------------------------------------------


def test_table_gold(gold) -> None:  # type: ignore[no-untyped-def]
    report = FindingsReport(
        command="lint",
        findings=(
            Finding(
                code="schema",
                severity=Severity.ERROR,
                message="expected a number, found a string 'stiff'",
                path="sets/my-set.yaml",
                line=16,
                column=8,
                hint="Force constant in the declared convention.",
                rule="schema",
            ),
            Finding(
                code="duplicate-key",
                severity=Severity.ERROR,
                message="duplicate key 'k' on line 17 (first on line 16); the first value is kept",
                path="sets/my-set.yaml",
                line=17,
                column=5,
                hint="remove or rename one of them",
                rule="yaml-duplicate-key",
            ),
            Finding(
                code="wildcard-tie",
                severity=Severity.WARNING,
                message="dihedral entries [*, c4, c4, o2] (line 19) and [*, c4, c4, h_c] (line 21) both "
                "match [h_c, c4, c4, o2] with 1 wildcard each; the lookup takes [*, c4, c4, h_c] only "
                "because its tuple sorts first",
                path="sets/my-set.yaml",
                line=21,
                column=5,
                hint="add an entry for [h_c, c4, c4, o2] to decide, or make one of them more specific",
                rule="wildcard-tie",
            ),
            Finding(
                code="reference-unreadable",
                severity=Severity.WARNING,
                message="reference record 2 (ring-never-closed) cannot be read: unclosed ring [b]x[/b]",
                path="sets/reference.smi",
                line=4,
                column=1,
                record=2,
                rule="reference-unreadable",
            ),
            Finding(
                code="unused-entry",
                severity=Severity.INFO,
                message="bond [o2, o2] is used by no molecule of the reference library (2 molecules)",
                path="sets/my-set.yaml",
                line=25,
                column=5,
                rule="unused-entry",
            ),
        ),
        rules=(
            RuleDescription("schema", "s", severity=Severity.ERROR, family="structure"),
            RuleDescription(
                "unused-class",
                "u",
                family="structure",
                status="skipped",
                reason="needs a reference library (--reference LIBRARY)",
            ),
            RuleDescription(
                "torsion-phase",
                "t",
                family="torsion",
                status="disabled",
                reason="switched off for this run",
            ),
        ),
        sources=("sets/my-set.yaml",),
        parameter_sets=(
            {
                "name": "my-set",
                "version": "1.2.0",
                "hash": "0123456789abcdef" * 4,
                "demonstration": True,
            },
        ),
        reference={"path": "sets/reference.smi", "records": 3, "unreadable": 1},
        notes=("1 torsion-phase finding suppressed by header lint.disable",),
    )
    out = io.StringIO()
    write_findings_table(out, report)
    gold.check("lint_table.txt", out.getvalue())
    empty = io.StringIO()
    write_findings_table(empty, FindingsReport(command="lint", findings=(), sources=("a.yaml",)))
    gold.check("lint_table_clean.txt", empty.getvalue())
