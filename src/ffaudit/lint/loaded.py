"""What the driver hands the rules besides the loaded set: the sources, every file's document, the
loader's findings. Stored in :attr:`LintContext.extra` under the keys below.

For a context built by hand (tests of one rule) the values are derived from ``ctx.path`` and ``ctx.doc``:
the sources are ``(ctx.path,)``, the documents ``{ctx.path: ctx.doc}`` and the loader's findings are
computed once with :func:`ffaudit.paramset.load.iter_load_findings` and cached in the context.
"""

from __future__ import annotations

from collections.abc import Collection, Iterator, Mapping
from typing import TYPE_CHECKING

from ffaudit.findings import Finding

if TYPE_CHECKING:
    from ffaudit.lint.context import LintContext
    from ffaudit.paramset.yamlload import YamlDocument

SOURCES = "ffaudit.lint.sources"
"""The sources as given to the loader (paths or embedded names), base layer first."""
DOCUMENTS = "ffaudit.lint.documents"
"""Display path -> :class:`YamlDocument` of every file of the set that could be read."""
LOAD_FINDINGS = "ffaudit.lint.load_findings"
"""Every finding of loading the set (YAML, schema, semantic checks, layering), in file then line order."""


def sources(ctx: LintContext) -> tuple[str, ...]:
    value = ctx.extra.get(SOURCES)
    return tuple(value) if value else (ctx.path,)


def documents(ctx: LintContext) -> Mapping[str, YamlDocument]:
    value = ctx.extra.get(DOCUMENTS)
    return value if value is not None else {ctx.path: ctx.doc}


def load_findings(ctx: LintContext) -> tuple[Finding, ...]:
    """The loader's findings for the set of ``ctx`` (computed once per context). Never raises."""
    cached = ctx.extra.get(LOAD_FINDINGS)
    if cached is None:
        from ffaudit.paramset.load import iter_load_findings

        given = sources(ctx)
        cached = tuple(iter_load_findings(given[0], *given[1:]))
        ctx.extra[LOAD_FINDINGS] = cached
    return tuple(cached)


def load_findings_with(ctx: LintContext, codes: Collection[str]) -> Iterator[Finding]:
    """The loader's findings whose code is one of ``codes``, in order."""
    for finding in load_findings(ctx):
        if finding.code in codes:
            yield finding
