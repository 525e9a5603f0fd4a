"""Published values the physics lint rules compare a set against, each with its source.

- IR stretching ranges (cm^-1) of common organic bonds: UCLA WebSpectra IR table
  (http://webspectra.chem.ucla.edu/irtable.html), UMass OWL group frequencies
  (https://owl.umass.edu/departments/OrganicChemistry/appendix/ir_group_frequencies.html) and
  Morrison & Boyd, Organic Chemistry (6th ed.) - verified copies listed in the project's check values.
- Van der Waals radii (A): A. Bondi, "van der Waals Volumes and Radii", J. Phys. Chem. 68, 441-451 (1964).
  The values below are typed from memory [M]. RDKit's ``GetRvdw`` is a different table (it agrees for
  H, C, Si, S and Se only) and is not used.
- Atomic masses: RDKit's periodic table, mass of the most common isotope (``GetMostCommonIsotopeMass``),
  so a reduced mass is that of the most common isotopologue (1H, 12C, 14N, 16O, 32S, 35Cl, 79Br).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from types import MappingProxyType

from rdkit import Chem

_TABLE = Chem.GetPeriodicTable()


@dataclass(frozen=True)
class IrRange:
    """An observed stretching range for one bond type."""

    label: str
    low: float
    high: float
    source: str


IR_RANGES: Mapping[str, IrRange] = MappingProxyType(
    {
        # key: "X-Y:order:hybridisation of the carbon" (see ir_range()); all [V] in the check values
        "C-H:sp3": IrRange(
            "C-H (sp3)", 2850.0, 2960.0, "UCLA 2850-2950; Morrison & Boyd 2850-2960"
        ),
        "C-H:sp2": IrRange(
            "=C-H (sp2)", 3000.0, 3100.0, "UCLA 3010-3100; UMass aromatic 3000-3100"
        ),
        "C-H:sp": IrRange("#C-H (sp)", 3250.0, 3330.0, "UMass 3250-3300; UCLA ~3300"),
        "O-H": IrRange("O-H", 3200.0, 3650.0, "UCLA 3200-3550; UMass 3300-3650 (free to H-bonded)"),
        "N-H": IrRange("N-H", 3300.0, 3500.0, "UCLA 3300-3500; Morrison & Boyd 3300-3500"),
        "C=O": IrRange("C=O", 1650.0, 1850.0, "UMass carbonyls 1640-1810; UCLA ketone 1680-1750"),
        "C#N": IrRange(
            "C#N (nitrile)", 2210.0, 2260.0, "UCLA 2220-2260; Morrison & Boyd 2210-2260"
        ),
        "C=C": IrRange("C=C", 1620.0, 1680.0, "UCLA/UMass 1620-1680"),
        "C#C": IrRange("C#C", 2100.0, 2260.0, "UCLA 2100-2260; Morrison & Boyd 2100-2260"),
    }
)
"""Observed IR stretching ranges (cm^-1) by bond type."""


def ir_range(
    element_a: str, element_b: str, order: str | None, carbon_hybridisation: str | None
) -> IrRange | None:
    """The IR range for a bond between ``element_a`` and ``element_b``, or None when none is tabulated.

    ``order`` is ``single``/``double``/``triple``/``aromatic`` or None (unknown); X-H bonds are single
    whatever is given. C-H needs the carbon's hybridisation (aromatic carbon counts as sp2); without it
    there is no range (the three C-H ranges are too far apart to merge and stay discriminating).
    """
    pair = tuple(sorted((element_a, element_b)))
    if pair == ("C", "H"):
        return IR_RANGES.get(f"C-H:{carbon_hybridisation}") if carbon_hybridisation else None
    if pair == ("H", "O"):
        return IR_RANGES["O-H"]
    if pair == ("H", "N"):
        return IR_RANGES["N-H"]
    symbol = {"double": "=", "triple": "#"}.get(order or "")
    if symbol is None:
        return None
    return IR_RANGES.get(f"{pair[0]}{symbol}{pair[1]}")


BONDI_1964: Mapping[str, float] = MappingProxyType(
    {
        "H": 1.20,  # [M]
        "C": 1.70,  # [M]
        "N": 1.55,  # [M]
        "O": 1.52,  # [M]
        "F": 1.47,  # [M]
        "Si": 2.10,  # [M]
        "P": 1.80,  # [M]
        "S": 1.80,  # [M]
        "Cl": 1.75,  # [M]
        "Se": 1.90,  # [M]
        "Br": 1.85,  # [M]
        "I": 1.98,  # [M]
    }
)
"""Bondi 1964 van der Waals radii (A), from memory [M]; see the module docstring."""


def mass(element: str) -> float:
    """Mass (u) of the most common isotope of ``element`` (RDKit). ``RuntimeError`` for an unknown symbol."""
    return float(_TABLE.GetMostCommonIsotopeMass(element))
