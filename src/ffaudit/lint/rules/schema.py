"""The file is not a valid parameter-set document: YAML, schema or format errors.

Reports the loader's findings about the document as a whole: YAML syntax and encoding (``yaml-syntax``),
tags other than plain data (``unsafe-tag``), merge keys (``merge-key``), lists or mappings used as keys
(``complex-key``), alias bombs (``alias-expansion``), oversized files (``file-too-large``), every JSON
Schema error (``schema``: a wrong type, a missing or unexpected field, a value out of range), a kind
whose constants need an energy convention that the header does not declare (``missing-convention``),
``.inf`` or ``.nan`` values (``non-finite``), ``*`` where the kind allows none (``bad-wildcard``), a
layered file with units different from the first file's (``units-mismatch``) and a set file that is
missing or unreadable (``missing-file``, ``unreadable-file``; the command exits 2 for those). The
finding code is the loader's; all of these are errors, and the rule cannot be disabled, since a set with
any of them does not load.

It also checks the header's ``lint.disable`` list: a name that is no lint rule (``unknown-lint-rule``)
and a rule that cannot be switched off (``required-lint-rule``) are warnings.

Passing:

    bonds:
      - classes: [c4, c4]
        k: 600.0
        r0: 1.53

Failing:

    bonds:
      - classes: [c4, c4]
        k: stiff          # a number is expected
        r0: 1.53
"""

from __future__ import annotations

from collections.abc import Iterator, Mapping
from typing import Any

from ffaudit.findings import Finding, Severity
from ffaudit.lint.context import LintContext
from ffaudit.lint.loaded import documents, load_findings_with

ID = "schema"
SEVERITY = Severity.ERROR
FAMILY = "structure"
OPTIONS: dict[str, Any] = {}
NEEDS_REFERENCE = False
NEEDS_SET = False
LOAD_CODES = frozenset(
    {
        "missing-file",
        "unreadable-file",
        "file-too-large",
        "yaml-syntax",
        "unsafe-tag",
        "merge-key",
        "complex-key",
        "alias-expansion",
        "schema",
        "missing-convention",
        "non-finite",
        "bad-wildcard",
        "units-mismatch",
    }
)


def check(ctx: LintContext, options: Mapping[str, Any]) -> Iterator[Finding]:
    """The loader's document-level findings, then the header's lint settings of every file."""
    yield from load_findings_with(ctx, LOAD_CODES)
    from ffaudit.lint.registry import all_rules

    rules = {rule.id: rule for rule in all_rules()}
    for path, doc in documents(ctx).items():
        disabled = _disable_list(doc.data)
        for i, name in enumerate(disabled):
            if not isinstance(name, str):
                continue  # the schema reports it
            where = ("header", "lint", "disable", i)
            rule = rules.get(name)
            if rule is None:
                finding = ctx.finding(
                    ID,
                    f"header.lint.disable names {name!r}, which is not a lint rule",
                    where,
                    severity=Severity.WARNING,
                    hint="see 'ffaudit lint --list-rules' for the rule ids",
                )
            elif rule.required:
                finding = ctx.finding(
                    ID,
                    f"rule {name!r} cannot be disabled: it reports problems that stop the set from loading",
                    where,
                    severity=Severity.WARNING,
                    hint="remove it from header.lint.disable and fix what it reports",
                )
            else:
                continue
            yield _in_file(finding.with_(code=_code(rule)), path, doc, where)


def _code(rule: Any) -> str:
    return "unknown-lint-rule" if rule is None else "required-lint-rule"


def _disable_list(data: Any) -> list[Any]:
    header = data.get("header") if isinstance(data, dict) else None
    lint = header.get("lint") if isinstance(header, dict) else None
    value = lint.get("disable") if isinstance(lint, dict) else None
    return value if isinstance(value, list) else []


def _in_file(finding: Finding, path: str, doc: Any, where: tuple[str | int, ...]) -> Finding:
    mark = doc.locate(where)
    if mark is None:
        return finding.with_(path=path)
    return finding.with_(path=path, line=mark[0], column=mark[1])
