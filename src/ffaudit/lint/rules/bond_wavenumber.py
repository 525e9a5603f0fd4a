"""Bond force constant whose harmonic wavenumber is outside the IR range of its bond type.

For each bond (harmonic, polynomial or Morse: the curvature k at r0), the harmonic wavenumber
nu = 1/(2 pi c) sqrt(k / mu) is computed with the reduced mass mu of the most common isotopes of the
bond's elements (RDKit's periodic table) and compared with the observed stretching range of the bond
type, where one is tabulated: C-H (sp3, sp2/aromatic, sp), O-H, N-H, C=O, C#N, C=C, C#C (UCLA and UMass
IR tables, Morrison & Boyd; see :mod:`ffaudit.lint.physics_data`). The bond order comes from the
entry's ``order:``, else from the classes on probe molecules; C-H needs the carbon's hybridisation.

Tolerance: a constant passes when nu lies in [low x (1 - ``below``), high x (1 + ``above``)], defaults
``below`` = 0.15 and ``above`` = 0.10. Force-field constants are effective harmonic values, not observed
fundamentals: anharmonicity puts the harmonic wavenumber of X-H stretches 3-5 % above the fundamental
(HCl: 2991 vs 2886 cm^-1), hence ``above``; rule-based constants of multiple bonds run low (UFF's C=C,
C#N give 12 % below the observed bands), hence ``below``. The window stays narrower than a factor
sqrt(2) for the narrow ranges, so a constant written in the other energy convention (E = k dr^2 read as
E = 1/2 k dr^2, or the reverse) falls outside it.

When nu is outside the window but nu x sqrt(2) or nu / sqrt(2) is inside, the finding says the constant
is probably written in the other convention (cause ``convention-mixup``). When at least half of the
checked bonds of a file (and at least ``min_bonds``, default 3) are off by sqrt(2) in the same direction,
an error at the header's bond convention reports a probable set-wide convention mix-up.

Passing:

    header:
      conventions: {bond: half}
    bonds:
      - classes: [c4, h_c]
        k: 662.1        # 2898 cm^-1 for 12C-1H
        r0: 1.09

Failing:

    header:
      conventions: {bond: half}
    bonds:
      - classes: [c4, h_c]
        k: 331.0        # 2049 cm^-1: a constant for E = k dr^2 under a half convention
        r0: 1.09
"""

from __future__ import annotations

import math
from collections.abc import Iterator, Mapping
from typing import Any

from ffaudit.findings import Finding, Severity
from ffaudit.lint.classinfo import context_info
from ffaudit.lint.context import LintContext
from ffaudit.lint.physics_data import IrRange, ir_range, mass
from ffaudit.units import wavenumber

ID = "bond-wavenumber"
SEVERITY = Severity.WARNING
FAMILY = "physics"
OPTIONS: dict[str, Any] = {"below": 0.15, "above": 0.10, "min_bonds": 3}
NEEDS_REFERENCE = False
NEEDS_SET = True

SQRT2 = math.sqrt(2.0)


def window(ir: IrRange, below: float, above: float) -> tuple[float, float]:
    """The accepted wavenumber interval (cm^-1) for ``ir`` with the given relative tolerances."""
    return ir.low * (1.0 - below), ir.high * (1.0 + above)


def classify(nu: float, low: float, high: float) -> str:
    """``ok``, ``low``, ``high``, ``halved`` (nu x sqrt2 fits) or ``doubled`` (nu / sqrt2 fits)."""
    if low <= nu <= high:
        return "ok"
    if nu < low:
        return "halved" if low <= nu * SQRT2 <= high else "low"
    return "doubled" if low <= nu / SQRT2 <= high else "high"


_FIELD = {"harmonic": "k", "polynomial": "c2", "morse": "width"}
"""The file field a finding points at, per bond form (the curvature is derived for the others)."""

_MIXUP_TEXT = {
    "halved": "the curvature looks halved: a constant written for E = k dr^2 read as E = 1/2 k dr^2?",
    "doubled": "the curvature looks doubled: a constant written for E = 1/2 k dr^2 read as E = k dr^2?",
}


def check(ctx: LintContext, options: Mapping[str, Any]) -> Iterator[Finding]:
    """Yield a finding per bond outside its IR window, and a set-wide error for a convention mix-up."""
    assert ctx.pset is not None
    below = float(options.get("below", OPTIONS["below"]))
    above = float(options.get("above", OPTIONS["above"]))
    min_bonds = int(options.get("min_bonds", OPTIONS["min_bonds"]))
    info = context_info(ctx)
    convention = ctx.pset.header.conventions.get("bond", "half")
    checked = 0
    verdicts: dict[str, int] = {}
    for entry in ctx.pset.entries("bond").values():
        k = entry.values.get("k")
        a, b = entry.classes
        e1, e2 = info.element(a), info.element(b)
        if k is None or k <= 0 or e1 is None or e2 is None:
            continue
        order = entry.bond_order or info.bond_order(a, b)
        carbon = a if e1 == "C" else b if e2 == "C" else None
        hyb = info.hybridisation(carbon) if carbon is not None else None
        if carbon is not None and info.classes[carbon].aromatic:
            hyb = "sp2"
        ir = ir_range(e1, e2, order, hyb)
        if ir is None:
            continue
        checked += 1
        nu = wavenumber(k, mass(e1), mass(e2))
        low, high = window(ir, below, above)
        verdict = classify(nu, low, high)
        verdicts[verdict] = verdicts.get(verdict, 0) + 1
        if verdict == "ok":
            continue
        text = (
            f"{ir.label} bond {a}-{b}: k gives {nu:.0f} cm^-1 (harmonic, most common isotopes), outside "
            f"{low:.0f}-{high:.0f} cm^-1 (observed {ir.low:.0f}-{ir.high:.0f}, {ir.source}; "
            f"tolerance -{below:.0%}/+{above:.0%})"
        )
        if verdict in _MIXUP_TEXT:
            other = nu * SQRT2 if verdict == "halved" else nu / SQRT2
            text += (
                f"; off by a factor near sqrt(2) ({other:.0f} cm^-1 with the other convention): "
                f"probable energy-convention mix-up - {_MIXUP_TEXT[verdict]} (or a rule-based "
                f"constant that is simply far off; compare with a measured force constant)"
            )
        yield ctx.entry_finding(
            ID,
            entry,
            text,
            _FIELD.get(entry.form, "k"),
            cause="convention-mixup" if verdict in _MIXUP_TEXT else "out-of-range",
            hint=f"the header declares bond: {convention}; check the constant's energy convention and unit",
        )
    for verdict in ("halved", "doubled"):
        count = verdicts.get(verdict, 0)
        if count >= min_bonds and 2 * count >= checked:
            yield ctx.finding(
                ID,
                f"{count} of {checked} bonds with a known IR range have curvatures {verdict} by the "
                f"convention factor (wavenumbers off by sqrt(2)): probable set-wide energy-convention "
                f"mix-up ({_MIXUP_TEXT[verdict]})",
                ("header", "conventions", "bond"),
                severity=Severity.ERROR,
                cause="convention-mixup",
                hint=f"the header declares bond: {convention}; try the other convention",
            )
