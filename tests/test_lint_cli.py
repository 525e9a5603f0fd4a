"""The lint command: registry, driver, exit codes, SARIF and JUnit outputs."""

import io
import json
import xml.etree.ElementTree as ET
from pathlib import Path

import pytest

from ffaudit.cli.main import run
from ffaudit.lint.driver import lint
from ffaudit.lint.registry import all_rules

ROOT = Path(__file__).resolve().parents[1]
DEFAULT = str(ROOT / "src" / "ffaudit" / "paramset" / "data" / "generic-organic.yaml")
BROKEN = ROOT / "tests" / "data" / "broken_sets"
SHARED = ROOT.parent / "shared" / "reference"


def _run(*argv):
    out, err = io.StringIO(), io.StringIO()
    return run(list(argv), out, err), out.getvalue(), err.getvalue()


def test_registry_finds_every_rule_module():
    rules = all_rules()
    modules = {
        p.stem for p in (ROOT / "src/ffaudit/lint/rules").glob("*.py") if p.stem != "__init__"
    }
    assert {r.module.__name__.rsplit(".", 1)[1] for r in rules} == modules
    for rule in rules:
        doc = rule.module.__doc__ or ""
        assert "Passing:" in doc and "Failing:" in doc, rule.id


def test_default_set_lints_without_errors():
    result = lint(DEFAULT, reference=str(ROOT / "sample_sets" / "formulation-lab.smi"))
    assert not result.has_errors(), [f.format() for f in result.findings]
    assert _run("lint", DEFAULT)[0] == 0


def test_load_errors_are_findings_at_their_line():
    code, out, _ = _run("lint", str(BROKEN / "duplicate_key.yaml"))
    assert code == 1
    assert "duplicate_key.yaml:18:5: error load-error: [duplicate-key]" in out


def test_strict_fails_on_warnings_and_disable_switches_rules_off():
    # the default set has two warnings (UFF's C#C constant and C=S length; see docs/lint-rules.md)
    assert _run("lint", DEFAULT, "--strict")[0] == 1
    code = _run(
        "lint",
        DEFAULT,
        "--strict",
        "--disable",
        "bond-wavenumber",
        "--disable",
        "bond-length-radii",
    )[0]
    assert code == 0
    assert _run("lint", DEFAULT, "--disable", "no-such-rule")[0] == 2
    assert _run("lint", str(ROOT / "no-such.yaml"))[0] == 2


@pytest.mark.skipif(
    not SHARED.is_dir(), reason="../shared/reference is absent (it holds the SARIF schema)"
)
def test_sarif_validates_against_the_official_schema():
    import jsonschema

    code, out, _ = _run("lint", str(BROKEN / "duplicate_key.yaml"), "--format", "sarif")
    doc = json.loads(out)
    schema = json.loads((SHARED / "sarif-schema-2.1.0.json").read_text())
    jsonschema.Draft4Validator(schema).validate(doc)
    result = doc["runs"][0]["results"][0]
    assert result["locations"][0]["physicalLocation"]["region"]["startLine"] == 18


def test_junit_has_one_case_per_rule():
    # Structure only: no XML Schema validator is installed here (validation against junit-10.xsd needs
    # a package such as xmlschema, not yet a dependency).
    code, out, _ = _run("lint", str(BROKEN / "duplicate_key.yaml"), "--format", "junit")
    root = ET.fromstring(out)
    suite = root.find("testsuite")
    cases = suite.findall("testcase")
    assert len(cases) == len(all_rules())
    failed = [c for c in cases if c.find("failure") is not None]
    assert [c.get("name") for c in failed] == ["load-error"]
    assert suite.get("failures") == "1"


def test_docs_list_the_same_rules_as_the_registry():
    import importlib.util

    spec = importlib.util.spec_from_file_location("make_lint_docs", ROOT / "tools" / "make_lint_docs.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    assert (ROOT / "docs" / "lint-rules.md").read_text() == module.render(), "run tools/make_lint_docs.py"
