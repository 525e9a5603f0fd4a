"""Badger's rule: a cross-check between a bond's force constant and its length.

R. M. Badger, "A relation between internuclear distances and bond force constants", J. Chem. Phys. 2, 128
(1934), and "The relation between the internuclear distances and force constants of molecules and its
application to polyatomic molecules", J. Chem. Phys. 3, 710 (1935):

    k_e (r_e - d_ij)^3 = 1.86      (k_e in mdyn/A, r_e and d_ij in A)

where d_ij depends only on the periods (rows) i and j of the two bonded atoms.

**Status of the constants: typed in from memory [M], not checked against the papers.** ``1.86`` and the
d_ij for rows (1,2), (2,2), (2,3), (3,3) are the values usually quoted; (1,3), (1,4), (2,4) are less
certain. ``tests/test_uff.py`` compares the rule with CRC Handbook force constants (check values,
§3) and documents how far off it is. Badger fitted diatomic molecules; for single bonds in polyatomic
molecules (C-C, C-N) it runs 25-35 % low, so use it as a plausibility check (a factor-of-two window), never
as a parameter source.

Force constants are curvatures (E = 1/2 k (r - r0)^2) in kcal/mol/A^2, converted from mdyn/A with
CODATA 2022 constants (:mod:`ffaudit.units`).
"""

from __future__ import annotations

from collections.abc import Mapping
from types import MappingProxyType

from ffaudit.units import KCAL_MOL_A2_IN_N_PER_M, N_PER_M_PER_MDYN_PER_A

BADGER_CONSTANT = 1.86
"""Badger's constant, mdyn/A x A^3 [M]."""

KCAL_MOL_A2_PER_MDYN_A = N_PER_M_PER_MDYN_PER_A / KCAL_MOL_A2_IN_N_PER_M
"""1 mdyn/A in kcal/mol/A^2 (= 143.93...)."""

BADGER_D: Mapping[tuple[int, int], float] = MappingProxyType(
    {
        (1, 2): 0.34,  # [M]
        (1, 3): 0.59,  # [M]
        (1, 4): 0.65,  # [M], less certain
        (2, 2): 0.68,  # [M]
        (2, 3): 0.90,  # [M]
        (2, 4): 1.04,  # [M], less certain
        (3, 3): 1.18,  # [M]
    }
)
"""d_ij (A) by the periods (i <= j) of the two bonded atoms [M]."""

_PERIOD: Mapping[str, int] = MappingProxyType(
    {
        "H": 1,
        "B": 2,
        "C": 2,
        "N": 2,
        "O": 2,
        "F": 2,
        "Si": 3,
        "P": 3,
        "S": 3,
        "Cl": 3,
        "Se": 4,
        "Br": 4,
        "I": 5,
    }
)


def badger_d(e1: str, e2: str) -> float:
    """d_ij (A) for a bond between elements ``e1`` and ``e2``.

    Raises ``KeyError`` for an element ffaudit does not know and ``ValueError`` for a pair of periods
    with no d_ij here (e.g. H-H, anything with iodine).
    """
    try:
        rows = sorted((_PERIOD[e1], _PERIOD[e2]))
    except KeyError as exc:
        raise KeyError(f"Badger's rule: no period known for element {exc.args[0]!r}") from None
    key = (rows[0], rows[1])
    if key not in BADGER_D:
        raise ValueError(f"Badger's rule: no d_ij for periods {key} ({e1}-{e2})")
    return BADGER_D[key]


def badger_k(r0: float, e1: str, e2: str) -> float:
    """Force constant (curvature, kcal/mol/A^2) that Badger's rule predicts for a bond of length ``r0`` (A).

    Raises ``ValueError`` when ``r0`` is not longer than d_ij, and as :func:`badger_d`.
    """
    d = badger_d(e1, e2)
    if r0 <= d:
        raise ValueError(
            f"Badger's rule: r0 = {r0} A is not longer than d_ij = {d} A for {e1}-{e2}"
        )
    return BADGER_CONSTANT / (r0 - d) ** 3 * KCAL_MOL_A2_PER_MDYN_A


def badger_r0(k: float, e1: str, e2: str) -> float:
    """Bond length (A) that Badger's rule predicts for curvature ``k`` (kcal/mol/A^2).

    Raises ``ValueError`` for a non-positive ``k``, and as :func:`badger_d`.
    """
    if not k > 0.0:
        raise ValueError(f"Badger's rule needs a positive force constant, got {k!r}")
    return badger_d(e1, e2) + float((BADGER_CONSTANT * KCAL_MOL_A2_PER_MDYN_A / k) ** (1.0 / 3.0))


def badger_ratio(k: float, r0: float, e1: str, e2: str) -> float:
    """``k`` divided by Badger's prediction for ``r0``: about 1 for a consistent pair (k, r0).

    A ratio outside roughly 0.5-2 suggests a unit or convention slip (a factor of 2 is the half/full
    energy-convention mix-up). Raises as :func:`badger_k`.
    """
    return k / badger_k(r0, e1, e2)
