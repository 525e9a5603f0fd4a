"""Locating lint findings at an environment class or one of its SMARTS patterns, in whichever file of a
layered set defined it."""

from __future__ import annotations

from typing import Any

from ffaudit.findings import DocPath, Finding
from ffaudit.lint.context import LintContext
from ffaudit.lint.loaded import documents
from ffaudit.paramset.model import EnvClass, SourceLocation


def class_doc_path(ctx: LintContext, cls: EnvClass) -> DocPath:
    """``("classes", i)`` of ``cls`` in the file that defined it; ``()`` when that file is not known."""
    path = cls.location.path if cls.location is not None else ctx.path
    doc = documents(ctx).get(path)
    data = doc.data if doc is not None else None
    items = data.get("classes") if isinstance(data, dict) else None
    if not isinstance(items, list):
        return ()
    for i in range(len(items) - 1, -1, -1):
        item = items[i]
        if isinstance(item, dict) and item.get("id") == cls.id:
            return ("classes", i)
    return ()


def class_finding(
    ctx: LintContext,
    rule: str,
    cls: EnvClass,
    message: str,
    pattern: int | None = None,
    **kwargs: Any,
) -> Finding:
    """A finding at class ``cls`` (its ``id:``), or at its SMARTS pattern number ``pattern`` (0-based).

    The position is read from the defining file's marks when that file is known, else taken from the
    class's own recorded locations; ``kwargs`` go to :meth:`LintContext.finding`.
    """
    base = class_doc_path(ctx, cls)
    where: DocPath = (
        base + (("smarts", pattern) if pattern is not None else ("id",)) if base else ()
    )
    path = cls.location.path if cls.location is not None else ctx.path
    finding = ctx.finding(rule, message, where, **kwargs)
    doc = documents(ctx).get(path)
    mark = doc.locate(where) if doc is not None and where else None
    if mark is None:
        location: SourceLocation | None = cls.location
        if pattern is not None and pattern < len(cls.smarts_locations):
            location = cls.smarts_locations[pattern] or cls.location
        if location is None:
            return finding.with_(path=path, line=None, column=None)
        return finding.with_(path=location.path, line=location.line, column=location.column)
    return finding.with_(path=path, line=mark[0], column=mark[1])
