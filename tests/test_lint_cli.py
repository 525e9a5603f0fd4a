"""``ffaudit lint`` on the command line, with in-memory streams (``ffaudit.cli.main.run``)."""

from __future__ import annotations

import io
import json
from pathlib import Path

import pytest

from ffaudit.cli import exitcodes
from ffaudit.cli.lint import parse_options
from ffaudit.cli.main import run
from ffaudit.errors import UsageError
from ffaudit.lint.registry import all_rules

ROOT = Path(__file__).resolve().parents[1]
LINT = ROOT / "tests" / "data" / "lint"
BROKEN = ROOT / "tests" / "data" / "broken_sets"
REFERENCE = ROOT / "sample_sets" / "reference" / "generic-organic-reference.smi"


def _run(*argv: str) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    code = run(list(argv), out, err)
    return code, out.getvalue(), err.getvalue()


def _json(*argv: str) -> tuple[int, dict]:  # type: ignore[type-arg]
    code, out, _ = _run(*argv, "--format", "json")
    return code, json.loads(out)


def test_default_set_lints_clean_and_exits_0() -> None:
    code, out, err = _run("lint", "generic-organic")
    assert code == exitcodes.OK, out
    assert "0 errors" in out and "result: pass" in out
    assert err == ""


def test_default_set_with_the_shipped_reference_has_no_errors() -> None:
    code, doc = _json("lint", "generic-organic", "--reference", str(REFERENCE))
    assert code == exitcodes.OK
    assert doc["summary"]["error"] == 0
    assert doc["reference"] == {"path": str(REFERENCE), "records": 39, "unreadable": 0}
    assert {r["status"] for r in doc["rules"]} == {"run"}


def test_errors_exit_1_and_say_so_on_stderr() -> None:
    fixture = LINT / "yaml-duplicate-key.yaml"
    code, out, err = _run("lint", str(fixture))
    assert code == exitcodes.POLICY_FAILED
    assert f"{fixture.name}" in out and "yaml-duplicate-key" in out and "[duplicate-key]" in out
    assert err.strip() == "ffaudit lint: failed: 1 lint error (the limit is 0)"


def test_strict_fails_on_warnings_and_disable_or_header_switch_them_off(tmp_path: Path) -> None:
    fixture = LINT / "wildcard-tie.yaml"
    assert _run("lint", str(fixture))[0] == exitcodes.OK  # a warning only
    code, _, err = _run("lint", str(fixture), "--strict")
    assert code == exitcodes.POLICY_FAILED and "1 lint warning with --strict" in err
    assert _run("lint", str(fixture), "--strict", "--disable", "wildcard-tie")[0] == exitcodes.OK
    assert _run("lint", str(fixture), "--strict", "--disable", "unused-entry,wildcard-tie")[0] == 0
    assert _run("lint", str(fixture), "--strict", "--select", "schema")[0] == exitcodes.OK
    text = fixture.read_text(encoding="utf-8").replace(
        '  version: "1"\n', '  version: "1"\n  lint: {disable: [wildcard-tie]}\n'
    )
    quiet = tmp_path / "quiet.yaml"
    quiet.write_text(text, encoding="utf-8")
    code, out, _ = _run("lint", str(quiet), "--strict")
    assert code == exitcodes.OK
    assert "1 wildcard-tie finding suppressed by header lint.disable" in out


def test_usage_errors_exit_2() -> None:
    assert _run("lint")[0] == exitcodes.USAGE_OR_INPUT
    code, _, err = _run("lint", "generic-organic", "--disable", "no-such-rule")
    assert code == exitcodes.USAGE_OR_INPUT and "unknown lint rule 'no-such-rule'" in err
    code, _, err = _run("lint", "generic-organic", "--disable", "schema")
    assert code == exitcodes.USAGE_OR_INPUT and "cannot be disabled" in err
    code, _, err = _run("lint", "generic-organic", "--option", "wildcard-tie.nope=1")
    assert code == exitcodes.USAGE_OR_INPUT and "has no option 'nope'" in err
    assert _run("lint", "generic-organic", "--format", "xml")[0] == exitcodes.USAGE_OR_INPUT


def test_unreadable_set_or_reference_exits_2(tmp_path: Path) -> None:
    code, out, err = _run("lint", str(tmp_path / "absent.yaml"))
    assert code == exitcodes.USAGE_OR_INPUT and out == ""
    assert "missing-file" in err and "absent.yaml" in err
    code, _, err = _run("lint", "generic-organic", "--reference", str(tmp_path / "absent.smi"))
    assert code == exitcodes.USAGE_OR_INPUT and "absent.smi" in err


def test_options_reach_the_rule() -> None:
    # bond-length-radii (physics): with a 1 A tolerance the C=S length of the default set passes
    base = _json("lint", "generic-organic", "--select", "bond-length-radii")[1]
    wide = _json(
        "lint",
        "generic-organic",
        "--select",
        "bond-length-radii",
        "--option",
        "bond-length-radii.tolerance=1.0",
    )[1]
    assert base["summary"]["warning"] >= 1
    assert wide["summary"]["warning"] == 0
    assert parse_options(["a-b.tolerance=0.2", "a-b.flag=true", "c.name=text"]) == {
        "a-b": {"tolerance": 0.2, "flag": True},
        "c": {"name": "text"},
    }
    with pytest.raises(UsageError):
        parse_options(["no-dot=1"])


def test_layered_and_each(tmp_path: Path) -> None:
    tie, dup = LINT / "wildcard-tie.yaml", LINT / "duplicate-entry.yaml"
    code, doc = _json("lint", str(tie), str(dup), "--each")
    assert code == exitcodes.POLICY_FAILED  # the duplicate entry
    assert doc["sources"] == [str(tie), str(dup)]
    assert {f["rule"] for f in doc["findings"]} == {"wildcard-tie", "duplicate-entry"}
    assert [p["name"] for p in doc["parameter_sets"]] == [
        "lint-fixture"
    ]  # the duplicate did not load
    # layered, the same two files are one set: the second's duplicate still fails it
    code, doc = _json("lint", str(tie), str(dup))
    assert code == exitcodes.POLICY_FAILED and doc["parameter_sets"] == []


def test_output_file_and_list_rules(tmp_path: Path) -> None:
    target = tmp_path / "lint.sarif"
    code, out, _ = _run("lint", str(LINT / "schema.yaml"), "--format", "sarif", "-o", str(target))
    assert code == exitcodes.POLICY_FAILED and out == ""
    log = json.loads(target.read_text(encoding="utf-8"))
    assert log["runs"][0]["results"][0]["ruleId"] == "schema"
    code, out, _ = _run("lint", "--list-rules")
    assert code == exitcodes.OK
    listed = [line.split()[0] for line in out.splitlines()]
    assert listed == [r.id for r in all_rules()]
    assert "needs --reference" in out and "required" in out


def test_table_output_is_deterministic_and_plain() -> None:
    args = (
        "lint",
        str(LINT / "wildcard-tie.yaml"),
        "--reference",
        str(LINT / "reference-small.smi"),
    )
    first, second = _run(*args)[1], _run(*args)[1]
    assert first == second
    assert "\x1b[" not in first
    assert max(len(line) for line in first.splitlines()) <= 100
