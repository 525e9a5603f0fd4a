"""Equilibrium angle outside (0, 180] degrees.

An equilibrium bond angle is a geometric angle between two bonds: it lies in (0, 180] degrees. A value
of 0 or less, or above 180, is either a typing error or a value in the wrong angle unit (e.g. radians
declared as degrees would give values below 3.2, which this rule does not catch; ``angle-ideal`` does).
No tolerance: the bounds are exact. Linear angles (form ``linear``) have theta0 = 180 by definition.

Passing:

    angles:
      - classes: [h_c, c4, h_c]
        k: 75.0
        theta0: 109.47

Failing:

    angles:
      - classes: [h_c, c4, h_c]
        k: 75.0
        theta0: 250.0
"""

from __future__ import annotations

from collections.abc import Iterator, Mapping
from typing import Any

from ffaudit.findings import Finding, Severity
from ffaudit.lint.context import LintContext
from ffaudit.units import from_degree

ID = "angle-domain"
SEVERITY = Severity.ERROR
FAMILY = "physics"
OPTIONS: dict[str, Any] = {}
NEEDS_REFERENCE = False
NEEDS_SET = True


def check(ctx: LintContext, options: Mapping[str, Any]) -> Iterator[Finding]:
    """Yield an error per angle entry whose theta0 is not in (0, 180] degrees."""
    assert ctx.pset is not None
    unit = ctx.pset.header.units.get("angle", "degree")
    for entry in ctx.pset.entries("angle").values():
        theta0 = entry.values.get("theta0")
        if theta0 is None or 0.0 < theta0 <= 180.0:
            continue
        yield ctx.entry_finding(
            ID,
            entry,
            f"theta0 {from_degree(theta0, unit):.6g} {unit} of angle {'-'.join(entry.classes)} is outside "
            f"(0, {from_degree(180.0, unit):.6g}] {unit}",
            "theta0",
            severity=Severity.ERROR,
            hint="an equilibrium bond angle lies between 0 (excluded) and 180 degrees",
        )
