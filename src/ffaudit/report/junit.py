"""JUnit XML (the junit-10 schema CI servers validate test reports against) for ffaudit's gates.

:func:`write_junit` is generic: a suite name and test cases, each ``(name, classname, failure message or
None, details)`` (a :class:`JUnitCase`; plain tuples work, and so do the older two-item
``(name, failure or None)``). ``compare`` makes one case per reference molecule; ``lint`` uses
:func:`write_findings_junit`, which makes **one case per rule**: a rule that ran fails when it has a
finding that fails the run (an error, or a warning with ``--strict``), passes otherwise (its remaining
findings are listed in ``system-out``), and a rule that was skipped or disabled is a skipped case with
the reason. One case per rule keeps the set of test names the same from run to run, so a CI server's
history shows which rule started or stopped failing.

Output: ``testsuites`` > one ``testsuite`` (``name``, ``tests``, ``failures``, ``errors`` = 0,
``skipped``) > ``testcase`` (``name``, ``classname``) with at most one ``failure`` (``message`` = the
failure message, text = the details) or ``skipped``. No timestamps or durations, so the same run gives
the same bytes. Characters XML 1.0 cannot carry are replaced by ``?``.
"""

from __future__ import annotations

import re
import xml.etree.ElementTree as ET
from collections.abc import Iterable, Sequence
from typing import Any, NamedTuple, TextIO

from ffaudit.findings import Finding
from ffaudit.report.findings_report import FindingsReport

MESSAGE_LIMIT = 500
"""Characters of a failure message kept in the ``message`` attribute (the full text is the element's)."""

_NOT_XML = re.compile("[^\t\n\r\x20-\ud7ff\ue000-\ufffd\U00010000-\U0010ffff]")


class JUnitCase(NamedTuple):
    """One test case. ``failure`` None means it passed; ``skipped`` (a reason) marks it skipped."""

    name: str
    classname: str = "ffaudit"
    failure: str | None = None
    details: str = ""
    skipped: str | None = None


def as_case(item: JUnitCase | Sequence[Any]) -> JUnitCase:
    """A :class:`JUnitCase` from a case tuple of 2 (name, failure), 3 (name, classname, failure),
    4 (name, classname, failure, details) or 5 items (… skipped reason). ``ValueError`` otherwise."""
    if isinstance(item, JUnitCase):
        return item
    values = tuple(item)
    if len(values) == 2:
        return JUnitCase(name=str(values[0]), failure=values[1])
    if 3 <= len(values) <= 5:
        return JUnitCase(*values)
    raise ValueError(f"a JUnit case has 2 to 5 items, not {len(values)}: {values!r}")


def _first_line(text: str) -> str:
    lines = text.strip().splitlines()
    return lines[0][:MESSAGE_LIMIT] if lines else ""


def _clean(text: str) -> str:
    return _NOT_XML.sub("?", text)


def junit_xml(
    suite_name: str,
    cases: Iterable[JUnitCase | Sequence[Any]],
    suites_name: str = "ffaudit",
) -> str:
    """The JUnit XML document (UTF-8 declaration, two-space indentation, final newline)."""
    listed = [as_case(c) for c in cases]
    failures = sum(1 for c in listed if c.failure is not None and c.skipped is None)
    skipped = sum(1 for c in listed if c.skipped is not None)
    root = ET.Element(
        "testsuites",
        name=_clean(suites_name),
        tests=str(len(listed)),
        failures=str(failures),
        errors="0",
    )
    suite = ET.SubElement(
        root,
        "testsuite",
        name=_clean(suite_name),
        tests=str(len(listed)),
        failures=str(failures),
        errors="0",
        skipped=str(skipped),
    )
    for case in listed:
        element = ET.SubElement(
            suite, "testcase", name=_clean(case.name), classname=_clean(case.classname)
        )
        if case.skipped is not None:
            ET.SubElement(element, "skipped", message=_clean(case.skipped))
        elif case.failure is not None:
            failure = ET.SubElement(
                element, "failure", message=_clean(_first_line(case.failure)), type="failure"
            )
            failure.text = _clean(case.details or case.failure)
        if case.details and (case.failure is None or case.skipped is not None):
            ET.SubElement(element, "system-out").text = _clean(case.details)
    ET.indent(root)
    return '<?xml version="1.0" encoding="UTF-8"?>\n' + ET.tostring(root, encoding="unicode") + "\n"


def write_junit(
    out: TextIO,
    suite_name: str,
    cases: Iterable[JUnitCase | Sequence[Any]],
    suites_name: str = "ffaudit",
) -> None:
    """Write :func:`junit_xml` of ``cases`` to ``out``. ``ValueError`` for a malformed case tuple."""
    out.write(junit_xml(suite_name, cases, suites_name))


def _lines(findings: Sequence[Finding]) -> str:
    return "\n".join(f.format() for f in findings)


def lint_junit_cases(report: FindingsReport) -> list[JUnitCase]:
    """One case per rule of ``report`` (see the module docstring), then one per finding code that no
    described rule owns."""
    by_rule: dict[str, list[Finding]] = {}
    for finding in report.findings:
        by_rule.setdefault(finding.rule or finding.code, []).append(finding)
    cases: list[JUnitCase] = []
    described = set()
    for rule in report.rules:
        described.add(rule.id)
        classname = (
            f"ffaudit.{report.command}.{rule.family}"
            if rule.family
            else f"ffaudit.{report.command}"
        )
        found = by_rule.get(rule.id, [])
        if rule.status != "run":
            cases.append(JUnitCase(rule.id, classname, skipped=rule.reason or rule.status))
            continue
        failing = [f for f in found if report.fails(f)]
        others = [f for f in found if not report.fails(f)]
        if failing:
            noun = "finding" if len(failing) == 1 else "findings"
            message = f"{len(failing)} {noun} that fail the run; first: {failing[0].format()}"
            cases.append(JUnitCase(rule.id, classname, message, _lines(failing + others)))
        else:
            cases.append(JUnitCase(rule.id, classname, None, _lines(others)))
    for rule_id, found in sorted(by_rule.items()):
        if rule_id in described:
            continue
        failing = [f for f in found if report.fails(f)]
        failed = f"{len(failing)} findings that fail the run" if failing else None
        cases.append(JUnitCase(rule_id, f"ffaudit.{report.command}", failed, _lines(found)))
    return cases


def write_findings_junit(out: TextIO, report: FindingsReport) -> None:
    """Write ``report`` as JUnit XML with one test case per rule (:func:`lint_junit_cases`)."""
    sources = ", ".join(report.sources) if report.sources else "(no sources)"
    write_junit(out, f"ffaudit {report.command} {sources}", lint_junit_cases(report))
