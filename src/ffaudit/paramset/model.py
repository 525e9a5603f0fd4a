"""The parameter-set data model: what a loaded set is, in internal units.

Internal units (see :mod:`ffaudit.units`): angstrom, degree, kcal/mol; force constants are *curvatures*
(E = 1/2 k x^2, i.e. k = d2E/dx2) in kcal/mol/A^2 (bonds) and kcal/mol/rad^2 (angles, out-of-plane);
dihedral Fourier terms are E = k (1 + cos(n phi - phase)). Whatever convention a file uses is converted on
load and converted back on write; nothing inside the program ever sees the file's convention.

Everything here is a frozen dataclass of plain types so that a set can be pickled to worker processes and
Dask workers. :class:`ParameterSet` is built by :func:`ffaudit.paramset.load.load_parameter_set`; it is never
mutated afterwards.

Value names per (kind, form), all internal units:

======================  =============  ===================================================================
kind                    form           values
======================  =============  ===================================================================
bond                    harmonic       ``k`` (kcal/mol/A^2, curvature), ``r0`` (A)
bond                    polynomial     ``r0``, ``c2``, ``c3``, ``c4`` (E = sum c_n (r-r0)^n), ``k`` = 2 c2
bond                    morse          ``r0``, ``depth`` (kcal/mol), ``width`` (1/A), ``k`` = 2 depth width^2
angle                   harmonic       ``k`` (kcal/mol/rad^2, curvature), ``theta0`` (deg)
angle                   polynomial     ``theta0``, ``c2``, ``c3``, ``c4`` (per rad^n), ``k`` = 2 c2
angle                   linear         ``k`` (kcal/mol; E = k (1 + cos theta), zero slope at 180), ``theta0`` = 180
dihedral                fourier        ``fourier``: tuple of :class:`FourierTerm`
out_of_plane            harmonic       ``k`` (kcal/mol/rad^2, curvature), ``chi0`` (deg, normally 0)
nonbonded               lennard_jones  ``rmin_half`` (A), ``epsilon`` (kcal/mol)
charge_increment        increment      ``increment`` (e, moved from the first class to the second)
stretch_bend            cross          ``k_ab``, ``k_cb`` (kcal/mol/A/rad)
======================  =============  ===================================================================
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field

KINDS: tuple[str, ...] = (
    "bond",
    "angle",
    "dihedral",
    "out_of_plane",
    "nonbonded",
    "charge_increment",
    "stretch_bend",
)
"""Term kinds, in report order. The YAML table for kind ``k`` is :data:`TABLE_NAMES` [k]."""

TABLE_NAMES: dict[str, str] = {
    "bond": "bonds",
    "angle": "angles",
    "dihedral": "dihedrals",
    "out_of_plane": "out_of_plane",
    "nonbonded": "nonbonded",
    "charge_increment": "charge_increments",
    "stretch_bend": "stretch_bends",
}

ARITY: dict[str, int] = {
    "bond": 2,
    "angle": 3,
    "dihedral": 4,
    "out_of_plane": 4,
    "nonbonded": 1,
    "charge_increment": 2,
    "stretch_bend": 3,
}

WILDCARD = "*"
"""Matches any class. Allowed at dihedral ends and at the three outer positions of out-of-plane tuples."""

WILDCARD_POSITIONS: dict[str, tuple[int, ...]] = {"dihedral": (0, 3), "out_of_plane": (1, 2, 3)}
"""Tuple positions where :data:`WILDCARD` is allowed; kinds not listed allow none (the lint rule
``bad-wildcard`` and the wildcard tier of resolution both read it)."""

BOND_ORDERS: tuple[str, ...] = ("single", "double", "triple", "aromatic")


@dataclass(frozen=True)
class SourceLocation:
    """Where something was written: file path, 1-based line and column."""

    path: str
    line: int
    column: int = 1

    def __str__(self) -> str:
        return f"{self.path}:{self.line}:{self.column}"


@dataclass(frozen=True)
class Source:
    """A citation that entries refer to by ``key``."""

    key: str
    citation: str
    doi: str | None = None
    url: str | None = None
    note: str | None = None
    location: SourceLocation | None = None


@dataclass(frozen=True)
class EnvClass:
    """An environment class (atom type): an id, its element, the SMARTS rules that assign it.

    The first atom of every SMARTS pattern is the atom being classified. Classes are tried in file order and
    the first class with any matching pattern wins (see :mod:`ffaudit.perceive.classes`).
    ``smarts_locations`` runs parallel to ``smarts``.
    """

    id: str
    element: str
    smarts: tuple[str, ...]
    parent: str | None = None
    description: str = ""
    location: SourceLocation | None = None
    smarts_locations: tuple[SourceLocation | None, ...] = ()
    equivalent: tuple[str, ...] = ()
    """Classes declared interchangeable with this one for analogy estimates."""
    estimated: bool = False
    """True for a class proposed by an estimate (emitted fragment), not reviewed by a person."""
    hybridisation: str | None = None
    """Optional descriptor (``sp``, ``sp2``, ``sp3``, ``none``) used by the analogy tier."""
    aromatic: bool | None = None
    """Optional descriptor used by the analogy tier."""
    charge: int | None = None
    """Optional descriptor (formal charge) used by the analogy tier."""
    source: str | None = None
    """Optional source key for the class definition."""


@dataclass(frozen=True)
class FourierTerm:
    """One term k (1 + cos(n phi - phase)) of a dihedral series; ``phase`` in degrees, ``k`` in kcal/mol."""

    periodicity: int
    phase: float
    k: float


TableKey = tuple[tuple[str, ...], str | None, bool | None]
"""(canonical class tuple, bond-order qualifier or None, ring qualifier or None)."""


@dataclass(frozen=True)
class Entry:
    """One parameter-table row, in internal units, with where it came from.

    ``classes`` is in canonical order (see :mod:`ffaudit.paramset.canonical`); ``bond_order`` and ``in_ring``
    qualify the bond (bonds) or the central bond (dihedrals) and are None when the entry applies to any.
    ``origin`` is the file the entry was read from (several sets can be layered with later overriding earlier).
    """

    kind: str
    classes: tuple[str, ...]
    form: str
    values: Mapping[str, float]
    location: SourceLocation
    source: str | None = None
    bond_order: str | None = None
    in_ring: bool | None = None
    fourier: tuple[FourierTerm, ...] = ()
    estimated: bool = False
    """True when the file marks the entry as an estimate (e.g. an emitted fragment not yet reviewed)."""
    note: str | None = None
    doc_path: tuple[str | int, ...] = ()

    @property
    def key(self) -> TableKey:
        return (self.classes, self.bond_order, self.in_ring)

    @property
    def wildcards(self) -> int:
        return sum(1 for c in self.classes if c == WILDCARD)


@dataclass(frozen=True)
class Header:
    """Set-wide declarations, normalised.

    ``conventions`` maps each harmonic kind (bond, angle, out_of_plane) to ``"half"`` (file constant multiplies
    1/2 (x-x0)^2) or ``"full"`` (multiplies (x-x0)^2), and ``dihedral`` to ``"full"`` (k (1+cos)) or ``"half"``
    (V/2 (1+cos)). ``units`` is what the file declared (e.g. ``{"length": "angstrom", ...}``).
    ``out_of_plane_centres`` is ``"none"``, ``"trigonal"`` (every atom with three neighbours) or ``"planar"``
    (three neighbours and sp2 or aromatic). ``scale_14`` has ``vdw`` and ``electrostatic`` factors.
    """

    name: str
    version: str
    description: str = ""
    demonstration: bool = False
    units: Mapping[str, str] = field(default_factory=dict)
    conventions: Mapping[str, str] = field(default_factory=dict)
    out_of_plane_centres: str = "planar"
    dihedrals_about_linear: bool = False
    scale_14: Mapping[str, float] = field(default_factory=dict)
    lint_disable: tuple[str, ...] = ()


@dataclass(frozen=True)
class ParameterSet:
    """A loaded, validated parameter set (possibly several files layered). Read-only after construction."""

    header: Header
    sources: Mapping[str, Source]
    classes: tuple[EnvClass, ...]
    tables: Mapping[str, Mapping[TableKey, Entry]]
    """kind -> canonical key -> entry; every kind of :data:`KINDS` is present (possibly empty)."""
    paths: tuple[str, ...] = ()
    """The files (or ``embedded:NAME``) this set was built from, base first."""
    content_hash: str = ""
    """sha256 of the raw bytes of every file, in order; identifies the exact set in reports."""

    @property
    def class_index(self) -> dict[str, EnvClass]:
        return {c.id: c for c in self.classes}

    def entries(self, kind: str) -> Mapping[TableKey, Entry]:
        return self.tables.get(kind, {})

    def parent_chain(self, class_id: str) -> tuple[str, ...]:
        """``class_id``'s ancestors, nearest first (cycles are rejected by the loader)."""
        index = self.class_index
        chain: list[str] = []
        current = index.get(class_id)
        while current is not None and current.parent is not None and current.parent not in chain:
            chain.append(current.parent)
            current = index.get(current.parent)
        return tuple(chain)
