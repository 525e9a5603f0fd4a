"""Equilibrium angle far from the ideal angle of the apex atom's hybridisation.

The apex class's hybridisation is its ``hybridisation:`` descriptor when declared, else the one RDKit
gives the class's atoms on small probe molecules (classes no probe matches are not checked). Ideal
angles: sp 180, sp2 120, sp3 109.47 degrees (VSEPR / valence-bond geometry, common practice).

Tolerance (option ``tolerance``, default 15 degrees): real equilibrium angles deviate from the ideal by
lone pairs (water 104.5, ammonia 106.7), substituents and five-membered rings (furan C-O-C about 106);
15 degrees keeps those quiet and catches an angle of another geometry (120 at an sp3 apex is 10.5
off and passes; 180 or 90 at an sp3 apex does not). Apex atoms of period 3 and below with lone pairs
(P, S, As, Se, Te, option ``heavy_low``) bond through almost pure p orbitals (H2S 92.1, PH3 93.5
degrees [M]), so for them any angle from ``heavy_low`` (default 88) up to ideal + tolerance passes.
Small rings (cyclopropane 60, cyclobutane 90) are flagged; give such classes a ring-specific set of
angles and disable the rule for them if needed.

Passing:

    angles:
      - classes: [c4, o2, c4]
        k: 310.0
        theta0: 104.5

Failing:

    angles:
      - classes: [h_c, c4, h_c]
        k: 75.0
        theta0: 180.0       # linear at an sp3 carbon
"""

from __future__ import annotations

from collections.abc import Iterator, Mapping
from typing import Any

from ffaudit.findings import Finding, Severity
from ffaudit.lint.classinfo import context_info
from ffaudit.lint.context import LintContext
from ffaudit.units import from_degree

ID = "angle-ideal"
SEVERITY = Severity.WARNING
FAMILY = "physics"
OPTIONS: dict[str, Any] = {"tolerance": 15.0, "heavy_low": 88.0}
NEEDS_REFERENCE = False
NEEDS_SET = True

IDEAL: dict[str, float] = {"sp": 180.0, "sp2": 120.0, "sp3": 109.47}
"""Ideal bond angle (degrees) by apex hybridisation."""

_HEAVY_LONE_PAIR = frozenset({"P", "S", "As", "Se", "Te"})


def check(ctx: LintContext, options: Mapping[str, Any]) -> Iterator[Finding]:
    """Yield a warning per angle whose theta0 is outside the accepted interval of its apex."""
    assert ctx.pset is not None
    tolerance = float(options.get("tolerance", OPTIONS["tolerance"]))
    heavy_low = float(options.get("heavy_low", OPTIONS["heavy_low"]))
    info = context_info(ctx)
    unit = ctx.pset.header.units.get("angle", "degree")
    for entry in ctx.pset.entries("angle").values():
        theta0 = entry.values.get("theta0")
        apex = entry.classes[1]
        hyb = info.hybridisation(apex)
        if theta0 is None or hyb not in IDEAL or not 0.0 < theta0 <= 180.0:
            continue  # out-of-domain values are angle-domain's
        ideal = IDEAL[hyb]
        low, high = ideal - tolerance, min(180.0, ideal + tolerance)
        element = info.element(apex)
        if element in _HEAVY_LONE_PAIR and hyb in ("sp2", "sp3"):
            low = min(low, heavy_low)
        if low <= theta0 <= high:
            continue
        described = info.classes[apex]
        origin = (
            "inferred from probe molecules"
            if ctx.pset.class_index[apex].hybridisation is None
            else "declared"
        )
        yield ctx.entry_finding(
            ID,
            entry,
            f"theta0 {from_degree(theta0, unit):.5g} {unit} of angle {'-'.join(entry.classes)} is outside "
            f"{from_degree(low, unit):.5g}-{from_degree(high, unit):.5g} {unit}: the apex {apex} "
            f"({described.element}, {hyb}, {origin}) has an ideal angle of {from_degree(ideal, unit):.5g} "
            f"{unit} (tolerance {tolerance:g} degrees)",
            "theta0" if entry.form != "linear" else "form",
            hint="check the apex class's hybridisation and the angle's value and unit",
        )
