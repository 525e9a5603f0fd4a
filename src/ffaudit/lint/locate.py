"""Locating lint findings at a field below an entry (e.g. one term of a dihedral series)."""

from __future__ import annotations

from typing import Any

from ffaudit.findings import Finding
from ffaudit.lint.context import LintContext
from ffaudit.paramset.model import Entry


def sub_finding(
    ctx: LintContext,
    rule: str,
    entry: Entry,
    sub_path: tuple[str | int, ...],
    message: str,
    **kwargs: Any,
) -> Finding:
    """A finding at ``entry.doc_path + sub_path`` (e.g. ``("terms", 1, "phase")``).

    For an entry read from another file of a layered set (whose positions ``ctx.doc`` does not know) the
    finding is placed at the entry itself, as :meth:`LintContext.entry_finding` does.
    """
    if entry.location.path != ctx.path:
        return ctx.entry_finding(rule, entry, message, **kwargs)
    return ctx.finding(rule, message, (*entry.doc_path, *sub_path), **kwargs)
