"""Covalent radii for bond-length estimates (angstrom).

Two published sets:

- **Cordero 2008**: B. Cordero, V. Gómez, A. E. Platero-Prats, M. Revés, J. Echeverría, E. Cremades,
  F. Barragán, S. Alvarez, "Covalent radii revisited", Dalton Trans. 2008, 2832 (doi:10.1039/b801115j).
  Single-bond radii from more than 228,000 CSD distances, with separate values for sp3, sp2 and sp carbon.
  (Title and DOI checked; the author list is typed from memory.)
- **Pyykkö**: additive self-consistent radii R_AB = r_A + r_B for single bonds (P. Pyykkö, M. Atsumi,
  Chem. Eur. J. 15, 186 (2009)), double bonds (Chem. Eur. J. 15, 12770 (2009)) and triple bonds
  (P. Pyykkö, S. Riedel, M. Patzschke, Chem. Eur. J. 11, 3511 (2005)).

Status per value (see the comments in the tables): [V] seen in a reprint of the source table; [M] typed
from memory and not seen in a source. All Cordero values also equal RDKit's ``GetRcovalent`` (which follows
Cordero for Z = 1-54; carbon there is sp3 only); ``tests/test_uff.py`` checks that.

Radii sums estimate *typical* lengths: both authors report about 3 pm standard deviation, and some bonds
are far off (O-O is 0.16-0.22 A too short with every radius rule, because of lone-pair repulsion).
"""

from __future__ import annotations

from collections.abc import Mapping
from types import MappingProxyType

CORDERO_2008: Mapping[str, float] = MappingProxyType(
    {
        "H": 0.31,  # [V]
        "B": 0.84,  # [V] (reprint of the Cordero table)
        "C": 0.76,  # [V] sp3
        "N": 0.71,  # [V]
        "O": 0.66,  # [V]
        "F": 0.57,  # [V]
        "Si": 1.11,  # [V] (reprint of the Cordero table)
        "P": 1.07,  # [V]
        "S": 1.05,  # [V]
        "Cl": 1.02,  # [V]
        "Se": 1.20,  # [V] (reprint of the Cordero table)
        "Br": 1.20,  # [V]
        "I": 1.39,  # [V] (reprint of the Cordero table)
    }
)
"""Cordero 2008 single-bond radii (A); carbon is the sp3 value (see :data:`CORDERO_2008_CARBON`)."""

CORDERO_2008_CARBON: Mapping[str, float] = MappingProxyType({"sp3": 0.76, "sp2": 0.73, "sp": 0.69})
"""Cordero 2008 carbon radius by hybridisation (A) [V]."""

PYYKKO: Mapping[str, tuple[float | None, float | None, float | None]] = MappingProxyType(
    {
        # element: (single 2009, double 2009, triple 2005); None = not given by the source
        "H": (0.32, None, None),  # [V]
        "B": (0.85, 0.78, 0.73),  # [V]
        "C": (0.75, 0.67, 0.60),  # [V]
        "N": (0.71, 0.60, 0.54),  # [V]
        "O": (0.63, 0.57, 0.53),  # [V]
        "F": (0.64, 0.59, 0.53),  # [V]
        "Si": (1.16, 1.07, 1.02),  # [M] from memory
        "P": (1.11, 1.02, 0.94),  # [M] from memory
        "S": (1.03, 0.94, 0.95),  # [M] from memory
        "Cl": (0.99, 0.95, 0.93),  # [M] from memory
        "Se": (1.16, 1.07, 1.07),  # [M] from memory
        "Br": (1.14, 1.09, 1.10),  # [M] from memory
        "I": (1.33, 1.29, 1.25),  # [M] from memory
    }
)
"""Pyykkö single/double/triple additive radii (A)."""

_HYBRIDISATIONS = ("sp3", "sp2", "sp")


def cordero_radius(element: str, hybridisation: str | None = None) -> float:
    """Cordero 2008 single-bond radius (A) of ``element``; for carbon pick ``hybridisation`` (sp3/sp2/sp).

    ``hybridisation`` is ignored for elements other than carbon and defaults to sp3 for carbon. Raises
    ``KeyError`` for an element not in the table and ``ValueError`` for an unknown hybridisation.
    """
    if element == "C":
        hyb = hybridisation or "sp3"
        if hyb not in _HYBRIDISATIONS:
            raise ValueError(f"carbon hybridisation must be one of {_HYBRIDISATIONS}, got {hyb!r}")
        return CORDERO_2008_CARBON[hyb]
    try:
        return CORDERO_2008[element]
    except KeyError:
        raise KeyError(
            f"no Cordero 2008 radius for element {element!r} in ffaudit's table"
        ) from None


def cordero_bond_length(
    e1: str, e2: str, hyb1: str | None = None, hyb2: str | None = None
) -> float:
    """Single-bond length estimate (A): sum of Cordero 2008 radii. Raises as :func:`cordero_radius`."""
    return cordero_radius(e1, hyb1) + cordero_radius(e2, hyb2)


def pyykko_radius(element: str, order: int) -> float:
    """Pyykkö radius (A) of ``element`` for bond order 1, 2 or 3.

    Raises ``KeyError`` for an element not in the table and ``ValueError`` for another order or an order
    the source gives no radius for (e.g. a double bond to H).
    """
    if order not in (1, 2, 3):
        raise ValueError(f"Pyykkö radii exist for bond orders 1, 2, 3 only, got {order!r}")
    try:
        radii = PYYKKO[element]
    except KeyError:
        raise KeyError(f"no Pyykkö radius for element {element!r} in ffaudit's table") from None
    value = radii[order - 1]
    if value is None:
        raise ValueError(f"Pyykkö gives no order-{order} radius for {element}")
    return value


def pyykko_bond_length(e1: str, e2: str, order: int) -> float:
    """Bond-length estimate (A): sum of Pyykkö radii for ``order``. Raises as :func:`pyykko_radius`."""
    return pyykko_radius(e1, order) + pyykko_radius(e2, order)
