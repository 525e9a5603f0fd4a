"""Exceptions, named by cause.

Exceptions are only for "cannot go on": a parameter set that cannot be loaded, an input file that cannot be
opened or whose format is unknown, a usage error. Everything that can be reported and survived (a bad record,
an unmatched atom, a missing parameter) is a :class:`ffaudit.findings.Finding` instead.

Every exception here derives from :class:`FfauditError`; the command line catches that base class, prints the
message (no traceback) and exits with :data:`ffaudit.cli.exitcodes.USAGE_OR_INPUT` (2).
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from ffaudit.findings import Finding


class FfauditError(Exception):
    """Base class of every error ffaudit raises on purpose."""


class UsageError(FfauditError):
    """The command line or API call is inconsistent (bad option value, conflicting options)."""


class InputFileError(FfauditError):
    """A structure library cannot be opened or read at all (missing file, unknown format, bad gzip header).

    Individual bad records inside a readable file are *not* errors: they become unreadable records.
    """


class ParameterSetError(FfauditError):
    """A parameter set cannot be loaded. ``findings`` lists every problem found, not only the first."""

    def __init__(self, message: str, findings: Sequence[Finding] = ()) -> None:
        super().__init__(message)
        self.findings: tuple[Finding, ...] = tuple(findings)

    def __str__(self) -> str:
        head = super().__str__()
        if not self.findings:
            return head
        lines = [head] + ["  " + f.format() for f in self.findings]
        return "\n".join(lines)
