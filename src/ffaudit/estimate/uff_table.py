"""UFF atomic parameters for the elements ffaudit estimates: H, B, C, N, O, F, Si, P, S, Cl, Se, Br, I.

Source: A. K. Rappé, C. J. Casewit, K. S. Colwell, W. A. Goddard III, W. M. Skiff, "UFF, a full periodic
table force field for molecular mechanics and molecular dynamics simulations", J. Am. Chem. Soc. 114,
10024-10035 (1992), Table 1 (doi:10.1021/ja00051a040; last page and DOI typed from memory).

Status of the numbers: typed in from the paper's Table 1 as it is commonly reproduced, then checked against
RDKit's UFF implementation (RDKit 2026.09). ``tests/test_uff.py`` re-derives every bond, angle, torsion,
inversion and van der Waals value that RDKit's getters (``rdkit.Chem.rdForceFieldHelpers.GetUFF*Params``)
report for molecules containing each type listed here, and they agree to 1e-6 relative; that is what
verifies ``r1``, ``theta0``, ``x1``, ``d1``, ``z_star``, ``v_sp3``, ``u_sp2`` and ``chi``. ``zeta`` (the
exponential-6 shape parameter) is not used by the Lennard-Jones form UFF energies are computed with, so no
getter exposes it: it was compared by eye with the parameter table in RDKit's source
(Code/ForceField/UFF/Params.cpp), not tested. Treat ``zeta`` as unverified.

Types deliberately not included: ``H_b`` (bridging H of boranes; RDKit never assigns it), ``O_3_z``
(zeolite O), ``P_3+q`` (RDKit never assigns it), metals and noble gases.

Labels follow the paper: element symbol padded with ``_`` to two characters, then a hybridisation digit
(1 linear, 2 trigonal, 3 tetrahedral, R resonant) and, where needed, ``+n`` for a formal oxidation state.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from types import MappingProxyType


@dataclass(frozen=True)
class UffAtomType:
    """One row of UFF Table 1.

    Attributes (units as in the paper, which are ffaudit's internal units):
        label: UFF type label, e.g. ``C_3``.
        element: element symbol.
        r1: valence (bond) radius, angstrom.
        theta0: natural bond angle at this atom, degrees.
        x1: van der Waals distance (Lennard-Jones minimum of the like pair), angstrom.
        d1: van der Waals well depth, kcal/mol.
        zeta: exponential-6 shape parameter (dimensionless; unused by the Lennard-Jones form; unverified).
        z_star: effective atomic charge (elementary charges) for the force-constant rules.
        v_sp3: sp3 torsional barrier parameter V_i, kcal/mol.
        u_sp2: sp2 torsional barrier parameter U_i, kcal/mol.
        chi: GMP electronegativity, eV.
    """

    label: str
    element: str
    r1: float
    theta0: float
    x1: float
    d1: float
    zeta: float
    z_star: float
    v_sp3: float
    u_sp2: float
    chi: float


def _row(
    label: str,
    element: str,
    r1: float,
    theta0: float,
    x1: float,
    d1: float,
    zeta: float,
    z_star: float,
    v_sp3: float,
    u_sp2: float,
    chi: float,
) -> tuple[str, UffAtomType]:
    return label, UffAtomType(label, element, r1, theta0, x1, d1, zeta, z_star, v_sp3, u_sp2, chi)


# label, element, r1, theta0, x1, D1, zeta, Z*, V_i, U_i, chi (GMP)
_ROWS = (
    _row("H_", "H", 0.354, 180.0, 2.886, 0.044, 12.0, 0.712, 0.0, 0.0, 4.528),
    _row("B_3", "B", 0.838, 109.47, 4.083, 0.180, 12.052, 1.755, 0.0, 2.0, 5.110),
    _row("B_2", "B", 0.828, 120.0, 4.083, 0.180, 12.052, 1.755, 0.0, 2.0, 5.110),
    _row("C_3", "C", 0.757, 109.47, 3.851, 0.105, 12.73, 1.912, 2.119, 2.0, 5.343),
    _row("C_R", "C", 0.729, 120.0, 3.851, 0.105, 12.73, 1.912, 0.0, 2.0, 5.343),
    _row("C_2", "C", 0.732, 120.0, 3.851, 0.105, 12.73, 1.912, 0.0, 2.0, 5.343),
    _row("C_1", "C", 0.706, 180.0, 3.851, 0.105, 12.73, 1.912, 0.0, 2.0, 5.343),
    _row("N_3", "N", 0.700, 106.7, 3.660, 0.069, 13.407, 2.544, 0.450, 2.0, 6.899),
    _row("N_R", "N", 0.699, 120.0, 3.660, 0.069, 13.407, 2.544, 0.0, 2.0, 6.899),
    _row("N_2", "N", 0.685, 111.2, 3.660, 0.069, 13.407, 2.544, 0.0, 2.0, 6.899),
    _row("N_1", "N", 0.656, 180.0, 3.660, 0.069, 13.407, 2.544, 0.0, 2.0, 6.899),
    _row("O_3", "O", 0.658, 104.51, 3.500, 0.060, 14.085, 2.300, 0.018, 2.0, 8.741),
    _row("O_R", "O", 0.680, 110.0, 3.500, 0.060, 14.085, 2.300, 0.0, 2.0, 8.741),
    _row("O_2", "O", 0.634, 120.0, 3.500, 0.060, 14.085, 2.300, 0.0, 2.0, 8.741),
    _row("O_1", "O", 0.639, 180.0, 3.500, 0.060, 14.085, 2.300, 0.0, 2.0, 8.741),
    _row("F_", "F", 0.668, 180.0, 3.364, 0.050, 14.762, 1.735, 0.0, 2.0, 10.874),
    _row("Si3", "Si", 1.117, 109.47, 4.295, 0.402, 12.175, 2.323, 1.225, 1.25, 4.168),
    _row("P_3+3", "P", 1.101, 93.8, 4.147, 0.305, 13.072, 2.863, 2.4, 1.25, 5.463),
    _row("P_3+5", "P", 1.056, 109.47, 4.147, 0.305, 13.072, 2.863, 2.4, 1.25, 5.463),
    _row("S_3+2", "S", 1.064, 92.1, 4.035, 0.274, 13.969, 2.703, 0.484, 1.25, 6.928),
    _row("S_3+4", "S", 1.049, 103.2, 4.035, 0.274, 13.969, 2.703, 0.484, 1.25, 6.928),
    _row("S_3+6", "S", 1.027, 109.47, 4.035, 0.274, 13.969, 2.703, 0.484, 1.25, 6.928),
    _row("S_R", "S", 1.077, 92.2, 4.035, 0.274, 13.969, 2.703, 0.0, 1.25, 6.928),
    _row("S_2", "S", 0.854, 120.0, 4.035, 0.274, 13.969, 2.703, 0.0, 1.25, 6.928),
    _row("Cl", "Cl", 1.044, 180.0, 3.947, 0.227, 14.866, 2.348, 0.0, 1.25, 8.564),
    _row("Se3+2", "Se", 1.190, 90.6, 4.205, 0.291, 14.0, 2.764, 0.335, 0.7, 6.428),
    _row("Br", "Br", 1.192, 180.0, 4.189, 0.251, 15.0, 2.519, 0.0, 0.7, 7.790),
    _row("I_", "I", 1.382, 180.0, 4.500, 0.339, 15.0, 2.650, 0.0, 0.2, 6.822),
)

UFF_TYPES: Mapping[str, UffAtomType] = MappingProxyType(dict(_ROWS))
"""UFF type label -> parameters, for the types ffaudit supports (see the module docstring)."""

UFF_ELEMENTS: frozenset[str] = frozenset(t.element for t in UFF_TYPES.values())
"""Elements that have at least one type here."""


def uff_type(label: str) -> UffAtomType:
    """The parameters of UFF type ``label``.

    Raises ``KeyError`` naming the label and the known labels when ``label`` is not in the table.
    """
    try:
        return UFF_TYPES[label]
    except KeyError:
        known = ", ".join(UFF_TYPES)
        raise KeyError(f"no UFF type {label!r} in ffaudit's table (known: {known})") from None
