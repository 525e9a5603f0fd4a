"""SMILES libraries: ``.smi`` lines and ``.csv`` / ``.tsv`` tables.

``.smi``: one molecule per line, the SMILES first, then optionally a name. The separator after the SMILES
decides how the name is taken: after a comma or a tab the name is the next field; after spaces it is the rest
of the line (so names may contain spaces). Blank lines and lines starting with ``#`` are skipped and are not
records. The first other line is a header, and skipped, when its first field contains the word "smiles"
(no valid SMILES does). A CXSMILES extension (``|...|`` after the SMILES) is kept with the SMILES.

``.csv`` / ``.tsv``: a table, split one line at a time (quoted fields may not span lines). The SMILES column
is ``smiles_column``, else the column called ``smiles`` (any case), else the single column whose header
contains "smiles". The name column is ``name_column``, else a column called ``name``, ``title`` or ``id``
(any case), else none. A table whose first row names no SMILES column is read as headerless (SMILES in
field 1, name in field 2) when that first field parses as SMILES; otherwise it is a file-level error.
Blank lines, and ``#`` comment lines before the first row, are skipped.

Every SMILES line is a record: a line RDKit cannot parse or sanitise becomes an unreadable record whose
reason carries RDKit's message, and reading goes on. Lines longer than 1 MiB are not read (see
:mod:`ffaudit.read.source`) and become unreadable records saying so.
"""

from __future__ import annotations

import csv
import re
from collections.abc import Iterable, Iterator
from dataclasses import dataclass

from rdkit import Chem, rdBase

from ffaudit.errors import InputFileError
from ffaudit.read.common import (
    ParseResult,
    clean_name,
    default_name,
    make_record,
    parse_then_classify,
)
from ffaudit.read.record import Record
from ffaudit.read.source import Line, display_path

#: Column names (compared case-insensitively) taken as the name column when ``name_column`` is not given.
NAME_COLUMNS = ("name", "title", "id")

_SMI_SPLIT = re.compile(r"([^\s,]+)(.*)\Z", re.DOTALL)
_CX_EXTENSION = re.compile(r"[ \t]+(\|[^|]*\|)(.*)\Z", re.DOTALL)


def parse_smiles(text: str) -> ParseResult:
    """Parse and sanitise one SMILES (optionally followed by a CXSMILES ``|...|`` extension).

    Returns the molecule, or ``None`` with a reason: a character no SMILES can contain (with its column),
    RDKit's syntax message, or RDKit's sanitisation message (valence, kekulisation). Never raises.
    """
    if not text:
        return ParseResult(None, "empty SMILES")
    if not (text.isascii() and text.isprintable()):  # find the first offending character
        for column, char in enumerate(text, start=1):
            if not (char.isascii() and char.isprintable()):
                return ParseResult(
                    None,
                    f"SMILES {_preview(text)} has character {char!r} at column {column}; "
                    "SMILES are printable ASCII (is this a binary or mis-encoded file?)",
                )
    if _stereo_free(text):
        mol = _parse_without_stereo(text)
        if mol is not None:
            return ParseResult(mol, None)
    return parse_then_classify(
        lambda sanitize: Chem.MolFromSmiles(text, sanitize=sanitize), what="SMILES"
    )


def _stereo_free(text: str) -> bool:
    """True when ``text`` can say nothing about stereochemistry: no ``@`` (tetrahedral and other
    centres), no ``/`` or ``\\`` (double-bond directions), no ``|`` (a CXSMILES extension, which may
    carry wedges, wiggly bonds or stereo groups)."""
    return "@" not in text and "/" not in text and "\\" not in text and "|" not in text



def _parse_without_stereo(text: str) -> Chem.Mol | None:
    """The molecule ``Chem.MolFromSmiles(text)`` gives for a SMILES that says nothing about stereochemistry,
    or None when this shortcut does not apply (the caller then parses the usual way).

    ``MolFromSmiles`` sanitises and then assigns stereochemistry, which for such a SMILES finds nothing to
    keep and changes nothing, yet costs more than the sanitisation itself (its ranking of atoms; about
    40 us per NCI molecule, measured). Here the molecule is parsed unsanitised and sanitised with every
    step ``MolFromSmiles`` takes (``SanitizeMol``'s default operations), and RDKit's own flag that the
    stereochemistry is done is set, so ``MolToSmiles`` does not assign it either. Molecules with hydrogen
    or dummy atoms are left to ``MolFromSmiles`` (it removes explicit hydrogens after sanitising), as is
    any SMILES that does not parse or sanitise (its messages come from the usual path). Never raises.

    The molecule has the same atoms, bonds, flags, rings, properties and SMILES (tests/test_read_smiles.py
    compares them on NCI first_5K). What it lacks is RDKit's private ``_CIPRank`` atom property, which
    stereo assignment leaves behind in RDKit's legacy stereo perception; RDKit's 2D layout reads it, so a
    depiction made from this molecule may be laid out differently. The reports draw molecules from the
    output SMILES, not from this molecule.
    """
    try:
        with rdBase.BlockLogs():
            mol = Chem.MolFromSmiles(text, sanitize=False)
            if mol is None or not 0 < mol.GetNumAtoms() == mol.GetNumHeavyAtoms():
                return None
            Chem.SanitizeMol(mol)
    except Exception:
        return None
    mol.SetIntProp("_StereochemDone", 1, True)
    return mol


def split_smi_line(text: str) -> tuple[str, str | None]:
    """Split a stripped, non-empty ``.smi`` line into (SMILES, name or None); see the module docstring."""
    match = _SMI_SPLIT.match(text)
    if match is None:  # the line starts with a comma: no SMILES
        return "", text.lstrip(",").split(",")[0].strip() or None
    smiles, rest = match.group(1), match.group(2)
    cx = _CX_EXTENSION.match(rest)
    if cx is not None:
        smiles, rest = f"{smiles} {cx.group(1)}", cx.group(2)
    if not rest:
        return smiles, None
    sep, rest = rest[0], rest[1:]
    name = rest.split(sep)[0] if sep in ",\t" else rest
    return smiles, name.strip() or None


def smi_record_lines(lines: Iterable[Line]) -> Iterator[tuple[int, Line]]:
    """``(record number, line)`` for every line of a ``.smi`` file that is a record.

    Blank lines, ``#`` comments and a header line are skipped; an overlong line is a record. This is the
    cheap half of :func:`read_smi`; :func:`smi_record` is the other (for callers that cut and parse in
    different places).
    """
    record = 0
    first = True
    for line in lines:
        if line.overlong:
            first = False
            record += 1
            yield record, line
            continue
        text = line.text.strip()
        if not text or text.startswith("#"):
            continue
        if first:
            first = False
            if "smiles" in split_smi_line(text)[0].lower():
                continue  # header row
        record += 1
        yield record, line


def smi_record(line: Line, *, record: int, index: int, path: str) -> Record:
    """The :class:`Record` for one ``.smi`` record line (``path`` as shown in records). Never raises."""
    if line.overlong:
        name = default_name(record)
        result = ParseResult(None, line.too_long_reason())
    else:
        smiles, raw_name = split_smi_line(line.text.strip())
        name = clean_name(raw_name, record)
        result = parse_smiles(smiles)
    return make_record(
        index=index, path=path, record=record, line=line.number, name=name, result=result
    )


def read_smi(lines: Iterable[Line], path: str, *, start_index: int = 0) -> Iterator[Record]:
    """Yield one :class:`Record` per SMILES line of a ``.smi`` file (see the module docstring).

    Never raises for bad content; bad lines become unreadable records.
    """
    shown = display_path(path)
    for record, line in smi_record_lines(lines):
        yield smi_record(line, record=record, index=start_index + record - 1, path=shown)


@dataclass(frozen=True)
class _Layout:
    smiles: int
    name: int | None
    label: str


def read_table(
    lines: Iterable[Line],
    path: str,
    *,
    delimiter: str,
    smiles_column: str | None = None,
    name_column: str | None = None,
    start_index: int = 0,
) -> Iterator[Record]:
    """Yield one :class:`Record` per data row of a CSV (``delimiter=","``) or TSV (``"\\t"``) table.

    Raises :class:`InputFileError` (naming file and line) when the header row lacks ``smiles_column`` or
    ``name_column``, when the first row names no SMILES column and is not headerless SMILES data, or when the
    first row cannot be split into fields. Bad data rows become unreadable records.
    """
    shown = display_path(path)
    layout: _Layout | None = None
    record = 0
    for line in lines:
        name: str | None = None
        if line.overlong:
            if layout is None:
                raise InputFileError(
                    f"{shown}:{line.number}: cannot read the first row: {line.too_long_reason()}"
                )
            result = ParseResult(None, line.too_long_reason())
        else:
            text = line.text
            if not text.strip() or (layout is None and text.lstrip().startswith("#")):
                continue
            try:
                row = next(csv.reader([text], delimiter=delimiter, strict=True))
            except csv.Error as exc:
                if layout is None:
                    raise InputFileError(
                        f"{shown}:{line.number}: cannot split the first row into fields: {exc}"
                    ) from exc
                result = ParseResult(None, f"cannot split the row into fields: {exc}")
            else:
                if layout is None:
                    layout, is_header = _decide_layout(
                        row, smiles_column, name_column, shown, line.number
                    )
                    if is_header:
                        continue
                if not any(cell.strip() for cell in row):
                    continue  # a row of empty fields is a blank line
                result, name = _row_result(row, layout)
        record += 1
        yield make_record(
            index=start_index + record - 1,
            path=shown,
            record=record,
            line=line.number,
            name=clean_name(name, record),
            result=result,
        )


def _row_result(row: list[str], layout: _Layout) -> tuple[ParseResult, str | None]:
    name = row[layout.name] if layout.name is not None and layout.name < len(row) else None
    if layout.smiles >= len(row):
        reason = (
            f"the row has {len(row)} field(s) but the SMILES column {layout.label} is "
            f"field {layout.smiles + 1}"
        )
        return ParseResult(None, reason), name
    smiles = row[layout.smiles].strip()
    if not smiles:
        return ParseResult(None, f"the SMILES field ({layout.label}) is empty"), name
    return parse_smiles(smiles), name


def _decide_layout(
    row: list[str], smiles_column: str | None, name_column: str | None, shown: str, line: int
) -> tuple[_Layout, bool]:
    cells = [cell.strip() for cell in row]
    listed = ", ".join(repr(c) for c in cells[:20]) + (", ..." if len(cells) > 20 else "")
    smiles_index: int | None
    if smiles_column is not None:
        if smiles_column not in cells:
            raise InputFileError(
                f"{shown}:{line}: the header row has no column named {smiles_column!r} "
                f"(columns: {listed}); name the SMILES column exactly as the header spells it"
            )
        smiles_index = cells.index(smiles_column)
    else:
        smiles_index = _find_smiles_column(cells)
    if smiles_index is None:
        looks_like_data = bool(cells) and parse_smiles(cells[0]).mol is not None
        if name_column is None and looks_like_data:
            return _Layout(0, 1, "field 1"), False
        raise InputFileError(
            f"{shown}:{line}: the first row names no SMILES column (columns: {listed}) and its first "
            "field is not SMILES; give the SMILES column name"
        )
    name_index: int | None = None
    if name_column is not None:
        if name_column not in cells:
            raise InputFileError(
                f"{shown}:{line}: the header row has no column named {name_column!r} (columns: {listed})"
            )
        name_index = cells.index(name_column)
    else:
        lowered = [c.lower() for c in cells]
        name_index = next((lowered.index(n) for n in NAME_COLUMNS if n in lowered), None)
    return _Layout(smiles_index, name_index, repr(cells[smiles_index])), True


def _find_smiles_column(cells: list[str]) -> int | None:
    lowered = [c.lower() for c in cells]
    if "smiles" in lowered:
        return lowered.index("smiles")
    containing = [i for i, c in enumerate(lowered) if "smiles" in c]
    return containing[0] if len(containing) == 1 else None


def _preview(text: str, limit: int = 40) -> str:
    return repr(text if len(text) <= limit else text[:limit] + "...")
