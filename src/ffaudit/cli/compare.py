"""``ffaudit compare OLD NEW --reference LIBRARY``: what a parameter-set change does to a reference library.

OLD and NEW are each a path, an embedded set name, or ``git:REV:path`` (``git show REV:path``, run in
``--repo DIR`` or the current directory; see :mod:`ffaudit.paramset.git_source`). ``--params-base SET``
(repeatable) layers sets under *both* OLD and NEW. The computation is :func:`ffaudit.compare.compare_sets`;
its module docstring documents the tolerance and the ``--allow`` grammar.

Exit codes: 0 no regression beyond the tolerance (after ``--allow``), 1 regressions, 2 usage error or an
unreadable parameter set or library.
"""

from __future__ import annotations

import argparse
import importlib
import json
from typing import Any, TextIO

from ffaudit.cli import exitcodes
from ffaudit.cli.common import add_reader_options, reader_options
from ffaudit.compare import (
    DEFAULT_TOLERANCE,
    Comparison,
    allowed_by,
    compare_sets,
    parse_allow,
)
from ffaudit.errors import UsageError
from ffaudit.findings import Severity
from ffaudit.paramset.model import ParameterSet

FORMATS: tuple[str, ...] = ("table", "json", "junit", "sarif")

JUNIT_SUITE = "ffaudit compare"


def add_parser(sub: Any) -> None:
    p = sub.add_parser(
        "compare",
        help="compare two parameter sets on a reference library (regressions, gains, value changes)",
        description="Audit the reference library with OLD and NEW and report terms and molecules that "
        "lost or gained coverage, entries removed, added or changed (relative change; bond wavenumber "
        "shift) and the score distribution before and after. OLD/NEW: a path, an embedded set name, or "
        "git:REV:path. Allow rules: CATEGORY:PATTERN with CATEGORY removed, changed, lost or *, and a "
        "glob PATTERN matched against entry labels KIND:C1-C2 (optionally @order, @ring/@noring) or, for "
        "lost, molecule names and term labels. Exit codes: 0 no regression, 1 regressions, 2 usage or "
        "unreadable input.",
    )
    p.add_argument("old", metavar="OLD", help="the set before the change")
    p.add_argument("new", metavar="NEW", help="the set after the change")
    p.add_argument(
        "--reference",
        required=True,
        metavar="LIBRARY",
        help="reference library (any readable format)",
    )
    add_reader_options(p)
    p.add_argument(
        "--params-base",
        action="append",
        metavar="SET",
        help="a set layered under both OLD and NEW (repeatable, base first)",
    )
    p.add_argument(
        "--repo",
        metavar="DIR",
        help="the git repository git:REV:path is read from (default: the current directory's)",
    )
    p.add_argument(
        "--tolerance",
        type=float,
        default=DEFAULT_TOLERANCE,
        metavar="REL",
        help=f"relative value change not counted as a regression (default {DEFAULT_TOLERANCE:g})",
    )
    p.add_argument(
        "--allow",
        action="append",
        default=[],
        metavar="CATEGORY:PATTERN",
        help="allow intentional changes, e.g. removed:bond:c4-cl, changed:*, lost:MOLECULE (repeatable)",
    )
    p.add_argument("--format", choices=FORMATS, default="table")
    p.add_argument(
        "-o", "--output", metavar="FILE", default="-", help="output file (default stdout)"
    )
    p.set_defaults(run=run)


def _load(spec: str, base: list[str], repo: str | None) -> ParameterSet:
    from ffaudit.paramset.git_source import is_git_spec, load_set_spec
    from ffaudit.paramset.load import load_parameter_set

    if not base:
        return load_set_spec(spec, repo)
    if is_git_spec(spec):
        raise UsageError("--params-base cannot be combined with a git:REV:path set")
    return load_parameter_set(*base, spec)


def run(args: argparse.Namespace, stdout: TextIO, stderr: TextIO) -> int:
    from ffaudit.read.open import iter_records
    from ffaudit.report.base import open_output

    rules = [parse_allow(text) for text in args.allow]
    base = list(args.params_base or [])
    old = _load(args.old, base, args.repo)
    new = _load(args.new, base, args.repo)
    records = iter_records(args.reference, args.input_format, **reader_options(args))  # type: ignore[arg-type]
    comparison = compare_sets(old, new, records, tolerance=args.tolerance, allow=rules)
    with open_output(args.output, stdout) as out:
        write_comparison(comparison, args.format, out)
    regressions = comparison.regressions
    if regressions:
        print(
            f"ffaudit compare: {len(regressions)} regressions beyond tolerance "
            f"{comparison.tolerance:g} (not allowed by --allow)",
            file=stderr,
        )
        return exitcodes.POLICY_FAILED
    return exitcodes.OK


def write_comparison(comparison: Comparison, fmt: str, out: TextIO) -> None:
    """Write ``comparison`` in ``fmt`` (``table``, ``json``, ``junit``, ``sarif``) to ``out``."""
    if fmt == "json":
        json.dump(comparison.to_dict(), out, ensure_ascii=False, indent=2, sort_keys=False)
        out.write("\n")
    elif fmt == "table":
        render_table(comparison, out)
    elif fmt == "junit":
        write_junit(comparison, out)
    elif fmt == "sarif":
        write_sarif(comparison, out)
    else:
        raise UsageError(f"unknown output format {fmt!r} (expected one of: {', '.join(FORMATS)})")


# -- table --------------------------------------------------------------------------------------------


def _set_line(what: str, pset: ParameterSet) -> str:
    return f"{what}: {pset.header.name} {pset.header.version} ({', '.join(pset.paths)})"


def _score_line(what: str, d: dict[str, Any]) -> str:
    bins = " ".join(str(n) for _lo, _hi, n in d["histogram"])
    return f"  {what}: n={d['count']} min={d['min']} median={d['median']} histogram[0..1 by 0.1]={bins}"


def render_table(comparison: Comparison, out: TextIO) -> None:
    """A plain-text report for people (deterministic; no colour, no width dependence)."""
    data = comparison.to_dict()
    summary = data["summary"]
    lines = [
        _set_line("old", comparison.old),
        _set_line("new", comparison.new),
        f"reference molecules: {summary['molecules']}; tolerance {comparison.tolerance:g}"
        + (f"; allow {', '.join(data['allow'])}" if data["allow"] else ""),
        "",
        "Entries",
    ]
    if not comparison.entries:
        lines.append("  (no entry differs)")
    for e in data["entries"]:
        where = e["before"] if e["change"] == "removed" else e["after"]
        head = f"  {e['change']:<8} {e['label']}"
        if e["order"] is not None:
            head += f" ({e['order']})"
        head += f"  at {where['path']}:{where['line']}"
        lines.append(head)
        for v in e["values"]:
            rel = "unbounded" if v["relative"] is None else f"{v['relative']:+.2%}"
            lines.append(f"           {v['name']}: {v['before']} -> {v['after']} ({rel})")
        if e["wavenumber"] is not None:
            w = e["wavenumber"]
            lines.append(
                f"           wavenumber: {w['before']:.1f} -> {w['after']:.1f} cm-1 "
                f"(shift {w['shift']:+.1f} cm-1)"
            )
        if e["change"] == "changed" and e["within_tolerance"]:
            lines.append("           within tolerance (not a regression)")
    lines += ["", "Molecules"]
    changed = [m for m in comparison.molecules if m.terms or m.classes or m.direction != "same"]
    if not changed:
        lines.append("  (no molecule changes)")
    for m in changed:
        counts: dict[str, int] = {}
        for t in m.terms:
            counts[t.direction] = counts.get(t.direction, 0) + 1
        detail = ", ".join(f"{n} {d}" for d, n in sorted(counts.items()))
        if m.classes:
            detail += (", " if detail else "") + f"{len(m.classes)} class changes"
        lines.append(
            f"  {m.record.name} (record {m.record.record}): {m.status_before} -> {m.status_after}"
            f"; terms: {detail or 'none changed'}"
        )
        for t in m.lost_terms:
            lines.append(
                f"      lost {t.label_before} atoms {'-'.join(map(str, t.atoms))}: "
                f"{t.tier_before} -> {t.tier_after}" + (f" ({t.cause})" if t.cause else "")
            )
    lines += [
        "",
        "Status (before -> after): "
        + ", ".join(
            f"{s} {summary['status_before'][s]} -> {summary['status_after'][s]}"
            for s in summary["status_before"]
        ),
        "Scores",
        _score_line("before", summary["score_before"]),
        _score_line("after ", summary["score_after"]),
        "",
    ]
    regressions = comparison.regressions
    if regressions:
        lines.append(f"Regressions: {len(regressions)}")
        lines += [f"  {f.format()}" for f in regressions]
    else:
        lines.append("Regressions: none beyond tolerance")
    allowed = comparison.allowed
    if allowed:
        lines.append(f"Allowed: {len(allowed)}")
        lines += [f"  {f.format()}" for f in allowed]
    out.write("\n".join(lines) + "\n")


# -- CI formats ---------------------------------------------------------------------------------------


def _junit_cases(comparison: Comparison) -> list[tuple[str, str | None]]:
    """(test case name, failure text or None) per reference molecule, in input order."""
    by_record: dict[tuple[int, str], list[str]] = {}
    for f in comparison.regressions:
        if f.record is not None:
            by_record.setdefault((f.record, f.molecule or ""), []).append(f.message)
    cases = []
    for m in comparison.molecules:
        name = f"{m.record.record}: {m.record.name}"
        messages = by_record.get((m.record.record, m.record.name))
        cases.append((name, "\n".join(messages) if messages else None))
    return cases


def write_junit(comparison: Comparison, out: TextIO) -> None:
    """JUnit XML: one test case per reference molecule, failure text = what it lost.

    Uses the generic JUnit writer of :mod:`ffaudit.report.junit`; :class:`UsageError` when that module
    is not available in this build.
    """
    try:
        junit = importlib.import_module("ffaudit.report.junit")
    except ImportError as exc:
        raise UsageError(f"--format junit is not available: {exc}") from None
    writer: Any = getattr(junit, "write_junit", None)
    if writer is None:
        raise UsageError("--format junit is not available: ffaudit.report.junit has no write_junit")
    writer(out, JUNIT_SUITE, _junit_cases(comparison))


def write_sarif(comparison: Comparison, out: TextIO) -> None:
    """SARIF 2.1.0: every finding that is not plain information, at its parameter-file line.

    Uses :mod:`ffaudit.report.sarif`; :class:`UsageError` when that module is not available.
    """
    try:
        sarif = importlib.import_module("ffaudit.report.sarif")
    except ImportError as exc:
        raise UsageError(f"--format sarif is not available: {exc}") from None
    writer: Any = getattr(sarif, "write_sarif", None)
    if writer is None:
        raise UsageError("--format sarif is not available: ffaudit.report.sarif has no write_sarif")
    findings = [
        f for f in comparison.findings if f.severity > Severity.INFO or allowed_by(f) is not None
    ]
    writer(out, findings)
