"""What a lint rule sees: the set's YAML document with positions, the loaded set, the reference audits.

A rule module under :mod:`ffaudit.lint.rules` defines::

    ID = "bond-length-radii"            # kebab-case, unique
    SEVERITY = Severity.WARNING         # default severity; the driver stamps it unless the rule set one
    FAMILY = "physics"                  # structure | physics | torsion
    OPTIONS = {"tolerance": 0.15}       # declared options with defaults (documented in the docstring)
    NEEDS_REFERENCE = False             # True: only runs when a reference library is given

    def check(ctx: LintContext, options: Mapping[str, Any]) -> Iterator[Finding]: ...

and a docstring whose first line is a summary and which contains a ``Passing:`` and a ``Failing:`` YAML
example (the docs reuse it). ``check`` yields bare findings (code may be left as the rule id, severity may be
left to the driver); locate them with :meth:`LintContext.finding`, which fills path, line, column and
document path from the entry's position in the file.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

from ffaudit.findings import DocPath, Finding, Severity
from ffaudit.paramset.model import Entry, ParameterSet

if TYPE_CHECKING:
    from ffaudit.audit import MoleculeAudit
    from ffaudit.paramset.yamlload import YamlDocument


@dataclass
class LintContext:
    """Inputs of one lint run over one set file.

    ``doc`` is the file as read (plain data + marks); ``pset`` the loaded set, or None when the file has
    load errors (rules that need it are then skipped); ``reference`` the audits of the reference library
    with this set, or None when no reference library was given.
    """

    path: str
    doc: YamlDocument
    pset: ParameterSet | None = None
    reference: Sequence[MoleculeAudit] | None = None
    extra: dict[str, Any] = field(default_factory=dict)

    def finding(
        self,
        rule: str,
        message: str,
        doc_path: DocPath,
        *,
        severity: Severity | None = None,
        hint: str | None = None,
        cause: str | None = None,
    ) -> Finding:
        """A finding located at ``doc_path`` of this file (nearest marked ancestor)."""
        mark = self.doc.locate(doc_path)
        line, column = mark if mark is not None else (None, None)
        return Finding(
            code=rule,
            severity=severity if severity is not None else Severity.WARNING,
            message=message,
            path=self.path,
            line=line,
            column=column,
            doc_path=tuple(doc_path),
            hint=hint,
            cause=cause,
            rule=rule,
        )

    def entry_finding(
        self,
        rule: str,
        entry: Entry,
        message: str,
        field_name: str | None = None,
        **kwargs: Any,
    ) -> Finding:
        """A finding at an entry of the loaded set (``entry.doc_path``, optionally one of its fields).

        Entries from another file of a layered set are located in that file by their own location.
        """
        doc_path = tuple(entry.doc_path) + ((field_name,) if field_name else ())
        finding = self.finding(rule, message, doc_path, **kwargs)
        if entry.location.path != self.path:
            finding = finding.with_(
                path=entry.location.path, line=entry.location.line, column=entry.location.column
            )
        return finding
