"""SD files (``.sdf``, ``.sd``) and single molfiles (``.mol``), V2000 or V3000.

The file is streamed line by line and cut at ``$$$$`` lines; each block is parsed with
``Chem.MolFromMolBlock(block, sanitize=True, removeHs=False)``, so hydrogens and the file's atom numbering
are kept. The record's name is the block's title (first) line, or ``record N`` when that is blank. Data items
after ``M  END`` (``>  <NAME>`` and the value lines below it) become molecule properties, as RDKit's own SD
reader does. Blocks of whitespace only (for example after a trailing ``$$$$``) are not records; text after
the last ``$$$$`` is a record.

A block RDKit cannot parse or sanitise becomes an unreadable record. Its reason gives RDKit's message with
block line numbers turned into file line numbers, and, where RDKit says nothing useful, the reader's own
finding (too few lines, a counts line that does not match the atom and bond lines, an unknown element, no
``M  END`` line).
"""

from __future__ import annotations

import re
from collections.abc import Iterable, Iterator

from rdkit import Chem

from ffaudit.read.blocks import Block, split_at_terminators
from ffaudit.read.common import (
    ParseResult,
    clean_name,
    default_name,
    make_record,
    parse_then_classify,
)
from ffaudit.read.record import Record
from ffaudit.read.source import Line, display_path

_BLOCK_LINE = re.compile(r"\bline (\d+)\b")
_DATA_HEADER = re.compile(r"<([^>]*)>")
_PERIODIC = Chem.GetPeriodicTable()
_ELEMENTS = frozenset(_PERIODIC.GetElementSymbol(z) for z in range(1, 119))
#: Atom symbols RDKit's molfile reader accepts besides elements (query atoms, R groups, isotopes of H).
_PSEUDO_ATOMS = frozenset(
    {"A", "Q", "*", "L", "LP", "R", "R#", "D", "T", "AH", "QH", "X", "XH", "M", "MH"}
)


def is_terminator(text: str) -> bool:
    """True for the ``$$$$`` line that ends an SD record."""
    return "$$$$" in text and text.strip() == "$$$$"


def parse_molblock(lines: list[str], *, first_line: int = 1) -> ParseResult:
    """Parse one SD record (its lines, without ``$$$$``) into a sanitised molecule with hydrogens kept.

    ``first_line`` is the file line number of ``lines[0]``; reasons cite file lines. Never raises.
    """
    end = next((i for i, text in enumerate(lines) if text.rstrip() == "M  END"), None)
    molfile = "".join(text + "\n" for text in (lines if end is None else lines[: end + 1]))

    def locate(message: str) -> str:
        return _BLOCK_LINE.sub(
            lambda m: (
                f"line {m.group(1)} of the record (file line {first_line + int(m.group(1)) - 1})"
            ),
            message,
        )

    result = parse_then_classify(
        lambda sanitize: Chem.MolFromMolBlock(molfile, sanitize=sanitize, removeHs=False),
        what="molfile block",
        diagnose=lambda: diagnose_molblock(lines, first_line=first_line),
        locate=locate,
    )
    if result.mol is not None and end is not None:
        for key, value in _data_items(lines[end + 1 :]):
            result.mol.SetProp(key, value)
    return result


def diagnose_molblock(lines: list[str], *, first_line: int = 1) -> str | None:
    """The first structural problem found in a V2000/V3000 record, citing file lines, or None.

    Used to explain a record RDKit refused without saying why. Checks the header length, the counts line,
    that the atom and bond lines the counts line promises are there, the atom symbols, and ``M  END``.
    """
    if len(lines) < 4:
        return (
            f"the record has only {len(lines)} line(s); a molfile needs 3 header lines and a counts "
            "line (is the file truncated?)"
        )
    counts = lines[3]
    counts_at = first_line + 3
    has_end = any(text.rstrip() == "M  END" for text in lines)
    if "V3000" in counts:
        return None if has_end else "no 'M  END' line in the V3000 record"
    try:
        n_atoms, n_bonds = int(counts[0:3]), int(counts[3:6])
    except ValueError:
        return f"the counts line (file line {counts_at}) {counts[:40]!r} does not start with atom and bond counts"
    body = lines[4:]
    end = next((i for i, text in enumerate(body) if text.startswith("M  ")), len(body))
    if end < n_atoms + n_bonds:
        return (
            f"the counts line (file line {counts_at}) promises {n_atoms} atom and {n_bonds} bond lines "
            f"but only {end} line(s) follow before the properties block or the end of the record"
        )
    for offset, text in enumerate(body[:n_atoms]):
        at = counts_at + 1 + offset
        try:
            [float(text[start : start + 10]) for start in (0, 10, 20)]
        except ValueError:
            return f"file line {at} should be an atom line (x, y, z in columns 1-30) but is {text[:40]!r}"
        symbol = text[31:34].strip()
        if symbol not in _ELEMENTS and symbol not in _PSEUDO_ATOMS:
            return f"unknown element {symbol!r} in the atom line at file line {at}"
    for offset, text in enumerate(body[n_atoms : n_atoms + n_bonds]):
        at = counts_at + 1 + n_atoms + offset
        try:
            first, second, order = (int(text[start : start + 3]) for start in (0, 3, 6))
        except ValueError:
            return (
                f"file line {at} should be a bond line (atom, atom, bond type in columns 1-9) "
                f"but is {text[:40]!r}"
            )
        if not (1 <= first <= n_atoms and 1 <= second <= n_atoms):
            return (
                f"the bond at file line {at} joins atoms {first} and {second}, but the record has "
                f"{n_atoms} atoms"
            )
        if not 1 <= order <= 8:
            return f"the bond at file line {at} has bond type {order}, which is not 1-8"
    extra = body[n_atoms + n_bonds : n_atoms + n_bonds + 1]
    if extra and extra[0].strip() and extra[0][:3] not in ("M  ", "A  ", "V  ", "G  ", "S  "):
        return (
            f"file line {counts_at + 1 + n_atoms + n_bonds} follows the {n_atoms} atom and {n_bonds} "
            "bond lines the counts line promises but is neither a property line nor 'M  END' "
            "(does the counts line give too few?)"
        )
    if not has_end:
        return "no 'M  END' line in the record (is it truncated?)"
    return None


def sdf_record_blocks(lines: Iterable[Line]) -> Iterator[tuple[int, Block]]:
    """``(record number, block)`` for every SD record: the blocks between ``$$$$`` lines that are not blank.

    The cheap half of :func:`read_sdf`; :func:`sdf_record` is the other.
    """
    record = 0
    for block in split_at_terminators(lines, is_terminator):
        if block.is_blank():
            continue
        record += 1
        yield record, block


def sdf_record(block: Block, *, record: int, index: int, path: str) -> Record:
    """The :class:`Record` for one SD record block (``path`` as shown in records). Never raises."""
    if block.problem is not None:
        result = ParseResult(None, block.problem)
        name = default_name(record)
    else:
        result = parse_molblock(block.lines, first_line=block.first_line)
        name = clean_name(block.lines[0], record)
    return make_record(
        index=index, path=path, record=record, line=block.first_line, name=name, result=result
    )


def read_sdf(lines: Iterable[Line], path: str, *, start_index: int = 0) -> Iterator[Record]:
    """Yield one :class:`Record` per SD record (see the module docstring). Never raises for bad content."""
    shown = display_path(path)
    for record, block in sdf_record_blocks(lines):
        yield sdf_record(block, record=record, index=start_index + record - 1, path=shown)


def _data_items(lines: list[str]) -> Iterator[tuple[str, str]]:
    key: str | None = None
    values: list[str] = []
    for text in lines:
        if key is None:
            if text.startswith(">"):
                match = _DATA_HEADER.search(text)
                key = match.group(1) if match else None
                values = []
            continue
        if not text.strip():
            yield key, "\n".join(values)
            key = None
        else:
            values.append(text)
    if key is not None:
        yield key, "\n".join(values)
