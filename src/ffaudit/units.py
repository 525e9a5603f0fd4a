"""Units: the program's internal units, named physical constants, and conversions at the edges.

Internal units are angstrom (length), degree (angle) and kcal/mol (energy, thermochemical calorie). Force
constants inside the program are curvatures k = d2E/dx2 (E = 1/2 k x^2): kcal/mol/A^2 for stretches,
kcal/mol/rad^2 for bends. Values are converted when read and when written, nowhere else.

Constants (CODATA 2022, as published by NIST, https://physics.nist.gov/cuu/Constants/):

- :data:`SPEED_OF_LIGHT` c = 299 792 458 m/s (exact, SI definition)
- :data:`AVOGADRO` N_A = 6.022 140 76e23 1/mol (exact, SI definition)
- :data:`ATOMIC_MASS_CONSTANT` m_u = 1.660 539 068 92(52)e-27 kg (CODATA 2022 recommended value)
- :data:`JOULE_PER_KCAL` 1 kcal = 4184 J (thermochemical calorie, by definition)

Every converter raises ``ValueError`` for a unit name it does not know; nothing guesses.
"""

from __future__ import annotations

import math

SPEED_OF_LIGHT = 299_792_458.0
"""c in m/s; exact (SI definition, CODATA 2022)."""

AVOGADRO = 6.022_140_76e23
"""N_A in 1/mol; exact (SI definition, CODATA 2022)."""

ATOMIC_MASS_CONSTANT = 1.660_539_068_92e-27
"""m_u (unified atomic mass unit, u) in kg; CODATA 2022 recommended value."""

JOULE_PER_KCAL = 4184.0
"""Thermochemical kilocalorie in J (definition)."""

METRE_PER_ANGSTROM = 1e-10
"""1 A = 1e-10 m (definition)."""

KCAL_MOL_A2_IN_N_PER_M = JOULE_PER_KCAL / (AVOGADRO * METRE_PER_ANGSTROM**2)
"""1 kcal/mol/A^2 expressed in N/m (= 0.694769546...)."""

N_PER_M_PER_MDYN_PER_A = 100.0
"""1 mdyn/A = 1e-8 N / 1e-10 m = 100 N/m (definition of the dyne: 1e-5 N)."""

LENGTH_UNITS: dict[str, float] = {"angstrom": 1.0, "nanometer": 10.0}
"""Declarable length units -> angstrom per unit."""

ENERGY_UNITS: dict[str, float] = {"kcal/mol": 1.0, "kJ/mol": 1.0 / 4.184}
"""Declarable energy units -> kcal/mol per unit (1 kcal = 4.184 kJ, thermochemical)."""

ANGLE_UNITS: dict[str, float] = {"degree": 1.0, "radian": 180.0 / math.pi}
"""Declarable angle units -> degree per unit."""


def _factor(table: dict[str, float], unit: str, what: str) -> float:
    try:
        return table[unit]
    except KeyError:
        known = ", ".join(sorted(table))
        raise ValueError(f"unknown {what} unit {unit!r} (known: {known})") from None


def length_factor(unit: str) -> float:
    """Angstrom per ``unit`` (``angstrom`` or ``nanometer``); ``ValueError`` for anything else."""
    return _factor(LENGTH_UNITS, unit, "length")


def energy_factor(unit: str) -> float:
    """kcal/mol per ``unit`` (``kcal/mol`` or ``kJ/mol``); ``ValueError`` for anything else."""
    return _factor(ENERGY_UNITS, unit, "energy")


def angle_factor(unit: str) -> float:
    """Degree per ``unit`` (``degree`` or ``radian``); ``ValueError`` for anything else."""
    return _factor(ANGLE_UNITS, unit, "angle")


def to_angstrom(value: float, unit: str) -> float:
    """``value`` in ``unit`` -> angstrom."""
    return value * length_factor(unit)


def from_angstrom(value: float, unit: str) -> float:
    """``value`` in angstrom -> ``unit``."""
    return value / length_factor(unit)


def to_kcal_per_mol(value: float, unit: str) -> float:
    """``value`` in ``unit`` -> kcal/mol."""
    return value * energy_factor(unit)


def from_kcal_per_mol(value: float, unit: str) -> float:
    """``value`` in kcal/mol -> ``unit``."""
    return value / energy_factor(unit)


def to_degree(value: float, unit: str) -> float:
    """``value`` in ``unit`` -> degree."""
    return value * angle_factor(unit)


def from_degree(value: float, unit: str) -> float:
    """``value`` in degree -> ``unit``."""
    return value / angle_factor(unit)


def kcal_mol_a2_to_n_per_m(k: float) -> float:
    """Stretch constant kcal/mol/A^2 -> N/m (per molecule)."""
    return k * KCAL_MOL_A2_IN_N_PER_M


def n_per_m_to_kcal_mol_a2(k: float) -> float:
    """Stretch constant N/m -> kcal/mol/A^2."""
    return k / KCAL_MOL_A2_IN_N_PER_M


def mdyn_per_a_to_kcal_mol_a2(k: float) -> float:
    """Stretch constant mdyn/A -> kcal/mol/A^2 (1 mdyn/A = 143.9326 kcal/mol/A^2)."""
    return n_per_m_to_kcal_mol_a2(k * N_PER_M_PER_MDYN_PER_A)


def kcal_mol_a2_to_mdyn_per_a(k: float) -> float:
    """Stretch constant kcal/mol/A^2 -> mdyn/A."""
    return kcal_mol_a2_to_n_per_m(k) / N_PER_M_PER_MDYN_PER_A


def reduced_mass(mass1_u: float, mass2_u: float) -> float:
    """mu = m1 m2 / (m1 + m2), in the unit of the masses (u). ``ValueError`` unless both are positive."""
    if mass1_u <= 0 or mass2_u <= 0:
        raise ValueError(f"masses must be positive, got {mass1_u} and {mass2_u}")
    return mass1_u * mass2_u / (mass1_u + mass2_u)


def wavenumber(k_curvature_kcal_per_mol_a2: float, mass1_u: float, mass2_u: float) -> float:
    """Harmonic stretch wavenumber in cm^-1: nu = 1/(2 pi c) sqrt(k/mu).

    ``k`` is the curvature d2E/dr2 (the "half" convention, E = 1/2 k dr^2) in kcal/mol/A^2; a constant
    written in the "full" convention (E = k dr^2) must be doubled first. ``ValueError`` for a negative k
    or a non-positive mass.
    """
    if k_curvature_kcal_per_mol_a2 < 0:
        raise ValueError(f"force constant must not be negative, got {k_curvature_kcal_per_mol_a2}")
    k_si = kcal_mol_a2_to_n_per_m(k_curvature_kcal_per_mol_a2)
    mu_kg = reduced_mass(mass1_u, mass2_u) * ATOMIC_MASS_CONSTANT
    c_cm_per_s = SPEED_OF_LIGHT * 100.0
    return math.sqrt(k_si / mu_kg) / (2.0 * math.pi * c_cm_per_s)


def curvature_from_wavenumber(wavenumber_cm: float, mass1_u: float, mass2_u: float) -> float:
    """Inverse of :func:`wavenumber`: the curvature k (kcal/mol/A^2) giving ``wavenumber_cm`` (cm^-1).

    ``ValueError`` for a negative wavenumber or a non-positive mass.
    """
    if wavenumber_cm < 0:
        raise ValueError(f"wavenumber must not be negative, got {wavenumber_cm}")
    mu_kg = reduced_mass(mass1_u, mass2_u) * ATOMIC_MASS_CONSTANT
    omega = 2.0 * math.pi * SPEED_OF_LIGHT * 100.0 * wavenumber_cm
    return n_per_m_to_kcal_mol_a2(mu_kg * omega**2)
