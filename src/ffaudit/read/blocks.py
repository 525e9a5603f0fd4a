"""Split a stream of lines into multi-line records (SDF, MOL2, PDB blocks) with bounded memory.

A :class:`Block` keeps its lines only while they fit in :data:`~ffaudit.read.source.MAX_RECORD_CHARS` and
contain no overlong line; past that it keeps only the *problem* (what went wrong, on which line) and goes on
counting lines to the end of the block, so the next block starts in the right place.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable, Iterator
from dataclasses import dataclass, field

from ffaudit.read.source import MAX_RECORD_CHARS, Line


@dataclass
class Block:
    """Consecutive lines of one record. ``first_line`` is the 1-based number of its first line."""

    first_line: int
    lines: list[str] = field(default_factory=list)
    problem: str | None = None
    size: int = 0
    last_line: int = 0

    def add(self, line: Line) -> None:
        self.last_line = line.number
        if self.problem is not None:
            return
        if line.overlong:
            self.problem = line.too_long_reason()
            self.lines = []
            return
        self.size += len(line.text) + 1
        if self.size > MAX_RECORD_CHARS:
            self.problem = (
                f"the record is larger than {MAX_RECORD_CHARS} characters (64 MiB) by line "
                f"{line.number}; it was not read (is a record terminator missing?)"
            )
            self.lines = []
            return
        self.lines.append(line.text)

    def is_blank(self) -> bool:
        """True when the block holds nothing but whitespace (and had no problem)."""
        return self.problem is None and all(not text.strip() for text in self.lines)

    def first_content_line(self) -> int:
        """The number of the first line that is not blank (``first_line`` when there is none)."""
        for offset, text in enumerate(self.lines):
            if text.strip():
                return self.first_line + offset
        return self.first_line

    def text(self) -> str:
        """The block as one string, each line ending in ``\\n``."""
        return "".join(text + "\n" for text in self.lines)


def split_at_terminators(
    lines: Iterable[Line], is_terminator: Callable[[str], bool]
) -> Iterator[Block]:
    """Yield the blocks between terminator lines (terminators not included).

    The text after the last terminator is a block too (a file whose last record lacks its terminator).
    Blocks of whitespace only are still yielded; the reader decides (usually: not a record).
    """
    block: Block | None = None
    for line in lines:
        if not line.overlong and is_terminator(line.text):
            if block is not None:
                yield block
            block = None
            continue
        if block is None:
            block = Block(first_line=line.number)
        block.add(line)
    if block is not None:
        yield block


def split_at_starts(
    lines: Iterable[Line], is_start: Callable[[str], bool]
) -> Iterator[tuple[Block, bool]]:
    """Yield ``(block, is_preamble)`` where each block begins at a start line (start line included).

    Lines before the first start line form a preamble block (``is_preamble=True``), if there are any.
    """
    block: Block | None = None
    preamble = True
    for line in lines:
        if not line.overlong and is_start(line.text):
            if block is not None:
                yield block, preamble
            block = Block(first_line=line.number)
            preamble = False
        elif block is None:
            block = Block(first_line=line.number)
        block.add(line)
    if block is not None:
        yield block, preamble
