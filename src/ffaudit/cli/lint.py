"""``ffaudit lint SET.yaml [...]``: check a parameter set for structural, physical and torsion problems.

Several SET files are layered base first, as ``--params`` layers them (``--each`` lints each on its own,
for pre-commit, which passes every changed file). Findings carry rule id, severity, message,
file:line:column and a fix hint; ``--format`` writes them as a table, JSON
(``schemas/lint-report.schema.json``), JUnit XML (one test case per rule) or SARIF 2.1.0.

Exit codes (:mod:`ffaudit.cli.exitcodes`): 0 no errors (with ``--strict``: no warnings either); 1 errors
(or warnings with ``--strict``); 2 usage error, a set file that cannot be read at all, or a reference
library that cannot be opened.
"""

from __future__ import annotations

import argparse
from collections.abc import Callable
from typing import TYPE_CHECKING, Any, TextIO

import yaml

from ffaudit.cli import exitcodes
from ffaudit.cli.common import add_reader_options, reader_options
from ffaudit.errors import UsageError

if TYPE_CHECKING:
    from ffaudit.report.findings_report import FindingsReport

FORMATS: tuple[str, ...] = ("table", "json", "junit", "sarif")


def add_parser(sub: Any) -> None:
    p = sub.add_parser(
        "lint",
        help="check parameter-set files (structure, physics, torsions); rules in docs/lint-rules.md",
        description="Check a parameter set: YAML and schema, names, parent cycles, SMARTS, duplicate and "
        "tied entries, shadowed classes, physical plausibility and torsions. With --reference, also "
        "classes and entries the reference library never uses. Rules can be switched off in the set's "
        "header (header.lint.disable) or with --disable.",
    )
    p.add_argument(
        "sets",
        metavar="SET",
        nargs="*",
        help="parameter-set file or embedded set name; several are layered base first",
    )
    p.add_argument(
        "--reference",
        metavar="LIBRARY",
        help="reference library (any input format ffaudit reads) for the rules that need one",
    )
    add_reader_options(p)
    p.add_argument(
        "--disable",
        action="append",
        default=[],
        metavar="RULE",
        help="switch a rule off (repeatable; comma-separated lists work too)",
    )
    p.add_argument(
        "--select",
        action="append",
        metavar="RULE",
        help="run only these rules (repeatable); rules reporting load errors always run",
    )
    p.add_argument(
        "--option",
        action="append",
        default=[],
        metavar="RULE.NAME=VALUE",
        help="set a rule option, e.g. bond-length-radii.tolerance=0.2 (VALUE is read as YAML)",
    )
    p.add_argument(
        "--strict", action="store_true", help="exit 1 on warnings too (default: on errors only)"
    )
    p.add_argument(
        "--each",
        action="store_true",
        help="lint every SET on its own instead of layering them (what the pre-commit hook does)",
    )
    p.add_argument(
        "--format", choices=FORMATS, default="table", help="output format (default: table)"
    )
    p.add_argument(
        "-o", "--output", metavar="FILE", help="write the report to FILE (default: stdout)"
    )
    p.add_argument("--list-rules", action="store_true", help="list the rules and exit")
    p.set_defaults(run=run)


def _split(values: list[str] | None) -> list[str] | None:
    if values is None:
        return None
    return [part.strip() for value in values for part in value.split(",") if part.strip()]


def parse_options(items: list[str]) -> dict[str, dict[str, Any]]:
    """``RULE.NAME=VALUE`` items -> {rule: {name: value}}; VALUE read as a YAML scalar.

    Raises :class:`UsageError` for an item without ``.`` and ``=``.
    """
    options: dict[str, dict[str, Any]] = {}
    for item in items:
        key, sep, text = item.partition("=")
        rule, dot, name = key.strip().rpartition(".")
        if not sep or not dot or not rule or not name:
            raise UsageError(f"--option {item!r}: expected RULE.NAME=VALUE")
        try:
            value = yaml.safe_load(text) if text.strip() else ""
        except yaml.YAMLError:
            value = text
        options.setdefault(rule, {})[name] = value
    return options


def list_rules(stdout: TextIO) -> None:
    from ffaudit.lint.registry import all_rules

    rules = all_rules()
    width = max(len(r.id) for r in rules)
    for rule in rules:
        flags = []
        if rule.required:
            flags.append("required")
        if rule.needs_reference:
            flags.append("needs --reference")
        tail = f" [{', '.join(flags)}]" if flags else ""
        print(
            f"{rule.id:<{width}}  {rule.family:<9}  {rule.severity.label:<7}  {rule.summary}{tail}",
            file=stdout,
        )


def run(args: argparse.Namespace, stdout: TextIO, stderr: TextIO) -> int:
    from ffaudit.lint.driver import combine, lint
    from ffaudit.report.base import open_output
    from ffaudit.report.findings_json import write_findings_json
    from ffaudit.report.findings_table import write_findings_table
    from ffaudit.report.junit import write_findings_junit
    from ffaudit.report.sarif import write_sarif

    if args.list_rules:
        list_rules(stdout)
        return exitcodes.OK
    if not args.sets:
        raise UsageError("lint needs at least one parameter-set file (or --list-rules)")
    common: dict[str, Any] = {
        "reference": args.reference,
        "disable": _split(args.disable) or (),
        "enable_only": _split(args.select),
        "options": parse_options(args.option),
        "reference_format": args.input_format,
        "reader_options": reader_options(args),
    }
    groups = [[s] for s in args.sets] if args.each else [list(args.sets)]
    result = combine([lint(group, **common) for group in groups])
    unreadable = result.unreadable_sources
    if unreadable:
        for finding in unreadable:
            print(f"ffaudit: error: {finding.format()}", file=stderr)
        return exitcodes.USAGE_OR_INPUT
    report = result.to_report(strict=args.strict)
    writers: dict[str, Callable[[TextIO, FindingsReport], None]] = {
        "table": write_findings_table,
        "json": write_findings_json,
        "junit": write_findings_junit,
        "sarif": write_sarif,
    }
    with open_output(args.output, stdout) as out:
        writers[args.format](out, report)
    if report.failed:
        counts = report.counts()
        if counts["error"]:
            what = f"{counts['error']} lint error{'s' if counts['error'] != 1 else ''}"
        else:
            what = f"{counts['warning']} lint warning{'s' if counts['warning'] != 1 else ''} with --strict"
        print(f"ffaudit lint: failed: {what} (the limit is 0)", file=stderr)
        return exitcodes.POLICY_FAILED
    return exitcodes.OK
