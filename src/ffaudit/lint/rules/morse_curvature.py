"""Morse bond whose depth, width or curvature at the minimum is implausible.

A Morse bond E = D (1 - exp(-a (r - r0)))^2 has the curvature k = 2 D a^2 at r0. Three checks:

- ``depth`` D within [``depth_min``, ``depth_max``] = [10, 260] kcal/mol: bond dissociation energies of
  covalent bonds run from about 30 (I-I, O-O) to 257 (C#O, the strongest) kcal/mol (handbook values
  [M]); the lower bound leaves room for weak bonds fitted with a shallow well.
- ``width`` a within [``width_min``, ``width_max``] = [0.8, 3.5] 1/A: fitted widths of organic bonds are
  about 1.7-2.4 1/A (H2 1.94 [M]); outside this range a well is implausibly wide or narrow.
- the harmonic wavenumber of 2 D a^2 (reduced mass of the most common isotopes) within
  [``nu_min``, ``nu_max``] = [150, 4500] cm^-1: every covalent bond stretch lies there (I-I 214,
  H-H 4401 cm^-1 [M]). The bond-type ranges of ``bond-wavenumber`` apply to Morse bonds too.

Passing:

    bonds:
      - classes: [c4, h_c]
        form: morse
        r0: 1.09
        depth: 105.0
        width: 1.8      # 2 D a^2 = 680 kcal/mol/A^2, 2937 cm^-1

Failing:

    bonds:
      - classes: [c4, h_c]
        form: morse
        r0: 1.09
        depth: 105.0
        width: 18.0     # a width in 1/nm written as 1/A
"""

from __future__ import annotations

from collections.abc import Iterator, Mapping
from typing import Any

from ffaudit.findings import Finding, Severity
from ffaudit.lint.classinfo import context_info
from ffaudit.lint.context import LintContext
from ffaudit.lint.physics_data import mass
from ffaudit.units import wavenumber

ID = "morse-curvature"
SEVERITY = Severity.WARNING
FAMILY = "physics"
OPTIONS: dict[str, Any] = {
    "depth_min": 10.0,
    "depth_max": 260.0,
    "width_min": 0.8,
    "width_max": 3.5,
    "nu_min": 150.0,
    "nu_max": 4500.0,
}
NEEDS_REFERENCE = False
NEEDS_SET = True


def _option(options: Mapping[str, Any], name: str) -> float:
    return float(options.get(name, OPTIONS[name]))


def check(ctx: LintContext, options: Mapping[str, Any]) -> Iterator[Finding]:
    """Yield a warning per Morse bond whose depth, width or curvature is outside the plausible range."""
    assert ctx.pset is not None
    info = context_info(ctx)
    for entry in ctx.pset.entries("bond").values():
        if entry.form != "morse":
            continue
        depth, width = entry.values.get("depth"), entry.values.get("width")
        if depth is None or width is None or depth <= 0 or width <= 0:
            continue  # negative-force-constant reports those
        name = "-".join(entry.classes)
        lo, hi = _option(options, "depth_min"), _option(options, "depth_max")
        if not lo <= depth <= hi:
            yield ctx.entry_finding(
                ID,
                entry,
                f"Morse bond {name}: depth {depth:.4g} kcal/mol is outside the plausible bond "
                f"dissociation range {lo:g}-{hi:g} kcal/mol",
                "depth",
                hint="check the energy unit of depth",
            )
        lo, hi = _option(options, "width_min"), _option(options, "width_max")
        if not lo <= width <= hi:
            yield ctx.entry_finding(
                ID,
                entry,
                f"Morse bond {name}: width {width:.4g} 1/A is outside the plausible range {lo:g}-{hi:g} 1/A",
                "width",
                hint="check the length unit of width (1/length)",
            )
        e1, e2 = info.element(entry.classes[0]), info.element(entry.classes[1])
        if e1 is None or e2 is None:
            continue
        curvature = 2.0 * depth * width**2
        nu = wavenumber(curvature, mass(e1), mass(e2))
        lo, hi = _option(options, "nu_min"), _option(options, "nu_max")
        if not lo <= nu <= hi:
            yield ctx.entry_finding(
                ID,
                entry,
                f"Morse bond {name}: curvature 2 D a^2 = {curvature:.4g} kcal/mol/A^2 gives {nu:.0f} cm^-1 "
                f"for {e1}-{e2}, outside the {lo:g}-{hi:g} cm^-1 of covalent bond stretches",
                "width",
                hint="the depth and width together give an implausible force constant",
            )
