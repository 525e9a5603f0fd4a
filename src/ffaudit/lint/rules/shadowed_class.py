"""A class (or one of its patterns) can never be chosen, because an earlier rule always takes its atoms.

Classes are tried in file order and the first matching pattern wins, so a pattern placed after a more
general one never assigns anything. Without a reference library the rule finds patterns that are
identical to an earlier pattern (as written, or after RDKit's normalisation: ``[C;X4]`` is ``[CX4]``).
With a reference library (``--reference``) it also finds, on the library's molecules, classes whose
patterns match atoms every one of which an earlier rule took (the class is never chosen there), and
patterns of a class that is chosen through other patterns but which themselves never decide an atom.
The message counts the atoms and names the rules that took them; the fix is usually to move the class
before the more general one. Classes that no atom of the library matches at all are the business of
``unused-class``.

Passing:

    classes:
      - {id: c3o, element: C, smarts: ["[CX3]=[OX1]"]}
      - {id: c3, element: C, smarts: ["[CX3]"]}

Failing:

    classes:
      - {id: c3, element: C, smarts: ["[CX3]"]}
      - {id: c3o, element: C, smarts: ["[C;X3]"]}        # the same pattern: never chosen
"""

from __future__ import annotations

from collections import Counter
from collections.abc import Iterator, Mapping
from typing import Any

from rdkit import Chem

from ffaudit.findings import Finding, Severity
from ffaudit.lint.classloc import class_finding
from ffaudit.lint.context import LintContext
from ffaudit.lint.refmatch import reference_stats
from ffaudit.paramset.model import EnvClass

ID = "shadowed-class"
SEVERITY = Severity.WARNING
FAMILY = "structure"
OPTIONS: dict[str, Any] = {}
NEEDS_REFERENCE = False
NEEDS_SET = True


def normalised(smarts: str) -> str:
    """RDKit's own writing of ``smarts`` (``[C;X4]`` -> ``[C&X4]``), or ``smarts`` if it does not parse."""
    mol = Chem.MolFromSmarts(smarts)
    return smarts if mol is None else str(Chem.MolToSmarts(mol))


def _takers(taken: Counter[str], limit: int = 3) -> str:
    parts = [f"{rule.split('/')[0]} ({n})" for rule, n in taken.most_common(limit)]
    more = len(taken) - limit
    return ", ".join(parts) + (f" and {more} more" if more > 0 else "")


def check(ctx: LintContext, options: Mapping[str, Any]) -> Iterator[Finding]:
    """Identical patterns always; with a reference library, classes and patterns that never decide."""
    assert ctx.pset is not None
    seen: dict[str, tuple[EnvClass, int]] = {}
    duplicated: set[tuple[str, int]] = set()
    for cls in ctx.pset.classes:
        earlier: list[tuple[int, EnvClass, int] | None] = []
        for j, smarts in enumerate(cls.smarts):
            key = normalised(smarts)
            if key in seen:
                first, k = seen[key]
                earlier.append((j, first, k))
            else:
                seen[key] = (cls, j)
                earlier.append(None)
        alone = all(item is not None for item in earlier)
        for item in earlier:
            if item is None:
                continue
            j, first, k = item
            duplicated.add((cls.id, j + 1))
            loc = first.smarts_locations[k] if k < len(first.smarts_locations) else None
            where = f" (line {loc.line})" if loc is not None and loc.path == ctx.path else ""
            owner = (
                f"its own pattern {k + 1}"
                if first is cls
                else f"pattern {k + 1} of class {first.id!r}"
            )
            outcome = (
                f"class {cls.id!r} can never be chosen" if alone else "it never assigns anything"
            )
            yield class_finding(
                ctx,
                ID,
                cls,
                f"pattern {cls.smarts[j]!r} of class {cls.id!r} is the same as {owner}{where}, which is "
                f"tried first: {outcome}",
                pattern=j,
                hint="remove the pattern, or make it more specific and move its class before "
                f"{first.id!r}",
            )
    if not ctx.reference:
        return
    stats = reference_stats(ctx)
    if stats.molecules == 0:
        return
    for cls in ctx.pset.classes:
        patterns = [stats.patterns[(cls.id, n)] for n in range(1, len(cls.smarts) + 1)]
        matched = sum(p.matched for p in patterns)
        if matched == 0:
            continue  # unused-class
        if stats.assigned.get(cls.id, 0) == 0:
            if all((cls.id, p.number) in duplicated for p in patterns):
                continue  # already reported as identical patterns
            taken = stats.class_taken_by(cls.id)
            molecules = max(p.molecules for p in patterns)
            yield class_finding(
                ctx,
                ID,
                cls,
                f"class {cls.id!r} is never chosen on the reference library: its patterns match "
                f"{matched} atoms (in at least {molecules} molecules), all taken by earlier rules: "
                f"{_takers(taken)}",
                hint=f"move {cls.id!r} before the classes that take its atoms, or remove it",
            )
            continue
        for p in patterns:
            if p.matched and not p.decided and (cls.id, p.number) not in duplicated:
                yield class_finding(
                    ctx,
                    ID,
                    cls,
                    f"pattern {p.number} of class {cls.id!r} never decides an atom on the reference "
                    f"library: the {p.matched} atoms it matches are all taken by earlier rules: "
                    f"{_takers(p.taken_by)}",
                    pattern=p.number - 1,
                    hint="remove the pattern if the earlier rules are meant to win, or move the class up",
                )
