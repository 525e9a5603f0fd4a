"""Lint entry points other commands call, end to end through the command line.

* :func:`ffaudit.report.sarif.sarif_document` (what ``compare`` calls for SARIF) validates against the
  official SARIF 2.1.0 schema (Draft 4, ../shared/reference/sarif-schema-2.1.0.json) and points each result
  at the file line of its finding;
* :func:`ffaudit.report.junit.junit_xml` with ``(name, classname, failure, details)`` cases and the
  ``lint --format junit`` output validate against junit-10.xsd (lxml or xmlschema);
* the ``torsion-phase`` marker is accepted in both spellings (``free phase`` and ``phase:free``).

Rule-by-rule fixtures, the default set and the convention mix-up checks are in test_lint_structure.py,
test_lint_physics.py and test_lint_torsion.py; outputs in test_lint_outputs.py; the command in
test_lint_cli.py.
"""

from __future__ import annotations

import importlib.util
import io
import json
import xml.etree.ElementTree as ET
from collections.abc import Callable
from pathlib import Path

import pytest
from jsonschema import Draft4Validator

from ffaudit.cli.exitcodes import POLICY_FAILED
from ffaudit.cli.main import run as cli_run
from ffaudit.findings import Finding, Severity
from ffaudit.lint.driver import lint
from ffaudit.lint.rules import torsion_phase
from ffaudit.report.junit import junit_xml
from ffaudit.report.sarif import sarif_document, sarif_log
from lint_rule_helpers import LINT_DATA, line_of, run, text_context

ROOT = Path(__file__).resolve().parents[1]
SHARED = ROOT.parent / "shared" / "reference"
NO_SHARED = f"{SHARED} is absent (it holds the official SARIF and JUnit schemas)"


def _sarif_validator() -> Draft4Validator:
    path = SHARED / "sarif-schema-2.1.0.json"
    if not path.is_file():
        pytest.skip(NO_SHARED)
    schema = json.loads(path.read_text(encoding="utf-8"))
    Draft4Validator.check_schema(schema)
    return Draft4Validator(schema)


def _junit_validator() -> Callable[[str], None]:
    xsd = SHARED / "junit-10.xsd"
    if not xsd.is_file():
        pytest.skip(NO_SHARED)
    if importlib.util.find_spec("lxml") is not None:
        from lxml import etree

        schema = etree.XMLSchema(etree.parse(str(xsd)))
        return lambda text: schema.assertValid(etree.fromstring(text.encode("utf-8")))
    if importlib.util.find_spec("xmlschema") is not None:
        import xmlschema

        validate: Callable[[str], None] = xmlschema.XMLSchema(str(xsd)).validate
        return validate
    pytest.skip("no XML Schema validator installed: junit-10.xsd needs lxml or xmlschema")


def test_sarif_document_validates_and_points_at_the_line() -> None:
    validator = _sarif_validator()
    fixture = LINT_DATA / "angle-domain.yaml"
    result = lint(str(fixture))
    findings = [f for f in result.findings if f.rule == "angle-domain"]
    assert len(findings) == 1
    # compare's call style: findings and a mapping rule id -> (summary, default severity)
    doc = sarif_document(findings, {"angle-domain": ("Angle outside (0, 180].", Severity.ERROR)})
    assert [f"{list(e.absolute_path)}: {e.message}" for e in validator.iter_errors(doc)] == []
    (run_,) = doc["runs"]
    assert run_["tool"]["driver"]["name"] == "ffaudit"
    assert [r["id"] for r in run_["tool"]["driver"]["rules"]] == ["angle-domain"]
    (res,) = run_["results"]
    assert res["ruleId"] == "angle-domain" and res["level"] == "error"
    location = res["locations"][0]["physicalLocation"]
    assert location["artifactLocation"]["uri"].endswith("angle-domain.yaml")
    # the fixture's H-C-H theta0 of 250 degrees (its top comment says so)
    assert location["region"]["startLine"] == line_of(fixture, "theta0: 250")
    assert location["region"]["startColumn"] >= 1
    # the same document as the report-based writer gives for the same findings and rules
    assert doc == sarif_log(findings, {"angle-domain": ("Angle outside (0, 180].", Severity.ERROR)})


def test_sarif_document_refuses_a_rules_argument_of_another_type() -> None:
    with pytest.raises(TypeError, match="rules must be"):
        sarif_document([], 42)  # type: ignore[arg-type]


def test_junit_four_item_cases_validate_against_junit_10() -> None:
    validate = _junit_validator()
    text = junit_xml(
        "ffaudit compare",
        [
            ("1: ethanol", "ffaudit.compare", None, ""),
            ("2: acetone", "ffaudit.compare", "lost bond:c3o-o1", "bond c3o-o1: exact -> missing"),
        ],
    )
    validate(text)
    root = ET.fromstring(text)
    failure = root.find(".//testcase[@name='2: acetone']/failure")
    assert failure is not None and failure.get("message") == "lost bond:c3o-o1"
    assert failure.text == "bond c3o-o1: exact -> missing"
    assert root.get("failures") == "1" and root.get("tests") == "2"
    # the validator is not vacuous: a testcase without its required name is refused
    with pytest.raises(Exception):  # noqa: B017 - lxml and xmlschema raise different types
        validate(text.replace('name="1: ethanol" ', ""))


def test_cli_junit_output_validates_and_fails_the_run(tmp_path: Path) -> None:
    validate = _junit_validator()
    out_file = tmp_path / "lint.xml"
    stdout, stderr = io.StringIO(), io.StringIO()
    argv = ["lint", str(LINT_DATA / "angle-domain.yaml"), "--format", "junit"]
    code = cli_run([*argv, "-o", str(out_file)], stdout, stderr)
    assert code == POLICY_FAILED == 1
    text = out_file.read_text(encoding="utf-8")
    validate(text)
    failed = [
        c.get("name") for c in ET.fromstring(text).iter("testcase") if c.find("failure") is not None
    ]
    assert failed == ["angle-domain"]


@pytest.mark.parametrize(
    ("note", "reported"),
    [
        ("free phase: fitted to an asymmetric scan", False),
        ("phase:free (fitted)", False),
        ("Phase : Free", False),
        ("phase fixed by symmetry", True),
    ],
)
def test_torsion_phase_marker_spellings(tmp_path: Path, note: str, reported: bool) -> None:
    text = (LINT_DATA / "torsion-phase.yaml").read_text(encoding="utf-8")
    text = text.replace("free phase: fitted to an asymmetric scan", note)
    findings: list[Finding] = run(torsion_phase, text_context(tmp_path, text))
    marked_entry = [f for f in findings if f.doc_path[:2] == ("dihedrals", 0)]
    assert bool(marked_entry) is reported
    # the phase-90 term of the unmarked entry is reported whatever the note says
    assert [f.doc_path for f in findings if f.doc_path[1] == 1] == [
        ("dihedrals", 1, "terms", 1, "phase")
    ]


def test_sarif_message_carries_the_loader_code() -> None:
    # unknown-reference reports two loader codes (unknown-class, unknown-source): the fixture's top
    # comment says which lines; each SARIF message starts with its code, the rule id stays the ruleId
    fixture = LINT_DATA / "unknown-reference.yaml"
    doc = sarif_document(lint(str(fixture)).findings)
    results = doc["runs"][0]["results"]
    assert [r["ruleId"] for r in results] == ["unknown-reference", "unknown-reference"]
    assert [r["message"]["text"].split("]")[0] for r in results] == [
        "[unknown-class",
        "[unknown-source",
    ]
    assert [r["locations"][0]["physicalLocation"]["region"]["startLine"] for r in results] == [
        line_of(fixture, "classes: [c4, hc]"),
        line_of(fixture, "source: crc2005"),
    ]
