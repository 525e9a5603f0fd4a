"""Negative force constant of a bond, angle or out-of-plane term.

A negative stretch, bend or out-of-plane constant makes the equilibrium value an energy maximum: the
term pushes atoms away from it and a simulation or minimisation runs away. Checked: harmonic ``k`` and
polynomial ``c2`` of bonds and angles, linear-angle ``k``, out-of-plane ``k``, Morse ``depth`` and
``width`` (a zero or negative width has no bound well). No tolerance: the bound is exact (zero is allowed
for constants, it switches a term off). Dihedral Fourier constants may legally be negative (the sign
chooses where the barrier is) and stretch-bend cross constants have either sign; neither is checked.

Passing:

    bonds:
      - classes: [c4, c4]
        k: 700.0
        r0: 1.53

Failing:

    bonds:
      - classes: [c4, c4]
        k: -700.0
        r0: 1.53
"""

from __future__ import annotations

from collections.abc import Iterator, Mapping
from typing import Any

from ffaudit.findings import Finding, Severity
from ffaudit.lint.context import LintContext
from ffaudit.paramset.model import Entry

ID = "negative-force-constant"
SEVERITY = Severity.ERROR
FAMILY = "physics"
OPTIONS: dict[str, Any] = {}
NEEDS_REFERENCE = False
NEEDS_SET = True

_FIELDS: dict[tuple[str, str], tuple[tuple[str, bool], ...]] = {
    # (kind, form) -> (value name, zero allowed)
    ("bond", "harmonic"): (("k", True),),
    ("bond", "polynomial"): (("c2", True),),
    ("bond", "morse"): (("depth", True), ("width", False)),
    ("angle", "harmonic"): (("k", True),),
    ("angle", "polynomial"): (("c2", True),),
    ("angle", "linear"): (("k", True),),
    ("out_of_plane", "harmonic"): (("k", True),),
}


def file_value(ctx: LintContext, entry: Entry, name: str) -> object:
    """The value of field ``name`` of ``entry`` as written in the file (None when not at hand)."""
    if entry.location.path != ctx.path or len(entry.doc_path) != 2:
        return None
    table, index = entry.doc_path
    rows = ctx.doc.data.get(table) if isinstance(ctx.doc.data, dict) else None
    if not isinstance(rows, list) or not isinstance(index, int) or index >= len(rows):
        return None
    row = rows[index]
    return row.get(name) if isinstance(row, dict) else None


def check(ctx: LintContext, options: Mapping[str, Any]) -> Iterator[Finding]:
    """Yield an error per negative (or, for a Morse width, non-positive) constant."""
    assert ctx.pset is not None
    for kind in ("bond", "angle", "out_of_plane"):
        for entry in ctx.pset.entries(kind).values():
            for name, zero_ok in _FIELDS.get((kind, entry.form), ()):
                value = entry.values.get(name)
                if value is None or value > 0 or (zero_ok and value == 0):
                    continue
                bound = "negative" if value < 0 else "zero"
                yield ctx.entry_finding(
                    ID,
                    entry,
                    f"{kind.replace('_', '-')} {'-'.join(entry.classes)} ({entry.form}): {name} is {bound} "
                    f"({file_value(ctx, entry, name)} in the file); the equilibrium value would be an energy maximum"
                    if name != "width"
                    else f"bond {'-'.join(entry.classes)} (morse): width is {bound} ({file_value(ctx, entry, name)} in the file); a "
                    f"Morse well needs a positive width",
                    name,
                    severity=Severity.ERROR,
                    hint="force constants of bonds, angles and out-of-plane terms must not be negative",
                )
