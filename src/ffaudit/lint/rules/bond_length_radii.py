"""Equilibrium bond length far from the sum of covalent radii of the bond's elements.

Each bond's ``r0`` is compared with a radii sum for its elements and bond order: single bonds with the
Cordero 2008 single-bond radii (carbon by hybridisation: sp3 0.76, sp2 0.73, sp 0.69 A), double and
triple bonds with the Pyykko 2009 / 2005 additive radii, aromatic bonds with the mean of the Pyykko single
and double sums (bond order 1.5). The order is the entry's ``order:`` qualifier, else the one order the
set's classes show on small probe molecules, else single when either atom is H or a halogen or both
atoms are sp3; otherwise ``r0`` only has to lie between the triple and the single sum. The message says
which order was used and where it came from.

Tolerance (option ``tolerance``, default 0.15 A): both radii sets reproduce typical lengths with about
0.03 A standard deviation, and known outliers (polar C-F, C-H on sp2/sp carbon, resonance-averaged
bonds) are off by up to about 0.08 A; 0.15 A keeps those quiet and still catches a length of the wrong
bond order (C-C single 1.52 vs triple 1.20 A) or unit. Bonds between two lone-pair atoms (O-O, N-N,
F-F) are 0.16-0.22 A longer than every radii sum (lone-pair repulsion) and may be flagged; disable the
rule for such sets or widen the tolerance. Elements missing from the radii tables are not checked.

Passing:

    bonds:
      - classes: [c4, c4]
        order: single
        k: 700.0
        r0: 1.53

Failing:

    bonds:
      - classes: [c4, c4]
        order: single
        k: 700.0
        r0: 1.20        # a triple-bond length on a single bond
"""

from __future__ import annotations

from collections.abc import Iterator, Mapping
from typing import Any

from ffaudit.estimate.radii import CORDERO_2008_CARBON, cordero_radius, pyykko_bond_length
from ffaudit.findings import Finding, Severity
from ffaudit.lint.classinfo import SetInfo, context_info
from ffaudit.lint.context import LintContext
from ffaudit.units import from_angstrom

ID = "bond-length-radii"
SEVERITY = Severity.WARNING
FAMILY = "physics"
OPTIONS: dict[str, Any] = {"tolerance": 0.15}
NEEDS_REFERENCE = False
NEEDS_SET = True

_MONOVALENT = frozenset({"H", "F", "Cl", "Br", "I"})


def bond_order(info: SetInfo, a: str, b: str, declared: str | None) -> tuple[str | None, str]:
    """The bond order of a bond entry and where it came from (None: unknown)."""
    if declared is not None:
        return declared, "the entry's order"
    probed = info.bond_order(a, b)
    if probed is not None:
        return probed, "the classes on probe molecules"
    if info.element(a) in _MONOVALENT or info.element(b) in _MONOVALENT:
        return "single", "assumed: H or halogen"
    if info.hybridisation(a) == "sp3" and info.hybridisation(b) == "sp3":
        return "single", "assumed: both atoms sp3"
    return None, "unknown"


def _single_range(element: str, hybridisation: str | None) -> tuple[float, float]:
    if element == "C" and hybridisation not in CORDERO_2008_CARBON:
        values = CORDERO_2008_CARBON.values()
        return min(values), max(values)
    radius = cordero_radius(element, hybridisation if element == "C" else None)
    return radius, radius


def expected_length(
    e1: str, e2: str, order: str | None, hyb1: str | None, hyb2: str | None
) -> tuple[float, float, str] | None:
    """(low, high, what) for a bond of elements ``e1``-``e2``; None when the tables cannot say."""
    try:
        if order == "single":
            lo1, hi1 = _single_range(e1, hyb1)
            lo2, hi2 = _single_range(e2, hyb2)
            return lo1 + lo2, hi1 + hi2, "Cordero 2008 single-bond radii sum"
        if order in ("double", "triple"):
            value = pyykko_bond_length(e1, e2, 2 if order == "double" else 3)
            return value, value, f"Pyykko {order}-bond radii sum"
        if order == "aromatic":
            value = (pyykko_bond_length(e1, e2, 1) + pyykko_bond_length(e1, e2, 2)) / 2.0
            return value, value, "mean of the Pyykko single and double radii sums"
        triple = pyykko_bond_length(e1, e2, 3)
        lo1, hi1 = _single_range(e1, hyb1)
        lo2, hi2 = _single_range(e2, hyb2)
        return triple, hi1 + hi2, "range from the Pyykko triple to the Cordero single radii sum"
    except (KeyError, ValueError):
        return None


def check(ctx: LintContext, options: Mapping[str, Any]) -> Iterator[Finding]:
    """Yield a finding per bond whose r0 is further than ``tolerance`` (A) from the radii sum."""
    assert ctx.pset is not None
    tolerance = float(options.get("tolerance", OPTIONS["tolerance"]))
    info = context_info(ctx)
    unit = ctx.pset.header.units.get("length", "angstrom")
    for entry in ctx.pset.entries("bond").values():
        r0 = entry.values.get("r0")
        a, b = entry.classes
        e1, e2 = info.element(a), info.element(b)
        if r0 is None or e1 is None or e2 is None:
            continue
        order, why = bond_order(info, a, b, entry.bond_order)
        expected = expected_length(e1, e2, order, info.hybridisation(a), info.hybridisation(b))
        if expected is None:
            continue
        low, high, what = expected
        off = low - r0 if r0 < low else r0 - high if r0 > high else 0.0
        if off <= tolerance:
            continue
        shown = from_angstrom(r0, unit)
        target = (
            f"{from_angstrom(low, unit):.3f}"
            if low == high
            else f"{from_angstrom(low, unit):.3f}-{from_angstrom(high, unit):.3f}"
        )
        yield ctx.entry_finding(
            ID,
            entry,
            f"r0 {shown:.4g} {unit} of {e1}-{e2} bond {a}-{b} (order {order or 'unknown'}, {why}) is "
            f"{from_angstrom(off, unit):.3g} {unit} outside the {what} {target} {unit} "
            f"(tolerance {from_angstrom(tolerance, unit):.3g} {unit})",
            "r0",
            hint="check the bond order, the length unit, or the value",
        )
