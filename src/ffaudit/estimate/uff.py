"""UFF parameter rules over UFF atom types, in ffaudit's internal units.

Source of every formula: A. K. Rappé, C. J. Casewit, K. S. Colwell, W. A. Goddard III, W. M. Skiff,
J. Am. Chem. Soc. 114, 10024 (1992) ("UFF"); equation numbers below are the paper's as commonly quoted
[from memory; the formulas themselves are verified against RDKit's UFF getters in tests/test_uff.py].

Units returned: lengths in angstrom, angles in degrees, energies in kcal/mol, force constants as
*curvatures* (E = 1/2 k x^2, k = d2E/dx2): kcal/mol/A^2 for bonds, kcal/mol/rad^2 for angles and
inversions.

- Natural bond length (eq. 2-4): r_IJ = r_I + r_J + r_BO - r_EN, with r_BO = -lambda (r_I + r_J) ln(n),
  lambda = 0.1332, and r_EN = r_I r_J (sqrt(chi_I) - sqrt(chi_J))^2 / (chi_I r_I + chi_J r_J). r_EN is
  *subtracted* (it is >= 0 and shortens polar bonds; this is what RDKit implements).
- Bond force constant (eq. 6): k_IJ = 664.12 Z*_I Z*_J / r_IJ^3 for E = 1/2 k (r - r_IJ)^2.
- Angle force constant (eq. 13): K_IJK = 664.12 Z*_I Z*_K / r_IK^5 [3 r_IJ r_JK (1 - cos^2 theta0)
  - r_IK^2 cos theta0], r_IK^2 = r_IJ^2 + r_JK^2 - 2 r_IJ r_JK cos theta0. UFF writes the bend as a short
  cosine series (general: C0 + C1 cos + C2 cos 2theta; linear: 1 + cos theta; trigonal: (1 - cos 3theta)/9).
  In every case the curvature at theta0 is exactly K, so K is returned as the curvature.
- Torsion (eq. 15-17): E = V/2 [1 - cos(n phi0) cos(n phi)], V per *bond*; UFF and RDKit divide V by the
  number of torsions about the bond. See :func:`torsion` for the hybridisation cases.
- Inversion (eq. 18-19): E = K (C0 + C1 cos w + C2 cos 2w); for C, N, O sp2 centres C0 = 1, C1 = -1,
  C2 = 0 and K = 6 kcal/mol (50 for a carbon bonded to an sp2 oxygen), per centre, shared over the three
  terms of the centre.
- Van der Waals (eq. 20-22): Lennard-Jones 12-6 E = D_IJ [(x_IJ/r)^12 - 2 (x_IJ/r)^6] with geometric
  combination x_IJ = sqrt(x_I x_J), D_IJ = sqrt(D_I D_J).

Every function raises ``KeyError`` (from :func:`ffaudit.estimate.uff_table.uff_type`) for an unknown type
label and ``ValueError`` for an argument outside the rule's domain (non-positive bond order, torsion about an
sp atom).
"""

from __future__ import annotations

import math
from typing import NamedTuple

from ffaudit.estimate.uff_table import uff_type

BOND_ORDER_LAMBDA = 0.1332
"""lambda of the bond-order correction r_BO (UFF 1992, eq. 3)."""

UFF_G = 332.06
"""Electrostatic constant used in UFF's force-constant rules, kcal/mol A e^-2; 664.12 = 2 G."""

GROUP_16 = frozenset({"O", "S", "Se", "Te", "Po"})
"""Elements of group 16, which UFF's torsion rules treat specially."""

_GROUP_16_V: dict[str, float] = {"O": 2.0}
"""sp3 group-16 torsion barrier V for the special O/S-type single-bond rule: 2 for O, 6.8 otherwise."""

PLANAR_INVERSION_K = 6.0
"""UFF inversion barrier for sp2 C, N, O centres, kcal/mol per centre."""

CARBONYL_INVERSION_K = 50.0
"""UFF inversion barrier for an sp2 carbon bonded to an sp2 oxygen, kcal/mol per centre."""

PHOSPHORUS_INVERSION_W0 = 84.4339
"""Equilibrium inversion angle (degrees) RDKit uses for a phosphorus centre. The UFF paper gives the
construction (a cosine series with its minimum at w0, barrier 22 kcal/mol) but not this angle; the value is
RDKit's and is used only so that the tests can reproduce RDKit [C]."""


def _check_order(order: float) -> None:
    if not order > 0.0:
        raise ValueError(f"bond order must be positive, got {order!r}")


def bond_r0(t1: str, t2: str, order: float) -> float:
    """UFF natural bond length r_IJ (angstrom) between types ``t1`` and ``t2`` with bond order ``order``.

    ``order`` is 1, 1.5 (aromatic), 2, 3 or UFF's 1.41 for amide C-N. Raises ``ValueError`` for a
    non-positive order.
    """
    _check_order(order)
    a, b = uff_type(t1), uff_type(t2)
    r_sum = a.r1 + b.r1
    r_bo = -BOND_ORDER_LAMBDA * r_sum * math.log(order)
    r_en = a.r1 * b.r1 * (math.sqrt(a.chi) - math.sqrt(b.chi)) ** 2 / (a.chi * a.r1 + b.chi * b.r1)
    return r_sum + r_bo - r_en


def bond_k(t1: str, t2: str, order: float) -> float:
    """UFF bond force constant (curvature, kcal/mol/A^2): 664.12 Z*_I Z*_J / r_IJ^3.

    Raises ``ValueError`` for a non-positive order.
    """
    r = bond_r0(t1, t2, order)
    return 2.0 * UFF_G * uff_type(t1).z_star * uff_type(t2).z_star / r**3


def angle_theta0(apex: str) -> float:
    """UFF natural angle (degrees) at an apex of type ``apex``: the type's theta0."""
    return uff_type(apex).theta0


def angle_k(
    t1: str,
    apex: str,
    t3: str,
    order12: float = 1.0,
    order23: float = 1.0,
    theta0: float | None = None,
) -> float:
    """UFF angle force constant K_IJK (kcal/mol/rad^2) for ``t1``-``apex``-``t3``.

    ``order12``/``order23`` are the orders of the two bonds (they set r_IJ and r_JK); ``theta0``
    (degrees) defaults to the apex type's theta0. The value is the curvature d2E/dtheta2 at theta0 of
    UFF's bend energy, whichever cosine form UFF uses for the apex (general, linear or trigonal): the
    same number that RDKit's ``GetUFFAngleBendParams`` returns as ``ka``. Raises ``ValueError`` for a
    non-positive bond order.
    """
    theta = math.radians(angle_theta0(apex) if theta0 is None else theta0)
    cos_t = math.cos(theta)
    r12 = bond_r0(t1, apex, order12)
    r23 = bond_r0(apex, t3, order23)
    r13_sq = r12 * r12 + r23 * r23 - 2.0 * r12 * r23 * cos_t
    r13 = math.sqrt(r13_sq)
    prefactor = 2.0 * UFF_G * uff_type(t1).z_star * uff_type(t3).z_star / r13**5
    return prefactor * (3.0 * r12 * r23 * (1.0 - cos_t * cos_t) - r13_sq * cos_t)


class UffTorsion(NamedTuple):
    """A UFF torsion about one bond: barrier ``v`` (kcal/mol, for the bond), periodicity ``n``, ``phase``.

    Energy of one torsion when the bond has ``m`` torsions: E = (v / m) / 2 * [1 + cos(n phi - phase)],
    i.e. ffaudit's Fourier form k (1 + cos(n phi - phase)) with k = v / (2 m). ``phase`` (degrees) is 0 when
    UFF's cos(n phi0) is -1 and 180 when it is +1. ``phi0`` is UFF's equilibrium angle as the paper states
    it, kept for reference.
    """

    v: float
    n: int
    phase: float
    phi0: float


def _eq17(t2: str, t3: str, order: float) -> float:
    """UFF eq. 17: V = 5 sqrt(U_J U_K) (1 + 4.18 ln n)."""
    return 5.0 * math.sqrt(uff_type(t2).u_sp2 * uff_type(t3).u_sp2) * (1.0 + 4.18 * math.log(order))


def torsion(
    t2: str,
    t3: str,
    hyb2: str,
    hyb3: str,
    order: float,
    end_atom_sp2: bool = False,
) -> UffTorsion:
    """UFF torsion parameters about the bond between central atoms of types ``t2`` and ``t3``.

    ``hyb2``/``hyb3`` are ``"sp2"`` or ``"sp3"`` (RDKit's hybridisation of the two central atoms); ``order``
    is the central bond's order; ``end_atom_sp2`` says whether an outer atom of this torsion is sp2.
    Rules (UFF 1992, eq. 16-17 and the text around them):

    - sp3-sp3: V = sqrt(V_J V_K), n = 3, phi0 = 180 (staggered minimum). Single bond between two group-16
      atoms: V = sqrt(V_J V_K) with V = 2 for O and 6.8 for S/Se/Te, n = 2, phi0 = 90.
    - sp2-sp2: V = 5 sqrt(U_J U_K) (1 + 4.18 ln n_bond), n = 2, phi0 = 180.
    - sp3-sp2: V = 1, n = 6, phi0 = 0. Single bond whose sp3 atom is group 16 and sp2 atom is not:
      the sp2-sp2 formula with n = 2, phi0 = 90. Otherwise, single bond where the sp2 side continues to
      another sp2 atom (the propene case): V = 2, n = 3, phi0 = 180.

    The paper states the propene case for "an sp2 atom bonded to another sp2 atom"; RDKit's getter applies
    it per torsion when either outer atom of that torsion is sp2, which is what ``end_atom_sp2`` means here.
    Raises ``ValueError`` for any other hybridisation (UFF has no torsion about sp atoms) and for a
    non-positive order.
    """
    _check_order(order)
    hybs = (hyb2, hyb3)
    for h in hybs:
        if h not in ("sp2", "sp3"):
            raise ValueError(f"UFF defines torsions about sp2/sp3 atoms only, got {h!r}")
    a, b = uff_type(t2), uff_type(t3)
    single = order == 1.0
    if hybs == ("sp3", "sp3"):
        if single and a.element in GROUP_16 and b.element in GROUP_16:
            v2 = _GROUP_16_V.get(a.element, 6.8)
            v3 = _GROUP_16_V.get(b.element, 6.8)
            return UffTorsion(math.sqrt(v2 * v3), 2, 0.0, 90.0)
        return UffTorsion(math.sqrt(a.v_sp3 * b.v_sp3), 3, 0.0, 180.0)
    if hybs == ("sp2", "sp2"):
        return UffTorsion(_eq17(t2, t3, order), 2, 180.0, 180.0)
    sp3_type, sp2_type = (a, b) if hyb2 == "sp3" else (b, a)
    if single and sp3_type.element in GROUP_16 and sp2_type.element not in GROUP_16:
        return UffTorsion(_eq17(t2, t3, order), 2, 0.0, 90.0)
    if single and end_atom_sp2:
        return UffTorsion(2.0, 3, 0.0, 180.0)
    return UffTorsion(1.0, 6, 180.0, 0.0)


def inversion_k(centre_element: str, bound_to_sp2_oxygen: bool = False) -> float:
    """UFF inversion constant of *one* of the three inversion terms of a trigonal centre (kcal/mol).

    C, N, O: K/3 with K = 6, or 50 for a carbon bonded to an sp2 oxygen (``bound_to_sp2_oxygen``; the
    flag is ignored for N and O). The term is E = K/3 (1 - cos w), whose curvature at w = 0 is K/3
    (kcal/mol/rad^2). P: K = 22 / (C0 + C1 + C2) with the cosine series built to have its minimum at
    :data:`PHOSPHORUS_INVERSION_W0`, divided by 3. This equals what RDKit's ``GetUFFInversionParams``
    returns. Raises ``ValueError`` for any other element.
    """
    if centre_element in ("C", "N", "O"):
        carbonyl = centre_element == "C" and bound_to_sp2_oxygen
        return (CARBONYL_INVERSION_K if carbonyl else PLANAR_INVERSION_K) / 3.0
    if centre_element == "P":
        w0 = math.radians(PHOSPHORUS_INVERSION_W0)
        c2 = 1.0
        c1 = -4.0 * math.cos(w0)
        c0 = -(c1 * math.cos(w0) + c2 * math.cos(2.0 * w0))
        return 22.0 / (c0 + c1 + c2) / 3.0
    raise ValueError(
        f"no UFF inversion rule for a {centre_element!r} centre in ffaudit (C, N, O, P)"
    )


def inversion_k_centre(centre_element: str, bound_to_sp2_oxygen: bool = False) -> float:
    """UFF inversion constant for a whole planar C, N or O centre (kcal/mol/rad^2): 3 x :func:`inversion_k`.

    Use this when a centre has *one* out-of-plane term (as in ffaudit's parameter sets) rather than UFF's
    three. For small out-of-plane displacements the three UFF terms add up to about one harmonic term of
    this curvature. Raises ``ValueError`` for elements other than C, N, O.
    """
    if centre_element not in ("C", "N", "O"):
        raise ValueError(f"planar inversion rule covers C, N, O centres, got {centre_element!r}")
    return 3.0 * inversion_k(centre_element, bound_to_sp2_oxygen)


def lj(t: str) -> tuple[float, float]:
    """UFF van der Waals (x_I, D_I) of type ``t``: minimum distance of the like pair (A), depth (kcal/mol)."""
    p = uff_type(t)
    return p.x1, p.d1


def lj_pair(t1: str, t2: str) -> tuple[float, float]:
    """UFF combined (x_IJ, D_IJ) by geometric means (A, kcal/mol)."""
    x1, d1 = lj(t1)
    x2, d2 = lj(t2)
    return math.sqrt(x1 * x2), math.sqrt(d1 * d2)


def lj_rmin_half_epsilon(t: str) -> tuple[float, float]:
    """UFF van der Waals of type ``t`` as ffaudit's nonbonded values: (rmin_half = x_I / 2, epsilon = D_I).

    Note: UFF combines distances geometrically, while a set of per-class ``rmin_half`` values is usually
    combined arithmetically (rmin_half_I + rmin_half_J); the two agree for like pairs only.
    """
    x, d = lj(t)
    return x / 2.0, d
