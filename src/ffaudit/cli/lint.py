"""``ffaudit lint SET.yaml``: check a parameter-set file for structural and physical problems."""

from __future__ import annotations

import argparse
import json
from typing import Any, TextIO

from ffaudit.cli import exitcodes
from ffaudit.errors import UsageError


def add_parser(sub: Any) -> None:
    p = sub.add_parser(
        "lint",
        help="check a parameter-set file (structure, physics, torsions); rules in docs/lint-rules.md",
    )
    p.add_argument("set", metavar="SET.yaml", nargs="?")
    p.add_argument(
        "--reference", metavar="LIBRARY", help="reference library for the rules that need one"
    )
    p.add_argument(
        "--disable", action="append", default=[], metavar="RULE", help="switch a rule off"
    )
    p.add_argument("--select", action="append", metavar="RULE", help="run only these rules")
    p.add_argument("--strict", action="store_true", help="exit 1 on warnings too")
    p.add_argument("--format", choices=("table", "json", "junit", "sarif"), default="table")
    p.add_argument("-o", "--output", metavar="FILE")
    p.add_argument("--list-rules", action="store_true", help="list the rules and exit")
    p.set_defaults(run=run)


def run(args: argparse.Namespace, stdout: TextIO, stderr: TextIO) -> int:
    from ffaudit.lint.driver import lint
    from ffaudit.lint.registry import all_rules
    from ffaudit.report.base import open_output

    if args.list_rules:
        for rule in all_rules():
            print(
                f"{rule.id:32} {rule.family:10} {rule.severity.label:8} {rule.summary}", file=stdout
            )
        return exitcodes.OK
    if not args.set:
        raise UsageError("lint needs a parameter-set file (or --list-rules)")
    try:
        result = lint(args.set, reference=args.reference, disable=args.disable, select=args.select)
    except (ValueError, OSError) as exc:
        raise UsageError(str(exc)) from None
    rules = {r.id: (r.summary, r.severity) for r in result.rules}
    with open_output(args.output, stdout) as out:
        if args.format == "json":
            doc = {
                "format": "ffaudit-lint",
                "format_version": 1,
                "file": args.set,
                "findings": [f.to_dict() for f in result.findings],
                "counts": {
                    s: sum(1 for f in result.findings if f.severity.label == s)
                    for s in ("error", "warning", "info")
                },
            }
            json.dump(doc, out, indent=2, ensure_ascii=False)
            out.write("\n")
        elif args.format == "sarif":
            from ffaudit.report.sarif import write_sarif

            write_sarif(out, result.findings, rules)
        elif args.format == "junit":
            from ffaudit.report.junit import write_junit

            cases = []
            for rule in result.rules:
                hits = [
                    f for f in result.findings if f.rule == rule.id and f.severity > _floor(args)
                ]
                cases.append((rule.id, "\n".join(f.format() for f in hits) if hits else None))
            write_junit(out, "ffaudit lint " + args.set, cases)
        else:
            for f in result.findings:
                print(f.format(), file=out)
            counts = {
                s: sum(1 for f in result.findings if f.severity.label == s)
                for s in ("error", "warning", "info")
            }
            print(
                f"{args.set}: {counts['error']} errors, {counts['warning']} warnings, {counts['info']} info "
                f"({len(result.rules)} rules)",
                file=out,
            )
    if result.has_errors() or (args.strict and result.has_warnings()):
        return exitcodes.POLICY_FAILED
    return exitcodes.OK


def _floor(args: argparse.Namespace) -> Any:
    from ffaudit.findings import Severity

    return Severity.INFO if args.strict else Severity.WARNING
