"""Dihedral phase other than 0 or 180 degrees, unless the entry says it is meant.

For a torsion about a bond whose ends are not chiral in themselves, the energy must be symmetric under
phi -> -phi, which holds for k (1 + cos(n phi - phase)) only when the phase is 0 or 180 degrees (common
practice in organic force fields). Other phases are legitimate in fits to asymmetric environments, so an
entry may state that its phase is intended: a ``note:`` containing ``free phase`` or ``phase:free``
(any case, spaces around the colon allowed) turns the check off for that entry. Phases are compared modulo 360 with a tolerance of ``tolerance``
degrees (default 0.01, rounding only).

Passing:

    dihedrals:
      - classes: ["*", c4, c4, "*"]
        terms: [{periodicity: 3, phase: 0, k: 0.15}]
      - classes: ["*", c4, n3, "*"]
        terms: [{periodicity: 1, phase: 35, k: 0.2}]
        note: "free phase: fitted to an asymmetric scan"

Failing:

    dihedrals:
      - classes: ["*", c4, c4, "*"]
        terms: [{periodicity: 3, phase: 90, k: 0.15}]
"""

from __future__ import annotations

import re
from collections.abc import Iterator, Mapping
from typing import Any

from ffaudit.findings import Finding, Severity
from ffaudit.lint.context import LintContext
from ffaudit.lint.locate import sub_finding
from ffaudit.units import from_degree

ID = "torsion-phase"
SEVERITY = Severity.WARNING
FAMILY = "torsion"
OPTIONS: dict[str, Any] = {"tolerance": 0.01}
NEEDS_REFERENCE = False
NEEDS_SET = True

MARKER = "free phase"
"""Text in an entry's ``note:`` that declares a phase other than 0/180 intended (suggested in hints)."""

_MARKERS = re.compile(r"free phase|phase\s*:\s*free", re.IGNORECASE)
"""Every accepted spelling of the marker: ``free phase`` and ``phase:free``."""


def declares_free_phase(note: str | None) -> bool:
    """True when ``note`` says the entry's phases are intended (see :data:`_MARKERS`)."""
    return bool(note) and _MARKERS.search(note or "") is not None


def is_symmetric_phase(phase: float, tolerance: float) -> bool:
    """True when ``phase`` (degrees) is 0 or 180 modulo 360 within ``tolerance``."""
    reduced = phase % 180.0
    return min(reduced, 180.0 - reduced) <= tolerance


def check(ctx: LintContext, options: Mapping[str, Any]) -> Iterator[Finding]:
    """Yield a warning per dihedral term with a phase other than 0/180 in an entry without the marker."""
    assert ctx.pset is not None
    tolerance = float(options.get("tolerance", OPTIONS["tolerance"]))
    unit = ctx.pset.header.units.get("angle", "degree")
    for entry in ctx.pset.entries("dihedral").values():
        if declares_free_phase(entry.note):
            continue
        for j, term in enumerate(entry.fourier):
            if is_symmetric_phase(term.phase, tolerance):
                continue
            yield sub_finding(
                ctx,
                ID,
                entry,
                ("terms", j, "phase"),
                f"dihedral {'-'.join(entry.classes)} term {j + 1} (n = {term.periodicity}): phase "
                f"{from_degree(term.phase, unit):.6g} {unit} is neither 0 nor 180 degrees",
                hint=f'use 0 or 180, or say the phase is intended with note: "{MARKER}: ..."',
            )
