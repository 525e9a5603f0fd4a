"""The lint driver: read the set, load it, audit the reference library, run the enabled rules, stamp and
sort what they yield.

One run over a set (one file, or several layered base first as :func:`ffaudit.paramset.load.load_parameter_set`
layers them):

1. every file is read (:func:`ffaudit.paramset.yamlload.read_yaml`) and the set is loaded; the loader's
   findings (YAML, schema, semantic checks, layering) are kept for the structure rules that report them
   (each loader code belongs to one rule, :func:`ffaudit.lint.registry.rule_for_load_code`), so every load
   error comes out as a finding with a rule id;
2. with a reference library (any input format ffaudit reads), its records are audited once with the
   loaded set (:class:`ffaudit.audit.AuditContext`) and handed to the rules as ``ctx.reference``;
3. every enabled rule runs on one :class:`LintContext`, whose ``path`` and ``doc`` are the top (last)
   file and whose ``pset`` is the layered set (None when it did not load); rules that need the set or a
   reference library are skipped, with the reason recorded, when there is none;
4. each finding gets the rule's id and, unless the rule chose one (:data:`SEVERITY_EXPLICIT`), the rule's
   default severity; findings located in a file whose header lists the rule under ``lint.disable`` are
   dropped (and counted); the rest are sorted by file (layer order), line and column.

Which rules run: all of them (:func:`ffaudit.lint.registry.default_preset`), minus ``disable``, or only
``enable_only``; *required* rules (those reporting load errors) always run and cannot be disabled.

Entry points over the same run: iterate (:func:`iter_lint_findings`), the whole result (:func:`lint`),
raise on the first error (:func:`raise_for_lint_errors`) or yes/no (:func:`lint_is_clean`).

Errors: :class:`ffaudit.errors.UsageError` for an unknown rule id or option; a reference library that
cannot be opened raises :class:`ffaudit.errors.InputFileError`. A missing or unreadable set file is not
an exception but a ``missing-file`` / ``unreadable-file`` finding (:attr:`LintResult.unreadable_sources`
tells the command to exit 2). A rule that raises becomes a ``rule-failed`` error finding; the run goes on.
"""

from __future__ import annotations

import contextlib
import os
from collections import Counter
from collections.abc import Iterable, Iterator, Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from ffaudit import __version__
from ffaudit.errors import FfauditError, ParameterSetError, UsageError
from ffaudit.findings import Finding, Severity
from ffaudit.lint import loaded
from ffaudit.lint.context import LintContext
from ffaudit.lint.registry import Rule, all_rules, rule_for_load_code
from ffaudit.report.findings_report import FindingsReport, RuleDescription

SetSource = str | os.PathLike[str]
ReferenceInput = str | os.PathLike[str] | Sequence[Any]

SEVERITY_EXPLICIT = "severity_explicit"
"""Key in ``Finding.extra`` marking a severity the rule chose itself (the driver keeps it)."""

UNREADABLE_CODES = frozenset({"missing-file", "unreadable-file"})
"""Loader codes meaning a set file could not be read at all (the command exits 2)."""


class LintFailed(FfauditError):
    """Raised by :func:`raise_for_lint_errors`; ``findings`` holds every finding of the run."""

    def __init__(self, message: str, findings: Sequence[Finding] = ()) -> None:
        super().__init__(message)
        self.findings = tuple(findings)


@dataclass(frozen=True)
class LintResult:
    """Everything one lint run found and did.

    ``rules`` are the rules that ran; ``skipped`` (rule id, reason) those that could not run (no
    reference library, the set did not load) and ``disabled`` those switched off on the command line or
    by ``enable_only``; ``suppressed`` counts, per rule, findings dropped by a header's ``lint.disable``.
    """

    sources: tuple[str, ...]
    findings: tuple[Finding, ...]
    rules: tuple[Rule, ...] = ()
    skipped: tuple[tuple[str, str], ...] = ()
    disabled: tuple[str, ...] = ()
    suppressed: tuple[tuple[str, int], ...] = ()
    parameter_sets: tuple[Mapping[str, Any], ...] = ()
    reference: Mapping[str, Any] | None = None

    def has_errors(self) -> bool:
        return any(f.severity >= Severity.ERROR for f in self.findings)

    def has_warnings(self) -> bool:
        """True when any finding is a warning or worse."""
        return any(f.severity >= Severity.WARNING for f in self.findings)

    @property
    def worst(self) -> Severity | None:
        return max((f.severity for f in self.findings), default=None)

    def counts(self) -> dict[str, int]:
        """Findings per severity label, every label present."""
        found = Counter(f.severity.label for f in self.findings)
        return {s.label: found.get(s.label, 0) for s in sorted(Severity, reverse=True)}

    def fails(self, strict: bool = False) -> bool:
        """The lint policy: any error fails; with ``strict`` any warning fails too."""
        return self.has_warnings() if strict else self.has_errors()

    @property
    def unreadable_sources(self) -> tuple[Finding, ...]:
        """``missing-file`` / ``unreadable-file`` findings: set files that could not be read at all."""
        return tuple(f for f in self.findings if f.code in UNREADABLE_CODES)

    def to_report(self, strict: bool = False) -> FindingsReport:
        """The result as the input of the findings writers (JSON, SARIF, JUnit, table)."""
        ran = {r.id for r in self.rules}
        skipped = dict(self.skipped)
        descriptions = []
        for rule in all_rules():
            if rule.id in ran:
                status, reason = "run", None
            elif rule.id in skipped:
                status, reason = "skipped", skipped[rule.id]
            else:
                status, reason = "disabled", "switched off for this run"
            descriptions.append(
                RuleDescription(
                    id=rule.id,
                    summary=rule.summary,
                    description=rule.description,
                    severity=rule.severity,
                    family=rule.family,
                    status=status,
                    reason=reason,
                )
            )
        notes = [
            f"{n} {rule_id} finding{'s' if n != 1 else ''} suppressed by header lint.disable"
            for rule_id, n in self.suppressed
        ]
        return FindingsReport(
            command="lint",
            tool_version=__version__,
            findings=self.findings,
            rules=tuple(descriptions),
            sources=self.sources,
            parameter_sets=self.parameter_sets,
            reference=self.reference,
            strict=strict,
            notes=tuple(notes),
        )


def combine(results: Sequence[LintResult]) -> LintResult:
    """One result from several independent runs (``ffaudit lint --each``), in the given order."""
    if len(results) == 1:
        return results[0]
    ran: dict[str, Rule] = {}
    skipped: dict[str, str] = {}
    suppressed: Counter[str] = Counter()
    references = [r.reference for r in results if r.reference is not None]
    for result in results:
        ran.update((r.id, r) for r in result.rules)
        for rule_id, reason in result.skipped:
            skipped.setdefault(rule_id, reason)
        suppressed.update(dict(result.suppressed))
    order = {r.id: i for i, r in enumerate(all_rules())}
    return LintResult(
        sources=tuple(s for r in results for s in r.sources),
        findings=tuple(f for r in results for f in r.findings),
        rules=tuple(sorted(ran.values(), key=lambda r: order[r.id])),
        skipped=tuple((k, v) for k, v in sorted(skipped.items()) if k not in ran),
        disabled=tuple(sorted({d for r in results for d in r.disabled})),
        suppressed=tuple(sorted(suppressed.items())),
        parameter_sets=tuple(p for r in results for p in r.parameter_sets),
        reference=references[0] if references else None,
    )


# -- the run ------------------------------------------------------------------------------------------


class _Context(LintContext):
    """The driver's context: :meth:`finding` marks a severity the rule passed explicitly, so the driver
    stamps the rule's default severity only on findings whose rule left it open."""

    def finding(
        self,
        rule: str,
        message: str,
        doc_path: tuple[str | int, ...],
        *,
        severity: Severity | None = None,
        hint: str | None = None,
        cause: str | None = None,
    ) -> Finding:
        made = super().finding(rule, message, doc_path, severity=severity, hint=hint, cause=cause)
        if severity is None:
            return made
        return made.with_(extra=(*made.extra, (SEVERITY_EXPLICIT, True)))


@dataclass
class _File:
    source: str
    shown: str
    path: Path | None


def _resolve(source: SetSource) -> _File:
    """Where a source is: an existing path, else an embedded set name, else nowhere (the loader reports)."""
    from ffaudit.paramset.load import EMBEDDED_PREFIX, embedded_set_names, embedded_set_path

    text = os.fspath(source)
    if os.path.exists(text):
        return _File(text, text, Path(text))
    if isinstance(source, str) and source in embedded_set_names():
        return _File(text, EMBEDDED_PREFIX + source, embedded_set_path(source))
    return _File(text, text, None)


def _normalise_sources(sources: SetSource | Iterable[SetSource] | None) -> list[SetSource]:
    if sources is None:
        from ffaudit.paramset.load import DEFAULT_SET

        return [DEFAULT_SET]
    if isinstance(sources, (str, os.PathLike)):
        return [sources]
    listed = list(sources)
    if not listed:
        from ffaudit.paramset.load import DEFAULT_SET

        return [DEFAULT_SET]
    return listed


def _select_rules(
    disable: Iterable[str], enable_only: Iterable[str] | None
) -> tuple[list[Rule], list[str]]:
    rules = all_rules()
    known = {r.id: r for r in rules}
    off = set(disable)
    wanted = set(enable_only) if enable_only is not None else None
    unknown = sorted((off | (wanted or set())) - set(known))
    if unknown:
        raise UsageError(
            f"unknown lint rule{'s' if len(unknown) > 1 else ''} {', '.join(map(repr, unknown))} "
            f"(known rules: {', '.join(known)}; see 'ffaudit lint --list-rules')"
        )
    required = sorted(r for r in off if known[r].required)
    if required:
        raise UsageError(
            f"lint rule{'s' if len(required) > 1 else ''} {', '.join(map(repr, required))} cannot be "
            "disabled: they report problems that stop the set from loading"
        )
    enabled = [
        r for r in rules if r.required or (r.id not in off and (wanted is None or r.id in wanted))
    ]
    disabled = [r.id for r in rules if r not in enabled]
    return enabled, disabled


def _rule_options(
    enabled: Sequence[Rule], options: Mapping[str, Mapping[str, Any]] | None
) -> dict[str, dict[str, Any]]:
    given = dict(options or {})
    known = {r.id: r for r in all_rules()}
    for rule_id, values in given.items():
        rule = known.get(rule_id)
        if rule is None:
            raise UsageError(f"options given for unknown lint rule {rule_id!r}")
        extra = sorted(set(values) - set(rule.options))
        if extra:
            declared = ", ".join(rule.options) or "none"
            raise UsageError(
                f"lint rule {rule_id!r} has no option {', '.join(map(repr, extra))} "
                f"(its options: {declared})"
            )
    return {r.id: {**r.options, **dict(given.get(r.id, {}))} for r in enabled}


def _header_disables(doc: Any) -> set[str]:
    data = doc.data if doc is not None else None
    header = data.get("header") if isinstance(data, dict) else None
    lint = header.get("lint") if isinstance(header, dict) else None
    value = lint.get("disable") if isinstance(lint, dict) else None
    return {v for v in value if isinstance(v, str)} if isinstance(value, list) else set()


def _audit_reference(
    pset: Any, reference: ReferenceInput, fmt: str | None, reader_options: Mapping[str, Any]
) -> tuple[list[Any], str]:
    if isinstance(reference, (str, os.PathLike)):
        from ffaudit.audit import AuditContext
        from ffaudit.read.open import iter_records

        context = AuditContext(pset)
        path = os.fspath(reference)
        return [context.audit_record(r) for r in iter_records(path, fmt, **reader_options)], path
    audits = list(reference)
    return audits, audits[0].record.path if audits else "<reference>"


@dataclass
class _Run:
    sources: list[SetSource]
    reference: ReferenceInput | None
    disable: Iterable[str]
    enable_only: Iterable[str] | None
    options: Mapping[str, Mapping[str, Any]] | None
    reference_format: str | None = None
    reader_options: Mapping[str, Any] = field(default_factory=dict)

    def execute(self) -> LintResult:
        from ffaudit.audit import parameter_set_info
        from ffaudit.paramset.load import iter_load_findings, load_parameter_set
        from ffaudit.paramset.yamlload import YamlDocument, read_yaml

        enabled, disabled = _select_rules(self.disable, self.enable_only)
        options = _rule_options(enabled, self.options)
        files = [_resolve(s) for s in self.sources]
        shown = tuple(f.shown for f in files)
        docs: dict[str, YamlDocument] = {}
        for f in files:
            if f.path is not None:
                with contextlib.suppress(OSError):  # the loader reports it (unreadable-file)
                    docs[f.shown] = read_yaml(f.path, display_path=f.shown)
        load_findings = tuple(iter_load_findings(self.sources[0], *self.sources[1:]))
        pset = None
        if not any(f.severity >= Severity.ERROR for f in load_findings):
            try:
                pset = load_parameter_set(*self.sources)
            except ParameterSetError as exc:  # not expected after a clean check; keep its findings
                load_findings = load_findings + tuple(exc.findings)
        top = shown[-1]
        ctx = _Context(
            path=top,
            doc=docs.get(top) or YamlDocument(top, None, {}),
            pset=pset,
            extra={
                loaded.SOURCES: tuple(os.fspath(s) for s in self.sources),
                loaded.DOCUMENTS: docs,
                loaded.LOAD_FINDINGS: load_findings,
            },
        )
        skipped: list[tuple[str, str]] = []
        reference_info: dict[str, Any] | None = None
        reference_reason: str | None = None
        if self.reference is not None:
            if pset is None:
                reference_reason = "the set did not load, so the reference library was not audited"
            else:
                audits, path = _audit_reference(
                    pset, self.reference, self.reference_format, self.reader_options
                )
                unreadable = sum(1 for a in audits if a.status == "unreadable")
                reference_info = {"path": path, "records": len(audits), "unreadable": unreadable}
                ctx.reference = audits
                if len(audits) == unreadable:
                    reference_reason = f"the reference library {path} has no readable molecule"
        else:
            reference_reason = "needs a reference library (--reference LIBRARY)"

        found: list[Finding] = []
        ran: list[Rule] = []
        for rule in enabled:
            if rule.needs_set and pset is None:
                skipped.append((rule.id, "the set has load errors"))
                continue
            if rule.needs_reference and ctx.reference is None:
                skipped.append((rule.id, reference_reason or "no reference library"))
                continue
            ran.append(rule)
            found.extend(self._run_rule(rule, ctx, options[rule.id]))
        claimed = {code for rule in ran for code in rule.load_codes}
        for (
            finding
        ) in load_findings:  # a code no rule declares still shows, under the fallback rule
            if finding.code not in claimed:
                found.append(_stamp(finding, rule_for_load_code(finding.code), Severity.ERROR))

        required = {r.id for r in all_rules() if r.required}
        per_file = {name: _header_disables(doc) - required for name, doc in docs.items()}
        everywhere = set().union(*per_file.values()) if per_file else set()
        kept: list[Finding] = []
        suppressed: Counter[str] = Counter()
        for finding in found:
            off = per_file.get(finding.path or "", everywhere)
            if finding.rule in off:
                suppressed[finding.rule or ""] += 1
            else:
                kept.append(finding)
        order = {name: i for i, name in enumerate(shown)}
        kept.sort(
            key=lambda f: (
                order.get(f.path or "", len(order)),
                f.path or "",
                f.line or 0,
                f.column or 0,
                f.record or 0,
                f.rule or "",
                f.code,
                f.message,
            )
        )
        return LintResult(
            sources=shown,
            findings=tuple(kept),
            rules=tuple(ran),
            skipped=tuple(skipped),
            disabled=tuple(disabled),
            suppressed=tuple(sorted(suppressed.items())),
            parameter_sets=(parameter_set_info(pset),) if pset is not None else (),
            reference=reference_info,
        )

    @staticmethod
    def _run_rule(rule: Rule, ctx: LintContext, options: Mapping[str, Any]) -> list[Finding]:
        out: list[Finding] = []
        try:
            for finding in rule.check(ctx, options):
                out.append(_stamp(finding, rule.id, rule.severity))
        except Exception as exc:  # a bug in one rule must not hide the others' findings
            out.append(
                Finding(
                    code="rule-failed",
                    severity=Severity.ERROR,
                    message=f"lint rule {rule.id} failed: {type(exc).__name__}: {exc}",
                    path=ctx.path,
                    rule=rule.id,
                    hint="this is a bug in the rule; the other rules ran. Report it with the set file",
                )
            )
        return out


def _stamp(finding: Finding, rule_id: str, severity: Severity) -> Finding:
    explicit = any(key == SEVERITY_EXPLICIT for key, _ in finding.extra)
    return finding.with_(
        rule=rule_id,
        code=finding.code or rule_id,
        severity=finding.severity if explicit else severity,
    )


def lint(
    sources: SetSource | Iterable[SetSource] | None = None,
    reference: ReferenceInput | None = None,
    disable: Iterable[str] = (),
    enable_only: Iterable[str] | None = None,
    options: Mapping[str, Mapping[str, Any]] | None = None,
    *,
    select: Iterable[str] | None = None,
    reference_format: str | None = None,
    reader_options: Mapping[str, Any] | None = None,
) -> LintResult:
    """Lint one set (``sources``: a path or embedded name, or several layered base first).

    ``reference`` is a structure library (path, any input format; ``reference_format`` and
    ``reader_options`` as for :func:`ffaudit.read.open.iter_records`) or already computed audits;
    ``disable`` switches rules off, ``enable_only`` (or its alias ``select``) runs only the rules named
    (plus the required ones); ``options`` maps rule id -> {option: value}. See the module docstring for
    what raises.
    """
    only = enable_only if enable_only is not None else select
    return _Run(
        _normalise_sources(sources),
        reference,
        tuple(disable),
        tuple(only) if only is not None else None,
        options,
        reference_format,
        dict(reader_options or {}),
    ).execute()


def iter_lint_findings(
    sources: SetSource | Iterable[SetSource] | None = None,
    reference: ReferenceInput | None = None,
    disable: Iterable[str] = (),
    enable_only: Iterable[str] | None = None,
    options: Mapping[str, Mapping[str, Any]] | None = None,
    **kwargs: Any,
) -> Iterator[Finding]:
    """Every finding of :func:`lint` with the same arguments, sorted by file, line and column."""
    yield from lint(sources, reference, disable, enable_only, options, **kwargs).findings


def lint_is_clean(*args: Any, **kwargs: Any) -> bool:
    """Yes/no: does the set lint without errors (arguments as :func:`lint`)?"""
    return not lint(*args, **kwargs).has_errors()


def raise_for_lint_errors(*args: Any, **kwargs: Any) -> LintResult:
    """Raise :class:`LintFailed` with the first error if the set has any; return the result otherwise."""
    result = lint(*args, **kwargs)
    for finding in result.findings:
        if finding.severity >= Severity.ERROR:
            errors = result.counts()["error"]
            raise LintFailed(
                f"{errors} lint error{'s' if errors != 1 else ''}; first: {finding.format()}",
                result.findings,
            )
    return result
