"""One entry point for every library format: :func:`iter_records`.

The format comes from the file name (``.smi .smiles .csv .tsv .sdf .sd .mol .mol2 .pdb``, each optionally
followed by ``.gz``) unless ``fmt`` names it; ``-`` reads standard input (format ``smi`` unless ``fmt`` says
otherwise). Gzip is recognised by its magic bytes, so compressed input needs no ``.gz`` (but a ``.gz`` name
must be gzip). Reading streams: memory does not grow with the file, only with the largest record.

Records are numbered ``index`` 0-based over the whole input (from ``start_index``, for callers that chain
several files) and ``record`` 1-based within the file; blank lines, comments and empty blocks are not
records. Unreadable records are yielded like the others, with ``mol=None`` and ``error`` giving the reason.
"""

from __future__ import annotations

import os
from collections.abc import Iterator
from typing import BinaryIO

from ffaudit.errors import InputFileError, UsageError
from ffaudit.read.mol2 import read_mol2
from ffaudit.read.pdb import parse_template, read_pdb
from ffaudit.read.record import Record
from ffaudit.read.sdf import read_sdf
from ffaudit.read.smiles import read_smi, read_table
from ffaudit.read.source import display_path, iter_lines, open_input

#: The formats :func:`iter_records` reads, by their canonical names.
FORMATS = ("smi", "csv", "tsv", "sdf", "mol2", "pdb")

EXTENSIONS = {
    ".smi": "smi",
    ".smiles": "smi",
    ".csv": "csv",
    ".tsv": "tsv",
    ".sdf": "sdf",
    ".sd": "sdf",
    ".mol": "sdf",
    ".mol2": "mol2",
    ".pdb": "pdb",
}
_ALIASES = {**{ext[1:]: fmt for ext, fmt in EXTENSIONS.items()}, **{fmt: fmt for fmt in FORMATS}}


def normalise_format(fmt: str) -> str:
    """The canonical name of a format name or extension (``"SD"``, ``".sdf"``, ``"sdf.gz"`` -> ``"sdf"``).

    Raises :class:`UsageError` listing the known formats when ``fmt`` is none of them.
    """
    key = fmt.strip().lower().lstrip(".")
    if key.endswith(".gz"):
        key = key[:-3]
    if key not in _ALIASES:
        raise UsageError(f"unknown input format {fmt!r}; known formats: {', '.join(FORMATS)}")
    return _ALIASES[key]


def detect_format(path: str) -> str:
    """The format of ``path`` from its extension (a trailing ``.gz`` is ignored), e.g. ``"sdf"``.

    Raises :class:`InputFileError` naming the file when the extension is not one of
    :data:`EXTENSIONS`; the message lists them and says that the format can be given explicitly.
    """
    name = os.path.basename(path).lower()
    if name.endswith(".gz"):
        name = name[:-3]
    ext = os.path.splitext(name)[1]
    if ext not in EXTENSIONS:
        shown = f"extension {ext!r}" if ext else "no extension"
        raise InputFileError(
            f"{display_path(path)}: cannot tell the format from the file name ({shown}); known extensions: "
            f"{' '.join(EXTENSIONS)} (each optionally .gz), or give the format explicitly"
        )
    return EXTENSIONS[ext]


def iter_records(
    path: str,
    fmt: str | None = None,
    *,
    smiles_column: str | None = None,
    name_column: str | None = None,
    template_smiles: str | None = None,
    start_index: int = 0,
    total_charge: int | None = None,
) -> Iterator[Record]:
    """Stream the records of the library at ``path`` (``-`` for standard input).

    ``smiles_column`` / ``name_column`` apply to ``csv`` and ``tsv``; ``template_smiles`` (bond orders) and
    ``total_charge`` (for bond orders determined from 3D) to ``pdb``.

    Raises, before anything is read: :class:`UsageError` for an unknown ``fmt``, an option that does not
    apply to the format, or an invalid template SMILES; :class:`InputFileError` for a path whose format
    cannot be told from its name or that does not exist. While iterating: :class:`InputFileError` (naming
    the file, and the line when known) when the file cannot be opened or read (bad or truncated gzip) or a
    table's header lacks the named column. Bad records never raise; they are yielded unreadable.
    """
    resolved = _resolve(path, fmt, smiles_column, name_column, template_smiles, total_charge)
    if path != "-" and not os.path.exists(path):
        raise InputFileError(f"{path}: no such file")
    return _iter_path(
        path,
        resolved,
        smiles_column=smiles_column,
        name_column=name_column,
        template_smiles=template_smiles,
        start_index=start_index,
        total_charge=total_charge,
    )


def iter_records_from_stream(
    stream: BinaryIO,
    path: str,
    fmt: str,
    *,
    smiles_column: str | None = None,
    name_column: str | None = None,
    template_smiles: str | None = None,
    start_index: int = 0,
    total_charge: int | None = None,
) -> Iterator[Record]:
    """Like :func:`iter_records` for an open binary stream; ``path`` is only used in records and messages.

    Gzip data is recognised and decompressed. The stream is not closed. Raises as :func:`iter_records`.
    """
    resolved = _resolve(path, fmt, smiles_column, name_column, template_smiles, total_charge)
    return _dispatch(
        stream,
        path,
        resolved,
        smiles_column=smiles_column,
        name_column=name_column,
        template_smiles=template_smiles,
        start_index=start_index,
        total_charge=total_charge,
    )


def _resolve(
    path: str,
    fmt: str | None,
    smiles_column: str | None,
    name_column: str | None,
    template_smiles: str | None,
    total_charge: int | None,
) -> str:
    if fmt is not None:
        resolved = normalise_format(fmt)
    elif path == "-":
        resolved = "smi"
    else:
        resolved = detect_format(path)
    if (smiles_column is not None or name_column is not None) and resolved not in ("csv", "tsv"):
        raise UsageError(
            f"a SMILES or name column can only be named for csv or tsv input, not {resolved}"
        )
    if (template_smiles is not None or total_charge is not None) and resolved != "pdb":
        raise UsageError(
            f"a template SMILES or total charge only applies to pdb input, not {resolved}"
        )
    if template_smiles is not None:
        parse_template(template_smiles)
    return resolved


def _iter_path(path: str, fmt: str, **options: object) -> Iterator[Record]:
    with open_input(path) as stream:
        yield from _dispatch(stream, path, fmt, **options)  # type: ignore[arg-type]


def _dispatch(
    stream: BinaryIO,
    path: str,
    fmt: str,
    *,
    smiles_column: str | None,
    name_column: str | None,
    template_smiles: str | None,
    start_index: int,
    total_charge: int | None,
) -> Iterator[Record]:
    lines = iter_lines(stream, path)
    if fmt == "smi":
        return read_smi(lines, path, start_index=start_index)
    if fmt in ("csv", "tsv"):
        return read_table(
            lines,
            path,
            delimiter="," if fmt == "csv" else "\t",
            smiles_column=smiles_column,
            name_column=name_column,
            start_index=start_index,
        )
    if fmt == "sdf":
        return read_sdf(lines, path, start_index=start_index)
    if fmt == "mol2":
        return read_mol2(lines, path, start_index=start_index)
    if fmt == "pdb":
        return read_pdb(
            lines,
            path,
            template_smiles=template_smiles,
            total_charge=total_charge,
            start_index=start_index,
        )
    raise UsageError(f"unknown input format {fmt!r}")  # unreachable: _resolve checked it
