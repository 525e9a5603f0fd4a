"""JUnit XML (the widely used junit-10 schema) from test cases: one case per rule or per reference molecule."""

from __future__ import annotations

import xml.etree.ElementTree as ET
from collections.abc import Sequence
from typing import TextIO

Case = tuple[str, str | None]
"""(case name, failure text or None when the case passed)."""


def junit_xml(suite_name: str, cases: Sequence[Case], classname: str = "ffaudit") -> str:
    failures = sum(1 for _, failure in cases if failure is not None)
    suites = ET.Element("testsuites")
    suite = ET.SubElement(
        suites,
        "testsuite",
        name=suite_name,
        tests=str(len(cases)),
        failures=str(failures),
        errors="0",
        skipped="0",
    )
    for name, failure in cases:
        case = ET.SubElement(suite, "testcase", name=name, classname=classname)
        if failure is not None:
            element = ET.SubElement(
                case, "failure", message=failure.splitlines()[0][:500] if failure else ""
            )
            element.text = failure
    ET.indent(suites)
    return (
        '<?xml version="1.0" encoding="UTF-8"?>\n' + ET.tostring(suites, encoding="unicode") + "\n"
    )


def write_junit(out: TextIO, suite_name: str, cases: Sequence[Case]) -> None:
    out.write(junit_xml(suite_name, cases))
