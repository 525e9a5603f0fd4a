"""Lennard-Jones radius far from the van der Waals radius of the class's element.

``rmin_half`` (half the distance of the Lennard-Jones minimum) is compared with the Bondi 1964 van der
Waals radius of the class's element (A. Bondi, J. Phys. Chem. 68, 441 (1964); values typed from memory
[M], see :mod:`ffaudit.lint.physics_data`). The ratio rmin_half / r_vdW must lie in
[``ratio_low``, ``ratio_high``] = [0.75, 1.40].

Reason and tolerance: rmin_half is not the same quantity as a van der Waals radius (a contact radius
from crystal packing), but they are close: UFF-derived radii run 12-20 % above Bondi's (C 1.925 vs
1.70, H 1.443 vs 1.20 A), other sets a little below. The bounds leave that spread and catch the usual
mistakes: the full minimum distance in place of its half (x2), the full sigma in place of rmin_half
(x1.78; sigma/2 in place of rmin_half, x0.89, is within the bounds), nanometres read as angstroms (x0.1). Hydrogens get no lower bound: many
sets give hydrogens on polar atoms a tiny or zero radius on purpose (common practice). Elements without
a Bondi radius in the table are not checked.

Passing:

    nonbonded:
      - class: c4
        rmin_half: 1.925
        epsilon: 0.105

Failing:

    nonbonded:
      - class: c4
        rmin_half: 3.85     # the full minimum distance, not its half
        epsilon: 0.105
"""

from __future__ import annotations

from collections.abc import Iterator, Mapping
from typing import Any

from ffaudit.findings import Finding, Severity
from ffaudit.lint.context import LintContext
from ffaudit.lint.physics_data import BONDI_1964
from ffaudit.units import from_angstrom

ID = "lj-radius-vdw"
SEVERITY = Severity.WARNING
FAMILY = "physics"
OPTIONS: dict[str, Any] = {"ratio_low": 0.75, "ratio_high": 1.40}
NEEDS_REFERENCE = False
NEEDS_SET = True


def check(ctx: LintContext, options: Mapping[str, Any]) -> Iterator[Finding]:
    """Yield a warning per nonbonded entry whose rmin_half / Bondi radius is outside the bounds."""
    assert ctx.pset is not None
    low = float(options.get("ratio_low", OPTIONS["ratio_low"]))
    high = float(options.get("ratio_high", OPTIONS["ratio_high"]))
    unit = ctx.pset.header.units.get("length", "angstrom")
    index = ctx.pset.class_index
    for entry in ctx.pset.entries("nonbonded").values():
        rmin_half = entry.values.get("rmin_half")
        cls = index.get(entry.classes[0])
        if rmin_half is None or cls is None or cls.element not in BONDI_1964:
            continue
        vdw = BONDI_1964[cls.element]
        ratio = rmin_half / vdw
        floor = 0.0 if cls.element == "H" else low
        if floor <= ratio <= high:
            continue
        yield ctx.entry_finding(
            ID,
            entry,
            f"rmin_half {from_angstrom(rmin_half, unit):.4g} {unit} of class {cls.id} ({cls.element}) is "
            f"{ratio:.2f} times the Bondi 1964 van der Waals radius {from_angstrom(vdw, unit):.4g} {unit} "
            f"(accepted {'0' if floor == 0 else f'{low:g}'}-{high:g})",
            "rmin_half",
            hint="rmin_half is half the distance of the energy minimum; check for rmin, sigma or a unit",
        )
