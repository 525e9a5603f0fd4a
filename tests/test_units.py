"""Unit conversions and the force-constant/wavenumber relation, against published values.

Sources are named beside each value; "check_values §3" is /work/shared/reference/check_values.md section 3.
"""

from __future__ import annotations

import math

import pytest
from rdkit import Chem
from rdkit.Chem import rdForceFieldHelpers

from ffaudit import units

# Hydrogen-1 and chlorine-35 masses in u: AME 2020 via NIST "Atomic Weights and Isotopic Compositions"
# (1.00782503223, 34.968852682); RDKit's periodic table gives the same to its 10 digits (check_values §2).
M_H1 = 1.00782503223
M_CL35 = 34.968852682
M_C12 = 12.0  # exact by definition of the unified atomic mass unit


def test_constants_are_codata_2022() -> None:
    # CODATA 2022 (NIST): c and N_A exact by the 2019 SI definitions; m_u = 1.66053906892(52)e-27 kg.
    assert units.SPEED_OF_LIGHT == 299792458.0
    assert units.AVOGADRO == 6.02214076e23
    assert math.isclose(units.ATOMIC_MASS_CONSTANT, 1.66053906892e-27, rel_tol=1e-12)
    # thermochemical calorie: 1 cal = 4.184 J exactly
    assert units.JOULE_PER_KCAL == 4184.0


def test_force_constant_conversions() -> None:
    # check_values §3: 1 kcal/mol/A^2 = 0.694769546 N/m; 1 N/m = 1.439326185 kcal/mol/A^2
    assert units.kcal_mol_a2_to_n_per_m(1.0) == pytest.approx(0.694769546, abs=1e-9)
    assert units.n_per_m_to_kcal_mol_a2(1.0) == pytest.approx(1.439326185, abs=1e-9)
    # check_values §3: 1 mdyn/A = 100 N/m = 143.9326 kcal/mol/A^2 (MMFF94 rounds it to 143.9325)
    assert units.mdyn_per_a_to_kcal_mol_a2(1.0) == pytest.approx(143.9326, abs=5e-5)
    assert units.kcal_mol_a2_to_mdyn_per_a(143.9326) == pytest.approx(1.0, abs=1e-6)


def test_length_energy_angle_conversions() -> None:
    # definitions: 1 nm = 10 A; 1 kcal = 4.184 kJ; pi rad = 180 degree
    assert units.to_angstrom(0.109, "nanometer") == pytest.approx(1.09, rel=1e-15)
    assert units.from_angstrom(1.09, "nanometer") == pytest.approx(0.109, rel=1e-15)
    assert units.to_kcal_per_mol(4.184, "kJ/mol") == pytest.approx(1.0, rel=1e-15)
    assert units.from_kcal_per_mol(1.0, "kJ/mol") == pytest.approx(4.184, rel=1e-15)
    assert units.to_degree(math.pi, "radian") == pytest.approx(180.0, rel=1e-15)
    assert units.from_degree(90.0, "radian") == pytest.approx(math.pi / 2, rel=1e-15)
    # check_values §3: 1 kcal/mol/A^2 = 418.4 kJ/mol/nm^2
    factor = units.energy_factor("kJ/mol") / units.length_factor("nanometer") ** 2
    assert 418.4 * factor == pytest.approx(1.0, rel=1e-12)


def test_unknown_unit_is_refused() -> None:
    with pytest.raises(ValueError, match="furlong"):
        units.length_factor("furlong")
    with pytest.raises(ValueError, match="known: kJ/mol, kcal/mol"):
        units.to_kcal_per_mol(1.0, "eV")


def test_reduced_mass_hcl() -> None:
    # check_values §3 (a): mu(H-35Cl) = 0.97959254 u
    assert units.reduced_mass(M_H1, M_CL35) == pytest.approx(0.97959254, abs=1e-8)
    with pytest.raises(ValueError):
        units.reduced_mass(0.0, 1.0)


def test_wavenumber_hcl() -> None:
    # CRC Handbook "Force constants for bond stretching": HCl 5.16 N/cm = 516 N/m; check_values §3 (a)
    # gives 2990.04 cm-1 (omega_e 2990.95 cm-1 in the NIST WebBook).
    k = units.n_per_m_to_kcal_mol_a2(516.0)
    assert units.wavenumber(k, M_H1, M_CL35) == pytest.approx(2990.04, abs=1.0)


def test_wavenumber_ch_full_versus_half_convention() -> None:
    # check_values §3 (b): k = 340 kcal/mol/A^2 read as E = k dr^2 (curvature 680) gives 2936.8 cm-1,
    # read as E = k/2 dr^2 gives 2076.6 cm-1; the two differ by sqrt(2).
    full = units.wavenumber(2 * 340.0, M_C12, M_H1)
    half = units.wavenumber(340.0, M_C12, M_H1)
    assert full == pytest.approx(2936.8, abs=0.1)
    assert half == pytest.approx(2076.6, abs=0.1)
    assert full / half == pytest.approx(math.sqrt(2.0), rel=1e-12)


def test_wavenumber_shortcut_formula() -> None:
    # check_values §3: nu = 1302.79 sqrt(k[mdyn/A] / mu[u]) cm-1; CRC C-H (CH4) 5.44 mdyn/A
    k = units.mdyn_per_a_to_kcal_mol_a2(5.44)
    mu = units.reduced_mass(M_C12, M_H1)
    assert units.wavenumber(k, M_C12, M_H1) == pytest.approx(
        1302.79 * math.sqrt(5.44 / mu), rel=1e-5
    )


def test_wavenumber_inverse_round_trip() -> None:
    for nu in (500.0, 1700.0, 2990.04, 4401.0):
        k = units.curvature_from_wavenumber(nu, M_H1, M_CL35)
        assert units.wavenumber(k, M_H1, M_CL35) == pytest.approx(nu, rel=1e-12)
    with pytest.raises(ValueError):
        units.wavenumber(-1.0, M_H1, M_CL35)


def test_wavenumber_of_rdkit_uff_ch_constant() -> None:
    # RDKit's UFF getter returns kb in kcal/mol/A^2 with E = 1/2 kb dr^2 (check_values §4); for a C-H bond
    # of methane kb = 662.14, which check_values §3 puts at 2898 cm-1 ([C], reproduced here live).
    mol = Chem.AddHs(Chem.MolFromSmiles("C"))
    kb, _r0 = rdForceFieldHelpers.GetUFFBondStretchParams(mol, 0, 1)
    assert kb == pytest.approx(662.14, abs=0.01)
    assert units.wavenumber(kb, M_C12, M_H1) == pytest.approx(2898.0, abs=1.0)
