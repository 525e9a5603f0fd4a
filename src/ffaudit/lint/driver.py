"""The lint driver: reads the set, loads it, audits the reference library, runs every enabled rule and
stamps rule id and severity on what the rules yield. Entry points: iterate (:func:`iter_lint_findings`),
yes/no (:func:`LintResult.has_errors`)."""

from __future__ import annotations

from collections.abc import Iterable, Iterator, Mapping, Sequence
from dataclasses import dataclass
from typing import Any

from ffaudit.errors import ParameterSetError
from ffaudit.findings import Finding, Severity
from ffaudit.lint.context import LintContext
from ffaudit.lint.registry import Rule, all_rules


@dataclass(frozen=True)
class LintResult:
    findings: tuple[Finding, ...]
    rules: tuple[Rule, ...]

    def has_errors(self) -> bool:
        return any(f.severity >= Severity.ERROR for f in self.findings)

    def has_warnings(self) -> bool:
        return any(f.severity >= Severity.WARNING for f in self.findings)


def _audit_reference(pset: Any, reference: str) -> list[Any]:
    from ffaudit.audit import AuditContext
    from ffaudit.read.open import iter_records

    context = AuditContext(pset)
    return [context.audit_record(r) for r in iter_records(reference)]


def iter_lint_findings(
    path: str,
    *,
    reference: str | None = None,
    disable: Iterable[str] = (),
    select: Iterable[str] | None = None,
    options: Mapping[str, Mapping[str, Any]] | None = None,
) -> Iterator[Finding]:
    """Findings of every enabled rule for the set file ``path``, sorted by file position.

    Raises ``ValueError`` for an unknown rule id in ``disable``/``select``, and what
    :func:`ffaudit.paramset.yamlload.read_yaml` raises for a file that cannot be read at all.
    """
    yield from lint(
        path, reference=reference, disable=disable, select=select, options=options
    ).findings


def lint(
    path: str,
    *,
    reference: str | None = None,
    disable: Iterable[str] = (),
    select: Iterable[str] | None = None,
    options: Mapping[str, Mapping[str, Any]] | None = None,
) -> LintResult:
    from ffaudit.paramset.load import iter_load_findings, load_parameter_set
    from ffaudit.paramset.yamlload import read_yaml

    rules = all_rules()
    known = {r.id for r in rules}
    wanted = set(select) if select else set(known)
    off = set(disable)
    unknown = sorted((wanted | off) - known)
    if unknown:
        raise ValueError(f"unknown lint rule(s): {', '.join(unknown)}")
    doc = read_yaml(path)
    load_findings = [f for f in iter_load_findings(path) if f.severity >= Severity.ERROR]
    pset = None
    if not load_findings:
        try:
            pset = load_parameter_set(path)
        except ParameterSetError as exc:
            load_findings = list(exc.findings)
    if pset is not None:
        off |= set(pset.header.lint_disable)
    audits = _audit_reference(pset, reference) if (reference and pset is not None) else None
    ctx = LintContext(path=str(path), doc=doc, pset=pset, reference=audits)
    ctx.extra["load_findings"] = load_findings
    enabled = [r for r in rules if r.id in wanted and r.id not in off]
    found: list[Finding] = []
    for rule in enabled:
        if rule.needs_set and pset is None:
            continue
        if rule.needs_reference and audits is None:
            continue
        opts = {**rule.options, **((options or {}).get(rule.id, {}))}
        for finding in rule.module.check(ctx, opts):
            found.append(finding.with_(rule=rule.id, code=finding.code or rule.id))
    found.sort(key=Finding.sort_key)
    return LintResult(tuple(found), tuple(enabled))


def rules_by_id(rules: Sequence[Rule]) -> dict[str, Rule]:
    return {r.id: r for r in rules}
