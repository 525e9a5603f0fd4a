"""``--format table`` for findings (the default of ``ffaudit lint``): a table per file, for people.

Top to bottom: what was checked (the set files, the loaded set's name, version and hash, the reference
library); per file, one row per finding with ``line:column``, severity, rule and the message with its fix
hint below it; the totals by severity; the rules that did not run and why; notes (findings suppressed by
the set's header); the result (``pass`` / ``fail``, and why).

Written for a terminal (its width, severity in colour) or, anywhere else, as plain text
:data:`~ffaudit.report.table.PLAIN_WIDTH` (100) columns wide with no colour or escape codes, so the output
is the same byte for byte on every machine (gold-file tested). Text from the data is never read as rich
markup.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import TextIO

from rich import box
from rich.console import Console, RenderableType
from rich.table import Table
from rich.text import Text

from ffaudit.findings import Finding, Severity
from ffaudit.report.findings_report import FindingsReport
from ffaudit.report.table import HASH_DIGITS, make_console

SEVERITY_STYLES: dict[Severity, str] = {
    Severity.ERROR: "bold red",
    Severity.WARNING: "yellow",
    Severity.INFO: "cyan",
}
NO_FILE = "(not in a file)"


def _plural(n: int, word: str) -> str:
    return f"{n} {word}" if n == 1 else f"{n} {word}s"


def header_lines(report: FindingsReport) -> list[str]:
    """What was checked, one line each."""
    lines = [f"ffaudit {report.command}: {', '.join(report.sources) or '(no sources)'}"]
    for pset in report.parameter_sets:
        digest = str(pset.get("hash", ""))[:HASH_DIGITS]
        lines.append(f"parameter set: {pset.get('name')} {pset.get('version')} (sha256 {digest})")
        if pset.get("demonstration"):
            lines.append("  demonstration set - not for production simulations")
    if report.reference is not None:
        ref = report.reference
        lines.append(
            f"reference library: {ref.get('path')} ({_plural(int(ref.get('records', 0)), 'record')}, "
            f"{ref.get('unreadable', 0)} unreadable)"
        )
    return lines


def findings_table(findings: Sequence[Finding]) -> Table:
    """The rows of one file's findings."""
    table = Table(box=box.SIMPLE_HEAD, show_edge=False, pad_edge=False, expand=False)
    table.add_column("where", no_wrap=True)
    table.add_column("severity", no_wrap=True)
    table.add_column("rule", no_wrap=True)
    table.add_column("message", overflow="fold", ratio=1)
    for f in findings:
        if f.line is not None:
            where = f"{f.line}:{f.column}" if f.column is not None else str(f.line)
        elif f.record is not None:
            where = f"record {f.record}"
        else:
            where = "-"
        message = Text(f.message)
        if f.code != (f.rule or f.code):
            message = Text(f"[{f.code}] ") + message
        if f.hint:
            message.append(f"\nhint: {f.hint}")
        table.add_row(
            Text(where),
            Text(f.severity.label, style=SEVERITY_STYLES[f.severity]),
            Text(f.rule or f.code),
            message,
        )
    return table


def _grouped(report: FindingsReport) -> list[tuple[str, list[Finding]]]:
    groups: dict[str, list[Finding]] = {}
    for f in report.findings:
        groups.setdefault(f.path or NO_FILE, []).append(f)
    return list(groups.items())


def summary_lines(report: FindingsReport) -> list[str]:
    counts = report.counts()
    ran = [r for r in report.rules if r.status == "run"]
    lines = [
        f"{_plural(counts['error'], 'error')}, {_plural(counts['warning'], 'warning')}, "
        f"{counts['info']} info ({_plural(len(ran), 'rule')} run)"
    ]
    reasons: dict[str, list[str]] = {}
    for rule in report.rules:
        if rule.status != "run":
            reasons.setdefault(f"{rule.status}: {rule.reason or rule.status}", []).append(rule.id)
    for reason, ids in sorted(reasons.items()):
        lines.append(f"not run ({reason}): {', '.join(ids)}")
    lines += list(report.notes)
    if report.failed:
        why = "errors" if counts["error"] else "warnings with --strict"
        lines.append(f"result: fail ({why})")
    else:
        lines.append("result: pass")
    return lines


def _emit(console: Console, out: TextIO, renderable: RenderableType) -> None:
    with console.capture() as capture:
        console.print(renderable)
    for line in capture.get().splitlines():
        out.write(line.rstrip(" ") + "\n")


def write_findings_table(out: TextIO, report: FindingsReport) -> None:
    """Render ``report`` to ``out`` (see the module docstring)."""
    console = make_console(out)
    _emit(console, out, Text("\n".join(header_lines(report))))
    for path, findings in _grouped(report):
        out.write("\n")
        _emit(console, out, Text(path, style="bold"))
        _emit(console, out, findings_table(findings))
    if not report.findings:
        out.write("\n")
        _emit(console, out, Text("no findings"))
    out.write("\n")
    _emit(console, out, Text("\n".join(summary_lines(report))))
    out.flush()
