"""Plan a library as chunk jobs whose records the workers parse (raw-record path).

Parsing is a fair share of the work per record, and in the parent it would be serial. For SMILES (``smi``)
and SD (``sdf``) files the parent therefore only cuts the file into records (lines, or blocks between
``$$$$`` lines) and numbers them; each worker parses its chunk with the readers' own per-record functions
(:func:`ffaudit.read.smiles.parse_smiles`, :func:`ffaudit.read.sdf.parse_molblock`) and builds the
:class:`~ffaudit.read.record.Record` objects with :func:`ffaudit.read.common.make_record`, exactly as
:func:`ffaudit.read.open.iter_records` does (a test compares the two record by record). Cutting is cheap, so a
resumed run skips finished chunks without parsing them.

The other formats (csv, tsv, mol2, pdb), and any call with reader options, are read by
:func:`~ffaudit.read.open.iter_records` in the parent and shipped as parsed records.

The record-cutting loops below mirror ``read_smi`` and ``read_sdf``; when those readers change how they
number or skip records, these loops must change with them (``tests/test_engine.py`` fails if they differ).
"""

from __future__ import annotations

from collections.abc import Iterable, Iterator
from dataclasses import dataclass
from typing import Any, TypeVar

from ffaudit.engine.base import DEFAULT_CHUNK_SIZE, ChunkJob, chunk_records
from ffaudit.read.blocks import Block, split_at_terminators
from ffaudit.read.common import ParseResult, clean_name, default_name, make_record
from ffaudit.read.open import detect_format, iter_records, normalise_format
from ffaudit.read.record import Record
from ffaudit.read.sdf import is_terminator, parse_molblock
from ffaudit.read.smiles import parse_smiles, split_smi_line
from ffaudit.read.source import Line, display_path, iter_lines, open_input

RAW_FORMATS: tuple[str, ...] = ("smi", "sdf")
"""Formats whose records the workers parse."""

T = TypeVar("T")


@dataclass(frozen=True)
class RawSmiles:
    """SMILES lines of one chunk: ``(record number, line)`` pairs; record ``i`` has index ``first + i``."""

    path: str
    first: int
    items: tuple[tuple[int, Line], ...]

    def records(self) -> Iterator[Record]:
        for offset, (number, line) in enumerate(self.items):
            index = self.first + offset
            if line.overlong:
                yield make_record(
                    index=index,
                    path=self.path,
                    record=number,
                    line=line.number,
                    name=default_name(number),
                    result=ParseResult(None, line.too_long_reason()),
                )
                continue
            smiles, name = split_smi_line(line.text.strip())
            yield make_record(
                index=index,
                path=self.path,
                record=number,
                line=line.number,
                name=clean_name(name, number),
                result=parse_smiles(smiles),
            )


@dataclass(frozen=True)
class RawBlocks:
    """SD record blocks of one chunk: ``(record number, block)`` pairs."""

    path: str
    first: int
    items: tuple[tuple[int, Block], ...]

    def records(self) -> Iterator[Record]:
        for offset, (number, block) in enumerate(self.items):
            if block.problem is not None:
                result = ParseResult(None, block.problem)
                name = default_name(number)
            else:
                result = parse_molblock(block.lines, first_line=block.first_line)
                name = clean_name(block.lines[0], number)
            yield make_record(
                index=self.first + offset,
                path=self.path,
                record=number,
                line=block.first_line,
                name=name,
                result=result,
            )


def resolve_format(path: str, fmt: str | None) -> str:
    """The canonical input format, as :func:`~ffaudit.read.open.iter_records` decides it.

    Raises :class:`~ffaudit.errors.UsageError` for an unknown ``fmt`` and
    :class:`~ffaudit.errors.InputFileError` for a name whose format cannot be told.
    """
    if fmt is not None:
        return normalise_format(fmt)
    return "smi" if path == "-" else detect_format(path)


def plan_library(
    path: str,
    fmt: str | None = None,
    *,
    chunk_size: int = DEFAULT_CHUNK_SIZE,
    start_index: int = 0,
    **reader_options: Any,
) -> Iterator[ChunkJob]:
    """The chunk jobs of the library at ``path`` (``-`` is standard input), streamed.

    Raises, before anything is read, what :func:`~ffaudit.read.open.iter_records` raises for a bad format,
    a missing file or an option that does not apply; while iterating, :class:`~ffaudit.errors.InputFileError`
    when the file cannot be read on (a truncated gzip stream, a table without its named column).
    """
    if chunk_size < 1:
        raise ValueError(f"chunk size must be at least 1, not {chunk_size}")
    options = {k: v for k, v in reader_options.items() if v is not None}
    # iter_records validates the format, the path and the options now; it reads nothing until iterated
    records = iter_records(path, fmt, start_index=start_index, **options)
    resolved = resolve_format(path, fmt)
    if resolved not in RAW_FORMATS or options:
        return chunk_records(records, chunk_size)
    return _plan_raw(path, resolved, chunk_size, start_index)


def _plan_raw(path: str, fmt: str, chunk_size: int, start_index: int) -> Iterator[ChunkJob]:
    shown = display_path(path)
    with open_input(path) as stream:
        lines = iter_lines(stream, path)
        if fmt == "smi":
            for number, first, items in _batches(_smi_records(lines), chunk_size, start_index):
                yield ChunkJob(number, first, len(items), RawSmiles(shown, first, items))
        else:
            for number, first, blocks in _batches(_sdf_records(lines), chunk_size, start_index):
                yield ChunkJob(number, first, len(blocks), RawBlocks(shown, first, blocks))


def _smi_records(lines: Iterable[Line]) -> Iterator[tuple[int, Line]]:
    """``(record number, line)`` for every line that ``read_smi`` makes a record of."""
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
            smiles, _ = split_smi_line(text)
            if "smiles" in smiles.lower():
                continue  # header row
        record += 1
        yield record, line


def _sdf_records(lines: Iterable[Line]) -> Iterator[tuple[int, Block]]:
    """``(record number, block)`` for every block that ``read_sdf`` makes a record of."""
    record = 0
    for block in split_at_terminators(lines, is_terminator):
        if block.is_blank():
            continue
        record += 1
        yield record, block


def _batches(
    items: Iterable[T], size: int, start_index: int
) -> Iterator[tuple[int, int, tuple[T, ...]]]:
    batch: list[T] = []
    number = 0
    first = start_index
    for item in items:
        batch.append(item)
        if len(batch) == size:
            yield number, first, tuple(batch)
            number += 1
            first += size
            batch = []
    if batch:
        yield number, first, tuple(batch)
