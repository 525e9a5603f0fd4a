"""``ffaudit audit LIBRARY``: audit a structure library against a parameter set."""

from __future__ import annotations

import argparse
from typing import Any, TextIO

from ffaudit.audit import TERMS_MODES, AuditContext, Summary, cautions_for, parameter_set_info
from ffaudit.cli import exitcodes
from ffaudit.cli.common import add_params_option, add_reader_options, load_params, reader_options
from ffaudit.policy import FAIL_ON, gate

FORMATS: tuple[str, ...] = ("table", "json", "jsonl", "csv")


def add_parser(sub: Any) -> None:
    p = sub.add_parser(
        "audit",
        help="audit a structure library against a parameter set",
        description="Read LIBRARY (SMILES, SDF; .gz too), assign environment classes, enumerate terms and "
        "report which terms the parameter set covers, how, and which it lacks.",
    )
    p.add_argument("library", metavar="LIBRARY", help="structure file, or - for standard input")
    add_params_option(p)
    add_reader_options(p)
    p.add_argument("--format", choices=FORMATS, default="table", help="output format (default: table)")
    p.add_argument("-o", "--output", metavar="FILE", help="write the report to FILE (default: stdout)")
    p.add_argument(
        "--terms",
        choices=TERMS_MODES,
        default="all",
        help="which terms machine formats list per molecule: all, problems (not exact), none; "
        "counts always cover every term (default: all)",
    )
    p.add_argument(
        "--fail-on",
        choices=FAIL_ON,
        default="missing",
        help="exit 1 when any record is incomplete or unreadable (missing), also estimated (estimated), "
        "or never (default: missing)",
    )
    p.add_argument("--min-score", type=float, metavar="X", help="exit 1 when a molecule scores below X")
    p.set_defaults(run=run)


def run(args: argparse.Namespace, stdout: TextIO, stderr: TextIO) -> int:
    from ffaudit.engine.inprocess import audit_records
    from ffaudit.read.open import iter_records
    from ffaudit.report.base import make_reporter, open_output

    pset = load_params(args)
    context = AuditContext(pset)
    records = iter_records(args.library, args.input_format, **reader_options(args))  # type: ignore[arg-type]
    summary = Summary(pset)
    run_info = {
        "parameter_set": parameter_set_info(pset),
        "cautions": cautions_for(pset),
        "terms_mode": args.terms,
    }
    with open_output(args.output, stdout) as out:
        reporter = make_reporter(args.format, out)
        reporter.start(run_info)
        for audit in audit_records(context, records):
            summary.add(audit)
            reporter.add(audit.to_dict(pset, args.terms))
        result = summary.to_dict()
        reporter.finish(result)
    status = result["status"]
    print(
        f"ffaudit: {result['records']} records: "
        + ", ".join(f"{n} {s}" for s, n in status.items()),
        file=stderr,
    )
    verdict = gate(status, args.fail_on, args.min_score, result["score"]["min"])
    if not verdict.ok:
        print(f"ffaudit: {verdict.message}", file=stderr)
        return exitcodes.POLICY_FAILED
    return exitcodes.OK
