"""The input of the findings writers (JSON, SARIF, JUnit, table): findings plus what produced them.

Built by :meth:`ffaudit.lint.driver.LintResult.to_report` for ``ffaudit lint``; any other command that
yields findings (``compare``) can build one by hand. The writers read nothing else, so each can be tested
with hand-made data.
"""

from __future__ import annotations

from collections import Counter
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

from ffaudit import __version__
from ffaudit.findings import Finding, Severity

RULE_STATUSES: tuple[str, ...] = ("run", "skipped", "disabled")


@dataclass(frozen=True)
class RuleDescription:
    """A rule (or finding code) as the outputs describe it."""

    id: str
    summary: str
    description: str = ""
    severity: Severity = Severity.WARNING
    family: str = ""
    status: str = "run"
    """``run``, ``skipped`` (could not run: ``reason`` says why) or ``disabled``."""
    reason: str | None = None
    help_uri: str | None = None
    """An absolute URI of the rule's documentation, when there is one."""


@dataclass(frozen=True)
class FindingsReport:
    """What a command found. ``strict`` decides whether warnings fail (:attr:`failed`)."""

    command: str
    findings: tuple[Finding, ...]
    rules: tuple[RuleDescription, ...] = ()
    sources: tuple[str, ...] = ()
    parameter_sets: tuple[Mapping[str, Any], ...] = ()
    reference: Mapping[str, Any] | None = None
    strict: bool = False
    notes: tuple[str, ...] = ()
    tool_version: str = __version__

    def counts(self) -> dict[str, int]:
        """Findings per severity label (``error``, ``warning``, ``info``), every label present."""
        found = Counter(f.severity.label for f in self.findings)
        return {s.label: found.get(s.label, 0) for s in sorted(Severity, reverse=True)}

    @property
    def worst(self) -> Severity | None:
        return max((f.severity for f in self.findings), default=None)

    @property
    def failed(self) -> bool:
        """Any error; with ``strict``, any warning too."""
        floor = Severity.WARNING if self.strict else Severity.ERROR
        return any(f.severity >= floor for f in self.findings)

    def fails(self, finding: Finding) -> bool:
        """Does this one finding fail the run (error, or warning under ``strict``)?"""
        return finding.severity >= (Severity.WARNING if self.strict else Severity.ERROR)

    def rule(self, rule_id: str) -> RuleDescription | None:
        for rule in self.rules:
            if rule.id == rule_id:
                return rule
        return None
