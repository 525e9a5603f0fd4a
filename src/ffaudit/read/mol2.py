"""Tripos MOL2 files (``.mol2``).

The file is streamed line by line and cut at ``@<TRIPOS>MOLECULE`` lines; each block is parsed with
``Chem.MolFromMol2Block(block, sanitize=True, removeHs=False)``. As in RDKit's reader, hydrogens must be
explicit (MOL2 has no implicit hydrogens) and formal charges are inferred from atom types and valence. The
name is the line after ``@<TRIPOS>MOLECULE`` (``record N`` when blank or ``*****``). Text before the first
``@<TRIPOS>MOLECULE`` other than blank and ``#`` comment lines becomes an unreadable record, so nothing in
the file goes unreported.

A block RDKit cannot read becomes an unreadable record. RDKit often refuses a MOL2 block without a word, so
the reason then gives the reader's own finding, citing file lines: a missing ATOM or BOND section, a counts
line that does not match the sections, coordinates that are not numbers, an atom type whose element is
unknown, a bond to an atom that does not exist, an unknown bond type. An atom type that RDKit reads by its
element prefix but that is not a SYBYL type (``C.xx``) is accepted and noted in ``meta["warnings"]``.
"""

from __future__ import annotations

from collections.abc import Iterable, Iterator

from rdkit import Chem

from ffaudit.read.blocks import Block, split_at_starts
from ffaudit.read.common import (
    ParseResult,
    clean_name,
    default_name,
    make_record,
    parse_then_classify,
)
from ffaudit.read.record import Record
from ffaudit.read.source import Line, display_path

MOLECULE_TAG = "@<TRIPOS>MOLECULE"
_TAG = "@<TRIPOS>"
_PERIODIC = Chem.GetPeriodicTable()
_ELEMENTS = frozenset(_PERIODIC.GetElementSymbol(z) for z in range(1, 119))
#: SYBYL atom types of the Tripos MOL2 format (types that are a bare element symbol are accepted as well).
SYBYL_TYPES = frozenset(
    [
        "C.3",
        "C.2",
        "C.1",
        "C.ar",
        "C.cat",
        "N.3",
        "N.2",
        "N.1",
        "N.ar",
        "N.am",
        "N.pl3",
        "N.4",
        "O.3",
        "O.2",
        "O.co2",
        "O.spc",
        "O.t3p",
        "S.3",
        "S.2",
        "S.O",
        "S.O2",
        "P.3",
        "H.spc",
        "H.t3p",
        "Cr.th",
        "Cr.oh",
        "Co.oh",
        "Du.C",
        "LP",
        "Du",
        "Any",
        "Hal",
        "Het",
        "Hev",
    ]
)
BOND_TYPES = frozenset({"1", "2", "3", "am", "ar", "du", "un", "nc"})


def is_molecule_start(text: str) -> bool:
    """True for the ``@<TRIPOS>MOLECULE`` line that starts a MOL2 record."""
    return text.strip().upper() == MOLECULE_TAG


def parse_mol2_block(lines: list[str], *, first_line: int = 1) -> ParseResult:
    """Parse one MOL2 record (its lines, starting with ``@<TRIPOS>MOLECULE``). Never raises.

    ``first_line`` is the file line number of ``lines[0]``; reasons cite file lines.
    """
    text = "".join(line + "\n" for line in lines)
    return parse_then_classify(
        lambda sanitize: Chem.MolFromMol2Block(text, sanitize=sanitize, removeHs=False),
        what="MOL2 record",
        diagnose=lambda: diagnose_mol2(lines, first_line=first_line),
    )


def _sections(lines: list[str]) -> dict[str, list[tuple[int, str]]]:
    """Section name -> its non-blank, non-comment lines with their offsets in ``lines``."""
    sections: dict[str, list[tuple[int, str]]] = {}
    current: list[tuple[int, str]] | None = None
    for offset, text in enumerate(lines):
        stripped = text.strip()
        if stripped.upper().startswith(_TAG):
            current = sections.setdefault(stripped[len(_TAG) :].upper(), [])
        elif current is not None and stripped and not stripped.startswith("#"):
            current.append((offset, stripped))
    return sections


def diagnose_mol2(lines: list[str], *, first_line: int = 1) -> str | None:
    """The first structural problem found in a MOL2 record, citing file lines, or None."""
    sections = _sections(lines)
    molecule = sections.get("MOLECULE", [])
    if len(molecule) < 2:
        return "the MOLECULE section needs a name line and a counts line (is the record truncated?)"
    counts_offset, counts = molecule[1]
    try:
        numbers = [int(field) for field in counts.split()[:2]]
    except ValueError:
        return f"the counts line (file line {first_line + counts_offset}) {counts[:40]!r} is not numbers"
    n_atoms = numbers[0]
    n_bonds = numbers[1] if len(numbers) > 1 else 0
    if "ATOM" not in sections:
        return "no @<TRIPOS>ATOM section"
    atoms = sections["ATOM"]
    ids: set[str] = set()
    for offset, text in atoms:
        fields = text.split()
        at = f"file line {first_line + offset}"
        if len(fields) < 6:
            return f"the atom line at {at} has {len(fields)} fields; at least 6 are needed"
        try:
            [float(value) for value in fields[2:5]]
        except ValueError:
            return f"the atom line at {at} has coordinates that are not numbers: {' '.join(fields[2:5])!r}"
        element = fields[5].split(".")[0]
        if element not in _ELEMENTS and fields[5] not in SYBYL_TYPES:
            return f"the atom line at {at} has atom type {fields[5]!r}, whose element {element!r} is unknown"
        ids.add(fields[0])
    if len(atoms) != n_atoms:
        return (
            f"the counts line (file line {first_line + counts_offset}) says {n_atoms} atoms but the ATOM "
            f"section has {len(atoms)} atom lines"
        )
    bonds = sections.get("BOND")
    if bonds is None:
        if n_bonds:
            return f"no @<TRIPOS>BOND section, but the counts line says {n_bonds} bonds"
        return None
    for offset, text in bonds:
        fields = text.split()
        at = f"file line {first_line + offset}"
        if len(fields) < 4:
            return f"the bond line at {at} has {len(fields)} fields; 4 are needed"
        missing = [atom for atom in fields[1:3] if atom not in ids]
        if missing:
            return f"the bond line at {at} refers to atom {missing[0]}, which is not in the ATOM section"
        if fields[3].lower() not in BOND_TYPES:
            return f"the bond line at {at} has unknown bond type {fields[3]!r}"
    if len(bonds) != n_bonds:
        return (
            f"the counts line (file line {first_line + counts_offset}) says {n_bonds} bonds but the BOND "
            f"section has {len(bonds)} bond lines"
        )
    return None


def atom_type_warnings(lines: list[str], *, first_line: int = 1) -> list[str]:
    """Notes for atom types RDKit reads by their element prefix although they are not SYBYL types."""
    notes = []
    for offset, text in _sections(lines).get("ATOM", []):
        fields = text.split()
        if len(fields) >= 6 and fields[5] not in SYBYL_TYPES and fields[5] not in _ELEMENTS:
            notes.append(
                f"file line {first_line + offset}: atom type {fields[5]!r} is not a SYBYL type; "
                f"read as element {fields[5].split('.')[0]!r}"
            )
    return notes


def read_mol2(lines: Iterable[Line], path: str, *, start_index: int = 0) -> Iterator[Record]:
    """Yield one :class:`Record` per MOL2 record (see the module docstring). Never raises for bad content."""
    shown = display_path(path)
    record = 0
    for block, preamble in split_at_starts(lines, is_molecule_start):
        if preamble and _is_ignorable_preamble(block):
            continue
        record += 1
        meta: dict[str, object] = {}
        line = block.first_line
        if block.problem is not None:
            result = ParseResult(None, block.problem)
            name = default_name(record)
        elif preamble:
            offset, text = _first_foreign_line(block)
            line = block.first_line + offset
            result = ParseResult(
                None,
                f"text before the first {MOLECULE_TAG} line (starting {text[:40]!r}); not a MOL2 record",
            )
            name = default_name(record)
        else:
            result = parse_mol2_block(block.lines, first_line=block.first_line)
            title = block.lines[1] if len(block.lines) > 1 else ""
            name = clean_name(None if title.strip() == "*****" else title, record)
            if result.mol is not None:
                warnings = atom_type_warnings(block.lines, first_line=block.first_line)
                if warnings:
                    meta["warnings"] = warnings
        yield make_record(
            index=start_index + record - 1,
            path=shown,
            record=record,
            line=line,
            name=name,
            result=result,
            meta=meta,
        )


def _is_ignorable_preamble(block: Block) -> bool:
    return block.problem is None and all(
        not text.strip() or text.lstrip().startswith("#") for text in block.lines
    )


def _first_foreign_line(block: Block) -> tuple[int, str]:
    """Offset and text of the first preamble line that is neither blank nor a ``#`` comment."""
    for offset, text in enumerate(block.lines):
        if text.strip() and not text.lstrip().startswith("#"):
            return offset, text.strip()
    return 0, ""
