"""File values <-> internal values, per (kind, form): units and energy conventions in one table.

A file states its units (``header.units``) and, per kind, its energy convention (``header.conventions``).
Inside the program values are in angstrom, degree and kcal/mol, harmonic constants are curvatures
(``half``: E = 1/2 k x^2) and dihedral constants multiply (1 + cos) directly (``full``); see
:mod:`ffaudit.paramset.model`. :data:`FIELDS` says, for every value a file may write, how its unit is made:
energy^a length^b (constants per radian stay per radian whatever the angle unit), or an angle (converted
from the file's angle unit). The loader and the writer both use this table, so they cannot disagree.

Conventions: a ``full`` harmonic constant is doubled on the way in (E = k x^2 has curvature 2k); a ``half``
dihedral constant is halved on the way in (E = k/2 (1 + cos)). Derived values (``k`` of polynomial and
Morse forms, ``theta0`` of the linear angle) are added on the way in and never written.
Functions raise ``ValueError`` for an unknown unit, convention, kind or form, and ``KeyError`` for a
required value that is missing (the schema reports those before conversion is reached).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

from ffaudit import units


@dataclass(frozen=True)
class Dim:
    """Unit of a value: energy**energy * length**length, or an angle when ``angle`` is True."""

    energy: int = 0
    length: int = 0
    angle: bool = False
    convention: bool = False
    """True for the constant that the kind's energy convention scales."""
    optional: bool = False
    """Optional in files; 0.0 when absent, not written when 0.0."""


_LEN = Dim(length=1)
_ENERGY = Dim(energy=1)
_ANGLE = Dim(angle=True)

FIELDS: dict[tuple[str, str], dict[str, Dim]] = {
    ("bond", "harmonic"): {"k": Dim(energy=1, length=-2, convention=True), "r0": _LEN},
    ("bond", "polynomial"): {
        "r0": _LEN,
        "c2": Dim(energy=1, length=-2),
        "c3": Dim(energy=1, length=-3, optional=True),
        "c4": Dim(energy=1, length=-4, optional=True),
    },
    ("bond", "morse"): {"r0": _LEN, "depth": _ENERGY, "width": Dim(length=-1)},
    ("angle", "harmonic"): {"k": Dim(energy=1, convention=True), "theta0": _ANGLE},
    ("angle", "polynomial"): {
        "theta0": _ANGLE,
        "c2": _ENERGY,
        "c3": Dim(energy=1, optional=True),
        "c4": Dim(energy=1, optional=True),
    },
    ("angle", "linear"): {"k": _ENERGY},
    ("out_of_plane", "harmonic"): {
        "k": Dim(energy=1, convention=True),
        "chi0": Dim(angle=True, optional=True),
    },
    ("nonbonded", "lennard_jones"): {"rmin_half": _LEN, "epsilon": _ENERGY},
    ("charge_increment", "increment"): {"increment": Dim()},
    ("stretch_bend", "cross"): {"k_ab": Dim(energy=1, length=-1), "k_cb": Dim(energy=1, length=-1)},
}
"""(kind, form) -> file field -> unit. Dihedral terms are handled by :func:`dihedral_to_internal`."""

FORMS: dict[str, tuple[str, ...]] = {
    "bond": ("harmonic", "polynomial", "morse"),
    "angle": ("harmonic", "polynomial", "linear"),
    "dihedral": ("fourier",),
    "out_of_plane": ("harmonic",),
    "nonbonded": ("lennard_jones",),
    "charge_increment": ("increment",),
    "stretch_bend": ("cross",),
}
"""Forms per kind; the first is the default when a file writes no ``form:``."""

DEFAULT_CONVENTION: dict[str, str] = {
    "bond": "half",
    "angle": "half",
    "out_of_plane": "half",
    "dihedral": "full",
}
"""The internal convention of each kind, used by the writer when a header declares none."""


def _scale(dim: Dim, unit_map: Mapping[str, str]) -> float:
    if dim.angle:
        return units.angle_factor(unit_map["angle"])
    factor = 1.0
    if dim.energy:
        factor *= units.energy_factor(unit_map["energy"]) ** dim.energy
    if dim.length:
        factor *= units.length_factor(unit_map["length"]) ** dim.length
    return factor


def convention_factor(kind: str, convention: str) -> float:
    """Multiplier from a file constant in ``convention`` to the internal constant of ``kind``."""
    table = {"full": 1.0, "half": 0.5} if kind == "dihedral" else {"half": 1.0, "full": 2.0}
    try:
        return table[convention]
    except KeyError:
        raise ValueError(f"unknown {kind} convention {convention!r}") from None


def fields(kind: str, form: str) -> Mapping[str, Dim]:
    """The file fields of (kind, form); ``ValueError`` when there is no such form."""
    try:
        return FIELDS[(kind, form)]
    except KeyError:
        raise ValueError(f"unknown form {form!r} for {kind}") from None


def to_internal(
    kind: str,
    form: str,
    values: Mapping[str, float],
    unit_map: Mapping[str, str],
    conventions: Mapping[str, str],
) -> dict[str, float]:
    """Convert one entry's file values to internal values (with the derived ``k`` / ``theta0``)."""
    out: dict[str, float] = {}
    for name, dim in fields(kind, form).items():
        if name not in values and dim.optional:
            out[name] = 0.0
            continue
        value = float(values[name]) * _scale(dim, unit_map)
        if dim.convention:
            value *= convention_factor(kind, conventions[kind])
        out[name] = value
    if form == "polynomial":
        out["k"] = 2.0 * out["c2"]
    elif form == "morse":
        out["k"] = 2.0 * out["depth"] * out["width"] ** 2
    elif form == "linear":
        out["theta0"] = 180.0
    return out


def from_internal(
    kind: str,
    form: str,
    values: Mapping[str, float],
    unit_map: Mapping[str, str],
    conventions: Mapping[str, str],
) -> dict[str, float]:
    """Convert internal values back to the file's units and conventions (file fields only, in order)."""
    out: dict[str, float] = {}
    for name, dim in fields(kind, form).items():
        value = float(values.get(name, 0.0))
        if dim.optional and value == 0.0:
            continue
        value /= _scale(dim, unit_map)
        if dim.convention:
            value /= convention_factor(kind, conventions[kind])
        out[name] = value
    return out


def dihedral_to_internal(
    periodicity: int,
    phase: float,
    k: float,
    unit_map: Mapping[str, str],
    conventions: Mapping[str, str],
) -> tuple[int, float, float]:
    """(n, phase in degree, k in internal kcal/mol) of one file Fourier term."""
    return (
        int(periodicity),
        float(phase) * units.angle_factor(unit_map["angle"]),
        float(k)
        * units.energy_factor(unit_map["energy"])
        * convention_factor("dihedral", conventions["dihedral"]),
    )


def dihedral_from_internal(
    periodicity: int,
    phase: float,
    k: float,
    unit_map: Mapping[str, str],
    conventions: Mapping[str, str],
) -> tuple[int, float, float]:
    """Inverse of :func:`dihedral_to_internal`."""
    return (
        int(periodicity),
        phase / units.angle_factor(unit_map["angle"]),
        k
        / units.energy_factor(unit_map["energy"])
        / convention_factor("dihedral", conventions["dihedral"]),
    )
